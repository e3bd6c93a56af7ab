//! A measurement model built in Rust and evaluated by the law of
//! propagation (invented demonstration values).
//!
//! Run: `cargo run --example build_model`

use incertus::gum::builder::ModelBuilder;
use incertus::gum::rounding::write;
use incertus::gum::{propagate, Options};

fn main() {
    let builder = ModelBuilder::new()
        .title("Density of a liquid by weighing a known volume")
        .input("m", |i| {
            i.observations(&[9.9812, 9.9808, 9.9815, 9.9811]).unit("g")
        })
        .input("V", |i| i.value(10.002).expanded(0.004, 2.0).unit("mL"))
        .input("t", |i| i.value(20.0).rectangular(0.5).unit("degC"))
        .input("t0", |i| {
            i.value(20.0)
                .unit("degC")
                .description("reference temperature")
        })
        .input("gamma", |i| {
            i.value(2.1e-4).standard_uncertainty(0.1e-4).unit("1/K")
        })
        .measurand("rho", "m/(V*(1 + gamma*(t - t0)))", Some("g/cm^3"));
    let model = match builder.build() {
        Ok(m) => m,
        Err(e) => {
            eprintln!("{e}");
            std::process::exit(1);
        }
    };
    let report = propagate(&model, &Options::default()).expect("the model is well defined");
    let r = &report.results[0];
    let w = write(r.value, r.expanded_uncertainty, 2);
    println!(
        "{} = {} g/cm^3 (k = {:.2}, p = 95 %)",
        r.name, w.plus_minus, r.coverage_factor
    );
    println!("\nthe same model as a file:\n{}", builder.to_toml());
}
