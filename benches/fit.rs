//! Criterion benchmarks of least-squares fits (issue: fits).
//!
//! - `fit/line_1e6`: straight line by ordinary least squares (QR) through
//!   10⁶ points: parameters, covariance, s, R². Target under 20 ms.
//! - `fit/line_1e6_with_diagnostics`: the same with a diagnostic record
//!   for every point (leverage from the thin Q, residuals, Cook's distance).
//! - `fit/basis_1e5_x10`: general linear model, 10⁵ points, 10 parameters.
//!   Target under 100 ms.
//! - `fit/line_1e5_one_exclusion`: a straight line through 10⁵ points with
//!   one excluded, diagnostics on (both fits, every point matched by row).
//!   18 s while exclusions and points were looked up in lists; well under
//!   a second as sets.
//!
//! Run: `cargo bench --bench fit`.

use criterion::{criterion_group, criterion_main, Criterion};
use incertus::fit::{fit, fit_basis, FitRequest};

fn data(n: usize) -> (Vec<f64>, Vec<f64>) {
    let x: Vec<f64> = (0..n).map(|i| i as f64 / n as f64 * 10.0).collect();
    let y: Vec<f64> = x
        .iter()
        .enumerate()
        .map(|(i, v)| 1.0 + 2.0 * v + 0.01 * ((i as f64) * 0.7).sin())
        .collect();
    (x, y)
}

fn bench(c: &mut Criterion) {
    let mut g = c.benchmark_group("fit");
    g.sample_size(20);
    let (x, y) = data(1_000_000);
    let rows: Vec<usize> = (1..=x.len()).collect();
    g.bench_function("line_1e6_with_diagnostics", |b| {
        b.iter(|| {
            fit(&FitRequest {
                x: &x,
                y: &y,
                u_y: None,
                u_x: None,
                rows: rows.clone(),
                degree: 1,
                exclude: vec![],
                exclude_reason: None,
                scale_by_chi_squared: false,
                diagnostics: true,
            })
            .unwrap()
        })
    });
    g.bench_function("line_1e6", |b| {
        b.iter(|| {
            fit(&FitRequest {
                x: &x,
                y: &y,
                u_y: None,
                u_x: None,
                rows: Vec::new(),
                degree: 1,
                exclude: vec![],
                exclude_reason: None,
                scale_by_chi_squared: false,
                diagnostics: false,
            })
            .unwrap()
        })
    });
    let (x, y) = data(100_000);
    let cols: Vec<Vec<f64>> = (0..10)
        .map(|k| {
            x.iter()
                .map(|v| (v * (k as f64 + 1.0) * 0.3).cos())
                .collect()
        })
        .collect();
    let names: Vec<String> = (0..10).map(|k| format!("b{k}")).collect();
    let rows: Vec<usize> = (1..=x.len()).collect();
    g.bench_function("basis_1e5_x10", |b| {
        b.iter(|| fit_basis(names.clone(), &cols, &x, &y, None, &rows, false).unwrap())
    });
    g.bench_function("line_1e5_one_exclusion", |b| {
        b.iter(|| {
            fit(&FitRequest {
                x: &x,
                y: &y,
                u_y: None,
                u_x: None,
                rows: rows.clone(),
                degree: 1,
                exclude: vec![500],
                exclude_reason: Some("a benchmark".into()),
                scale_by_chi_squared: false,
                diagnostics: true,
            })
            .unwrap()
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
