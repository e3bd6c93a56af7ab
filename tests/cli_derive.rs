//! End-to-end tests of `incertus derive`, run through the built binary.

mod common;
use common::incertus;

/// Whether `out` has the line, ignoring the padding that aligns the `=`.
fn has_line(out: &str, line: &str) -> bool {
    out.lines()
        .any(|l| l.split_whitespace().collect::<Vec<_>>().join(" ") == line)
}

#[test]
fn the_readme_command_prints_both_derivatives_and_their_values() {
    let (code, out, err) = incertus(&[
        "derive",
        "x^2*sin(y)",
        "--wrt",
        "x",
        "--wrt",
        "y",
        "--at",
        "x=2,y=0.5",
    ]);
    assert_eq!(code, 0, "{err}");
    // Values: 2·2·sin(0.5) and 4·cos(0.5), computed independently here.
    let dx = 4.0 * 0.5f64.sin();
    let dy = 4.0 * 0.5f64.cos();
    let expected = format!(
        "f     = x^2*sin(y)\n∂f/∂x = 2*x*sin(y)\n∂f/∂y = x^2*cos(y)\n\nat x = 2, y = 0.5:\n\
         f     = {}\n∂f/∂x = {}\n∂f/∂y = {}\n",
        4.0 * 0.5f64.sin(),
        dx,
        dy
    );
    assert_eq!(out, expected);
}

#[test]
fn without_wrt_every_name_is_differentiated() {
    let (code, out, _) = incertus(&["derive", "a*b + c"]);
    assert_eq!(code, 0);
    assert!(
        out.contains("∂f/∂a = b\n") && out.contains("∂f/∂b = a\n") && out.contains("∂f/∂c = 1\n"),
        "{out}"
    );
}

#[test]
fn second_order_includes_mixed_partials() {
    let (code, out, _) = incertus(&["derive", "x^3*y", "--order", "2", "--at", "x=2, y=3"]);
    assert_eq!(code, 0);
    for line in [
        "∂²f/∂x² = 6*x*y",
        "∂²f/∂x∂y = 3*x^2",
        "∂²f/∂y² = 0",
        "∂²f/∂x² = 36",
        "∂²f/∂x∂y = 12",
    ] {
        assert!(has_line(&out, line), "{line}\n{out}");
    }
}

#[test]
fn values_may_be_constant_formulas() {
    let (code, out, _) = incertus(&["derive", "T", "--at", "T=273.15+25"]);
    assert_eq!(code, 0);
    assert!(out.contains("at T = 298.15:"), "{out}");
}

#[test]
fn bad_formula_gives_a_caret_and_exit_1() {
    let (code, out, err) = incertus(&["derive", "x^2*sin(y"]);
    assert_eq!(code, 1);
    assert!(out.is_empty());
    assert_eq!(
        err,
        "error: in the formula: expected ')' to close the '(' at column 8 but found the end of the formula\n\
         x^2*sin(y\n         ^\n"
    );
    let (code, _, err) = incertus(&["derive", "foo(x)"]);
    assert_eq!(code, 1);
    assert!(
        err.contains("unknown function `foo`") && err.ends_with("\n^^^\n"),
        "{err}"
    );
}

#[test]
fn problems_with_the_point_are_named() {
    for (args, fragment) in [
        (vec!["derive", "x*y", "--at", "x=1"], "no value for `y`"),
        (
            vec!["derive", "x*y", "--at", "x=1,y=2,z=3"],
            "`z`, which does not appear",
        ),
        (vec!["derive", "x*y", "--at", "x=1,y"], "expects NAME=VALUE"),
        (
            vec!["derive", "x*y", "--at", "x=1,y=2*"],
            "the value of `y`",
        ),
        (
            vec!["derive", "x*y", "--at", "x=1,y=q"],
            "must be a constant",
        ),
        (vec!["derive", "x*y", "--at", "x=1,x=2"], "more than once"),
        (
            vec!["derive", "x*y", "--wrt", "q"],
            "does not use this name",
        ),
        (vec!["derive", "sqrt(x)", "--at", "x=0"], "division by zero"),
        (vec!["derive", "ln(x)", "--at", "x=-1"], "logarithm"),
    ] {
        let (code, _, err) = incertus(&args);
        assert_eq!(code, 1, "{args:?}");
        assert!(err.contains(fragment), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{err}");
    }
}

#[test]
fn usage_errors_exit_2() {
    let (code, _, err) = incertus(&["derive"]);
    assert_eq!(code, 2, "{err}");
    let (code, _, _) = incertus(&["derive", "x", "--order", "4"]);
    assert_eq!(code, 2);
    let (code, _, _) = incertus(&["no-such-command"]);
    assert_eq!(code, 2);
    let (code, out, _) = incertus(&["--help"]);
    assert_eq!(code, 0);
    assert!(out.contains("derive"));
}

#[test]
fn deep_formula_on_the_command_line_is_an_error() {
    let deep = format!("{}x{}", "(".repeat(50_000), ")".repeat(50_000));
    let (code, _, err) = incertus(&["derive", &deep]);
    assert_eq!(code, 1);
    assert!(
        err.contains("nests deeper than 256 levels"),
        "{}",
        &err[..200.min(err.len())]
    );
    assert!(err.len() < 1000, "the caret window keeps the message short");
}
