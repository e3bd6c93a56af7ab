//! Criterion benchmark of tracked estimates (issue: shell and library API).
//!
//! `estimate/mul_10_inputs`: one multiplication of two tracked estimates that
//! each depend on the same 10 base inputs (gradient merge and allocation).
//! `estimate/chain_10_inputs`: exp of such a number.
//!
//! Run: `cargo bench --bench estimate`.

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use incertus::gum::estimate::{Estimate, Session};

fn bench(c: &mut Criterion) {
    let mut s = Session::new();
    let xs: Vec<Estimate> = (0..10)
        .map(|i| s.input(&format!("x{i}"), 1.0 + i as f64, 0.1))
        .collect();
    let a = xs.iter().fold(Estimate::exact(0.0), |acc, x| acc + x);
    let b = xs.iter().fold(Estimate::exact(1.0), |acc, x| acc * x);
    c.bench_function("estimate/mul_10_inputs", |bch| {
        bch.iter(|| black_box(&a) * black_box(&b))
    });
    c.bench_function("estimate/chain_10_inputs", |bch| {
        bch.iter(|| black_box(&a).exp())
    });
    c.bench_function("estimate/u_10_inputs", |bch| {
        bch.iter(|| s.standard_uncertainty(black_box(&b)).expect("one session"))
    });
}

criterion_group!(benches, bench);
criterion_main!(benches);
