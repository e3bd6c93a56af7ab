//! Criterion benchmark of the law of propagation (issue: GUM).
//!
//! `model_to_json/50_inputs`: read a 50-input model file, load it, propagate
//! (50 symbolic sensitivity coefficients, budget, ν_eff, k) and write the
//! JSON report. Target: under 5 ms.
//!
//! `conformity/guarded_risk_and_global`: a conformity assessment with a
//! guard band derived from a 5 % specific risk (bisection on p_c) and the
//! global risks of a process (adaptive Gauss-Kronrod quadrature).
//! `coverage/t_quantile_*`: one Student's t quantile (coverage factor) at
//! small and at large dof.
//!
//! Run: `cargo bench --bench gum`.

use criterion::{criterion_group, criterion_main, Criterion};
use incertus::gum::{load_file, propagate, Options};

/// A model of 50 inputs of every kind and one long measurand.
fn model_text() -> String {
    let mut t = String::from("title = \"50 inputs\"\n");
    for i in 0..50 {
        t.push_str(&format!("[inputs.x{i}]\n"));
        match i % 5 {
            0 => t.push_str(&format!(
                "observations = [{}, {}, {}, {}, {}]\n",
                1.0 + i as f64 * 0.01,
                1.02 + i as f64 * 0.01,
                0.99 + i as f64 * 0.01,
                1.01 + i as f64 * 0.01,
                1.0 + i as f64 * 0.01
            )),
            1 => t.push_str("value = 2.0\ndistribution = \"rectangular\"\nhalf_width = 0.05\n"),
            2 => t.push_str("value = 0.5\nexpanded_uncertainty = 0.01\ncoverage_factor = 2\n"),
            3 => t.push_str("value = 1.5\nstandard_uncertainty = 0.02\ndof = 8\n"),
            _ => t.push_str("value = 3.0\ndistribution = \"triangular\"\nhalf_width = 0.1\n"),
        }
    }
    let terms: Vec<String> = (0..50)
        .map(|i| match i % 3 {
            0 => format!("x{i}*x{}/(1 + x{}^2)", (i + 1) % 50, (i + 2) % 50),
            1 => format!("sqrt(x{i})*exp(-x{}/10)", (i + 3) % 50),
            _ => format!("ln(1 + x{i}^2)"),
        })
        .collect();
    t.push_str(&format!(
        "[[measurands]]\nname = \"y\"\nformula = \"{}\"\n",
        terms.join(" + ")
    ));
    t
}

fn bench(c: &mut Criterion) {
    let dir = std::env::temp_dir().join(format!("incertus-bench-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("fifty.toml");
    std::fs::write(&path, model_text()).unwrap();
    c.bench_function("model_to_json/50_inputs", |b| {
        b.iter(|| {
            let model = load_file(&path).unwrap();
            let report = propagate(&model, &Options::default()).unwrap();
            incertus_cli::report::json(&report, None)
        })
    });
    let _ = std::fs::remove_dir_all(&dir);

    use incertus::gum::conformity::{assess, Belief, Guard, Process, Rule, Specification};
    let spec = Specification {
        lower: Some(9.95),
        upper: Some(10.05),
        rule: Rule::GuardedAcceptance,
        guard: Guard::SpecificRisk(0.05),
        process: Some(Process {
            mean: 10.0,
            standard_deviation: 0.02,
        }),
    };
    let belief = Belief {
        value: 10.02,
        standard_uncertainty: 0.01,
        dof: Some(12.0),
    };
    c.bench_function("conformity/guarded_risk_and_global", |b| {
        b.iter(|| assess(&spec, belief, 0.0218, 2.18, 0.95, Some("g")).unwrap())
    });
    // Chains of measurands: y_k = sin(y_(k−1)) (400) and y_k = y_(k−1) + x
    // (1000), loaded and propagated (57 s and 29 s before the chain rule over
    // each measurand's own formula and the one-pass dependence marks).
    let chain = |n: usize, first: &str, next: &dyn Fn(usize) -> String| {
        let mut t = String::from(
            "[inputs.x]\nvalue = 0.5\nstandard_uncertainty = 0.01\n\
             [inputs.z]\nvalue = 1.5\nstandard_uncertainty = 0.01\n",
        );
        t.push_str(&format!(
            "[[measurands]]\nname = \"y0\"\nformula = \"{first}\"\n"
        ));
        for k in 1..n {
            t.push_str(&format!(
                "[[measurands]]\nname = \"y{k}\"\nformula = \"{}\"\n",
                next(k)
            ));
        }
        t
    };
    let sines = chain(400, "sin(x)", &|k| format!("sin(y{})", k - 1));
    let sums = chain(1000, "x + z", &|k| format!("y{} + x", k - 1));
    let mut g = c.benchmark_group("chain");
    g.sample_size(10);
    g.bench_function("400_sines", |b| {
        b.iter(|| {
            let m = incertus::gum::load_str(&sines, "sines.toml").unwrap();
            propagate(&m, &Options::default()).unwrap()
        })
    });
    g.bench_function("1000_sums", |b| {
        b.iter(|| {
            let m = incertus::gum::load_str(&sums, "sums.toml").unwrap();
            propagate(&m, &Options::default()).unwrap()
        })
    });
    g.finish();
    c.bench_function("coverage/t_quantile_dof_8", |b| {
        b.iter(|| incertus::gum::coverage::coverage_factor(0.95, Some(criterion::black_box(8.0))))
    });
    c.bench_function("coverage/t_quantile_dof_1e6", |b| {
        b.iter(|| incertus::gum::coverage::coverage_factor(0.95, Some(criterion::black_box(1e6))))
    });
}

criterion_group!(benches, bench);
criterion_main!(benches);
