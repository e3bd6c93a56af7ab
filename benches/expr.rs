//! Criterion benchmarks of the formula language (issue: formula language).
//!
//! - `front_end/200_nodes_20_names`: parse + derive (all 20 partials) +
//!   simplify + compile the gradient tape of a ~200-node formula.
//! - `batch/arith_20_nodes_1e6_points`: batch evaluation of a 20-node
//!   arithmetic formula over 10^6 points; node evaluations per second =
//!   20 × 10^6 / time.
//! - `batch/gradient_200_nodes_1e5_points`: formula and its 20 partial
//!   derivatives over 10^5 points.
//!
//! Run: `cargo bench --bench expr`.

use criterion::{black_box, criterion_group, criterion_main, Criterion, Throughput};
use incertus_expr::{derivative, parse, Tape};

#[path = "common.rs"]
mod common;

fn columns(n_names: usize, n: usize) -> Vec<Vec<f64>> {
    (0..n_names)
        .map(|k| {
            (0..n)
                .map(|i| 1.0 + 0.5 * ((i * (k + 3)) as f64 * 1e-3).sin())
                .collect()
        })
        .collect()
}

fn front_end(c: &mut Criterion) {
    let (src, names) = common::long_formula();
    let names: Vec<&str> = names.iter().map(String::as_str).collect();
    let nodes = parse(&src).unwrap().node_count();
    let mut g = c.benchmark_group("front_end");
    g.bench_function(format!("{nodes}_nodes_20_names"), |b| {
        b.iter(|| {
            let f = parse(black_box(&src)).unwrap();
            let ds: Vec<_> = names.iter().map(|n| derivative(&f, n)).collect();
            let mut all = vec![f];
            all.extend(ds);
            Tape::compile(&all, &names).unwrap()
        })
    });
    g.finish();
}

fn batch(c: &mut Criterion) {
    let f = parse(common::ARITH_20).unwrap();
    assert_eq!(f.node_count(), 20);
    let tape = Tape::compile(std::slice::from_ref(&f), &common::ARITH_NAMES).unwrap();
    let n = 1_000_000;
    let cols = columns(common::ARITH_NAMES.len(), n);
    let refs: Vec<&[f64]> = cols.iter().map(Vec::as_slice).collect();
    let mut out = vec![0.0; n];
    let mut g = c.benchmark_group("batch");
    g.throughput(Throughput::Elements((20 * n) as u64));
    g.sample_size(20);
    g.bench_function("arith_20_nodes_1e6_points", |b| {
        b.iter(|| tape.eval_batch(&refs, &mut [&mut out]).unwrap())
    });

    let (src, names) = common::long_formula();
    let names: Vec<&str> = names.iter().map(String::as_str).collect();
    let f = parse(&src).unwrap();
    let tape = Tape::gradient(&f, &names).unwrap();
    let n = 100_000;
    let cols = columns(names.len(), n);
    let refs: Vec<&[f64]> = cols.iter().map(Vec::as_slice).collect();
    let mut outs = vec![vec![0.0; n]; tape.n_outputs()];
    g.throughput(Throughput::Elements(n as u64));
    g.bench_function("gradient_200_nodes_1e5_points", |b| {
        b.iter(|| {
            let mut o: Vec<&mut [f64]> = outs.iter_mut().map(Vec::as_mut_slice).collect();
            tape.eval_batch(&refs, &mut o).unwrap()
        })
    });
    g.finish();
}

criterion_group!(benches, front_end, batch);
criterion_main!(benches);
