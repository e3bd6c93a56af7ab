//! Criterion benchmarks of propagation of distributions (issue: Monte Carlo).
//!
//! - `mc/five_inputs_1e6`: 10⁶ trials of `examples/models/mc_five_inputs.toml`
//!   (sampling, tape evaluation, moments, both intervals), all cores.
//! - `mc/intervals_1e6`: the two coverage intervals of 10⁶ values, by
//!   binning (`summarize`) and by a full radix sort (`summarize_sorted`).
//! - `mc/demo_dipole`: the work of `incertus demo` in process: the dipole
//!   model built and checked (two fits), propagated, and 10⁶ Monte Carlo
//!   trials (its speed is measured here, not asserted in a test).
//!
//! Run: `cargo bench --bench mc`.

use criterion::{criterion_group, criterion_main, Criterion};
use incertus::gum::{load_file, propagate, Options};
use incertus::mc::stats::{summarize, summarize_sorted};
use incertus::mc::{run, Settings};

fn bench(c: &mut Criterion) {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("examples/models/mc_five_inputs.toml");
    let model = load_file(&path).unwrap();
    let gum = propagate(&model, &Options::default()).unwrap();
    let mut g = c.benchmark_group("mc");
    g.sample_size(20);
    g.bench_function("five_inputs_1e6", |b| {
        b.iter(|| run(&model, &gum, &Settings::default()).unwrap())
    });
    let values: Vec<f64> = (0..1_000_000u64)
        .map(|i| {
            let u = ((i.wrapping_mul(0x9E37_79B9_7F4A_7C15) >> 11) as f64) / (1u64 << 53) as f64;
            (u * 6.0).sin() + u
        })
        .collect();
    g.bench_function("intervals_1e6/binning", |b| {
        b.iter(|| summarize(&mut values.clone(), 0.95, 60, None))
    });
    g.bench_function("intervals_1e6/full_sort", |b| {
        b.iter(|| summarize_sorted(&mut values.clone(), 0.95, 60))
    });
    let problem = incertus::dipole::demo_problem();
    g.bench_function("demo_dipole", |b| {
        b.iter(|| {
            let checked = incertus::dipole::build(&problem).unwrap();
            let gum = propagate(&checked.model, &Options::default()).unwrap();
            run(&checked.model, &gum, &Settings::default()).unwrap()
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
