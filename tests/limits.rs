//! The limits of `gum::Limits` through the binary: each can be lowered (or
//! raised) by its environment variable, and a bad value is an error naming
//! the variable (README, "Limits and errors").

use std::process::Command;

mod common;
use common::{scratch, write};

fn run(env: &[(&str, &str)], args: &[&str]) -> (i32, String) {
    let mut c = Command::new(env!("CARGO_BIN_EXE_incertus"));
    c.args(args);
    for (k, v) in env {
        c.env(k, v);
    }
    let out = c.output().expect("the binary runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

const TWO: &str = "[inputs.a]\nvalue = 1\nstandard_uncertainty = 0.1\n[inputs.b]\nvalue = 2\nstandard_uncertainty = 0.1\n[[measurands]]\nname = \"y\"\nformula = \"a*b\"\n[[measurands]]\nname = \"z\"\nformula = \"y*y*y\"\n";

#[test]
fn each_limit_is_set_by_its_variable() {
    let dir = scratch("limits");
    let f = write(&dir, "two.toml", TWO);
    let f = f.to_str().unwrap();
    assert_eq!(run(&[], &["eval", f]).0, 0);
    for (var, value, fragment) in [
        (
            "INCERTUS_MAX_INPUTS",
            "1",
            "2 inputs; the limit is 1 (INCERTUS_MAX_INPUTS)",
        ),
        (
            "INCERTUS_MAX_MEASURANDS",
            "1",
            "2 measurands; the limit is 1 (INCERTUS_MAX_MEASURANDS)",
        ),
        (
            "INCERTUS_MAX_FORMULA_NODES",
            "5",
            "(INCERTUS_MAX_FORMULA_NODES)",
        ),
        (
            "INCERTUS_MAX_FORMULA_DEPTH",
            "2",
            "(INCERTUS_MAX_FORMULA_DEPTH)",
        ),
        (
            "INCERTUS_MAX_DERIVATIVE_NODES",
            "3",
            "(INCERTUS_MAX_DERIVATIVE_NODES)",
        ),
        (
            "INCERTUS_MAX_FILE_BYTES",
            "10",
            "model files are limited to 10 bytes (INCERTUS_MAX_FILE_BYTES)",
        ),
        (
            "INCERTUS_MAX_INPUTS",
            "many",
            "environment variable INCERTUS_MAX_INPUTS: `many` is not a whole number",
        ),
    ] {
        let (code, err) = run(&[(var, value)], &["eval", f]);
        assert_eq!(code, 1, "{var}={value}: {err}");
        assert!(err.contains(fragment), "{var}={value}: {err}");
        assert!(!err.contains("panicked"));
    }
    let csv = write(&dir, "line.csv", "x,y\n1,2\n2,4.1\n3,5.9\n4,8.2\n");
    let (code, err) = run(
        &[("INCERTUS_MAX_DATA_ROWS", "3")],
        &["fit", csv.to_str().unwrap(), "--x", "x", "--y", "y"],
    );
    assert_eq!(code, 1);
    assert!(err.contains("more than 3 data rows"), "{err}");
    let _ = std::fs::remove_dir_all(&dir);
}
