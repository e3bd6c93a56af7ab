//! Propagation of distributions for a model file, with the validation of
//! the first-order result (JCGM 101:2008, clause 8).
//!
//! Run: `cargo run --release --example monte_carlo [MODEL.toml]`

use incertus::gum::{load_file, propagate, Options};
use incertus::mc::{run, Settings};

fn main() {
    let path = std::env::args()
        .nth(1)
        .unwrap_or_else(|| "examples/models/mc_five_inputs.toml".to_string());
    let model = match load_file(path.as_ref()) {
        Ok(m) => m,
        Err(e) => {
            eprintln!("{e}");
            std::process::exit(1);
        }
    };
    let gum = propagate(&model, &Options::default()).expect("first-order evaluation");
    let mc = run(&model, &gum, &Settings::default()).expect("Monte Carlo run");
    for (g, m) in gum.results.iter().zip(&mc.results) {
        println!(
            "{}: first order {:.6}, u = {:.6}; Monte Carlo {:.6}, u = {:.6}, 95 % interval [{:.6}, {:.6}]; validated: {}",
            g.name,
            g.value,
            g.standard_uncertainty,
            m.value,
            m.standard_uncertainty,
            m.symmetric_interval[0],
            m.symmetric_interval[1],
            m.validation.passed
        );
    }
}
