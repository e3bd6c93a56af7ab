//! Criterion benchmark of `eval MODEL --items TABLE.csv`.
//!
//! `items/1e5_rows_four_inputs`: a four-input model (a Type B input with
//! dof, a rectangular one, an expanded uncertainty with k, a normal one)
//! with a specification, over a table of 10⁵ items setting every input's
//! estimate, CSV output — the whole command through
//! `incertus_cli::run_with`, with the program's allocator (mimalloc).
//! Target: well under 1 s on a two-core laptop (the symbolic work is done
//! once; items are evaluated in parallel).
//!
//! Run: `cargo bench --bench items`.

use criterion::{criterion_group, criterion_main, Criterion};

#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

const MODEL: &str = "title = \"four inputs\"\n\
[inputs.a]\nvalue = 10.0\nstandard_uncertainty = 0.02\ndof = 12\n\
[inputs.b]\nvalue = 2.0\nhalf_width = 0.01\ndistribution = \"rectangular\"\n\
[inputs.c]\nvalue = 1.0\nexpanded_uncertainty = 0.002\ncoverage_factor = 2\n\
[inputs.d]\nvalue = 0.5\nstandard_uncertainty = 0.01\n\
[[measurands]]\nname = \"y\"\nformula = \"a*b/c + d^2\"\n\
[measurands.specification]\nlower = 19.0\nupper = 21.5\n";

fn table(rows: usize) -> String {
    let mut s = String::from("item,a,b,c,d\n");
    for i in 0..rows {
        // A fixed, varied sequence (no random generator needed).
        let t = (i as f64 * 0.618_033_988_749_895).fract();
        s.push_str(&format!(
            "i{i},{:.4},{:.5},{:.5},{:.4}\n",
            9.8 + 0.4 * t,
            1.99 + 0.02 * (1.0 - t),
            0.999 + 0.002 * t,
            0.45 + 0.1 * t
        ));
    }
    s
}

fn bench(c: &mut Criterion) {
    let dir = std::env::temp_dir().join(format!("incertus-bench-items-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let model = dir.join("four.toml");
    let rows = dir.join("rows.csv");
    std::fs::write(&model, MODEL).unwrap();
    std::fs::write(&rows, table(100_000)).unwrap();
    let args: Vec<String> = [
        "incertus",
        "eval",
        model.to_str().unwrap(),
        "--items",
        rows.to_str().unwrap(),
        "--format",
        "csv",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    let mut g = c.benchmark_group("items");
    g.sample_size(10);
    g.bench_function("1e5_rows_four_inputs", |b| {
        b.iter(|| {
            let (mut out, mut err) = (Vec::new(), Vec::new());
            let code = incertus_cli::run_with(&args, &mut out, &mut err);
            assert!(err.is_empty(), "{}", String::from_utf8_lossy(&err));
            (code, out.len())
        })
    });
    g.finish();
    let _ = std::fs::remove_dir_all(&dir);
}

criterion_group!(benches, bench);
criterion_main!(benches);
