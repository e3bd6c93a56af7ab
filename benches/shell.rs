//! Criterion benchmark of a piped shell session.
//!
//! `session/1000_statements`: 500 inputs and 500 results, each result using
//! two inputs, run through `incertus_cli::run_statements` (what a piped
//! `incertus shell` runs, without files). Every statement is evaluated on
//! the part of the model it touches, so the cost grows linearly with the
//! length. Target: well under 1 s (it was 18 s when every statement
//! re-evaluated the whole model from model-file text).
//! `session/10000_statements`: the same at ten times the length.
//!
//! Run: `cargo bench --bench shell`.

use criterion::{criterion_group, criterion_main, Criterion};

fn script(pairs: usize) -> Vec<String> {
    let mut lines = Vec::with_capacity(2 * pairs);
    for i in 0..pairs {
        lines.push(format!("x{i} = {}.0 u=0.01", i + 1));
        lines.push(format!("y{i} = 2*x{i} + x{}", i.saturating_sub(1)));
    }
    lines
}

fn bench(c: &mut Criterion) {
    let mut g = c.benchmark_group("session");
    g.sample_size(10);
    for (name, pairs) in [("1000_statements", 500), ("10000_statements", 5000)] {
        let lines = script(pairs);
        g.bench_function(name, |b| {
            b.iter(|| {
                let out = incertus_cli::run_statements(lines.iter().map(String::as_str));
                assert_eq!(out.len(), lines.len());
                out
            })
        });
    }
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
