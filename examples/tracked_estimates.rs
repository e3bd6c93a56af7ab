//! Tracked estimates in Rust code: arithmetic that keeps track of the
//! inputs and their correlation (invented demonstration values).
//!
//! Run: `cargo run --example tracked_estimates`

use incertus::gum::estimate::Session;

fn main() {
    let mut s = Session::new();
    // Two resistors read on the same meter: their readings are correlated.
    let r1 = s.input("R1", 100.02, 0.05);
    let r2 = s.input("R2", 149.97, 0.07);
    s.correlate(&r1, &r2, 0.6).expect("both are inputs");
    let series = &r1 + &r2;
    let parallel = &(&r1 * &r2) / &series;
    for (name, y) in [("series", &series), ("parallel", &parallel)] {
        println!(
            "{name:9} = {:.4} ohm, u = {:.4} ohm",
            y.value(),
            s.standard_uncertainty(y).expect("one session")
        );
        for line in s.budget(y).expect("one session") {
            println!(
                "    {:3} c = {:+.5}  contribution {:.5} ohm",
                line.input, line.sensitivity, line.contribution
            );
        }
    }
    println!(
        "correlation of series and parallel: {:.4}",
        s.correlation(&series, &parallel).expect("one session")
    );
    // A result minus itself computed another way is exactly zero.
    let again = &r2 + &r1;
    let zero = &series - &again;
    println!(
        "series - (R2 + R1) = {}, u = {}",
        zero.value(),
        s.standard_uncertainty(&zero).expect("one session")
    );
}
