//! Times batch evaluation of a formula on the compiled tape; used by
//! `benches/side_by_side/tape_vs_numpy.py`, which runs the same computation
//! with numpy in the same go.
//!
//! Usage: `cargo run --release --example tape_throughput -- FORMULA N REPEATS`
//! Prints one line of JSON: the best time of one evaluation over N points
//! and a checksum of the results.

use incertus::expr::{parse, Tape};
use std::time::Instant;

fn main() {
    let args: Vec<String> = std::env::args().collect();
    if args.len() != 4 {
        eprintln!("usage: tape_throughput FORMULA N REPEATS");
        std::process::exit(2);
    }
    let f = match parse(&args[1]) {
        Ok(f) => f,
        Err(e) => {
            eprintln!("{}", e.render(&args[1]));
            std::process::exit(1);
        }
    };
    let n: usize = args[2].parse().unwrap_or(1_000_000);
    let repeats: usize = args[3].parse().unwrap_or(5);
    let names = f.names();
    let name_refs: Vec<&str> = names.iter().map(String::as_str).collect();
    let tape = Tape::compile(std::slice::from_ref(&f), &name_refs).expect("names are the inputs");
    // Column k (in order of first appearance), point i: the same data as the
    // numpy side builds.
    let cols: Vec<Vec<f64>> = (0..names.len())
        .map(|k| {
            (0..n)
                .map(|i| 1.0 + 0.5 * ((i * (k + 3)) as f64 * 1e-3).sin())
                .collect()
        })
        .collect();
    let refs: Vec<&[f64]> = cols.iter().map(Vec::as_slice).collect();
    let mut out = vec![0.0; n];
    let mut best = f64::INFINITY;
    for _ in 0..repeats {
        let t = Instant::now();
        let report = tape
            .eval_batch(&refs, &mut [&mut out])
            .expect("shapes match");
        best = best.min(t.elapsed().as_secs_f64());
        assert!(report.all_finite());
    }
    let checksum: f64 = out.iter().sum();
    println!(
        "{{\"seconds\": {best:e}, \"checksum\": {checksum:e}, \"nodes\": {}, \"points\": {n}}}",
        f.node_count()
    );
}
