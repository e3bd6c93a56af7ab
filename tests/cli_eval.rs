//! End-to-end tests of `incertus eval` and `incertus check` through the
//! built binary: the output contract, the formats, and bad input.

mod common;
use common::{incertus, scratch, write};

const VESSEL: &str = "examples/models/vessel.toml";

#[test]
fn text_report_is_a_budget() {
    let (code, out, err) = incertus(&["eval", VESSEL]);
    assert_eq!(code, 0, "{err}");
    for fragment in [
        "uncertainty budget of V",
        "quantity",
        "standard uncertainty",
        "type, distribution",
        "sensitivity coefficient",
        "contribution",
        "share of u²",
        "B, rectangular",
        "A, n = 4",
        "correlation terms of u²(V)",
        "unit of c",
        "contribution u_i(V) / mm^3",
        "∂V/∂d = ",
        "effective degrees of freedom",
        "coverage factor                   k = ",
        "(± gives the expanded uncertainty U: k = ",
        "rounded to 2 significant digits",
    ] {
        assert!(out.contains(fragment), "missing {fragment:?} in\n{out}");
    }
}

#[test]
fn json_follows_the_contract() {
    let (code, out, err) = incertus(&["eval", VESSEL, "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let r = &v["results"][0];
    for key in [
        "name",
        "unit",
        "value",
        "standard_uncertainty",
        "relative_standard_uncertainty",
        "effective_dof",
        "coverage_probability",
        "coverage_factor",
        "expanded_uncertainty",
        "second_order_standard_uncertainty",
        "budget",
        "correlation_terms",
        "monte_carlo",
    ] {
        assert!(r.get(key).is_some(), "results[0].{key} missing");
    }
    assert_eq!(r["name"], "V");
    assert!(r["monte_carlo"].is_null());
    assert!(r["second_order_standard_uncertainty"].is_null());
    let b = &r["budget"][0];
    for key in [
        "input",
        "value",
        "standard_uncertainty",
        "dof",
        "distribution",
        "sensitivity",
        "sensitivity_formula",
        "contribution",
        "share",
    ] {
        assert!(b.get(key).is_some(), "budget[0].{key} missing");
    }
    assert_eq!(b["input"], "d");
    assert_eq!(b["dof"], 12.0);
    // An input with infinite dof has null.
    assert!(r["budget"][1]["dof"].is_null());
    assert_eq!(v["correlation_matrix"]["names"][0], "V");
    assert_eq!(v["correlation_matrix"]["matrix"][0][0], 1.0);
    // Full precision: U = k·u exactly as computed.
    let u = r["standard_uncertainty"].as_f64().unwrap();
    let k = r["coverage_factor"].as_f64().unwrap();
    assert_eq!(r["expanded_uncertainty"].as_f64().unwrap(), k * u);
}

#[test]
fn markdown_csv_coverage_and_second_order() {
    let (code, out, _) = incertus(&["eval", VESSEL, "--format", "markdown"]);
    assert_eq!(code, 0);
    assert!(out.starts_with("# Volume of a cylindrical vessel"));
    assert!(out.contains("| quantity | estimate |"));
    // --format csv: the results rows of results.csv.
    let (code, out, _) = incertus(&["eval", VESSEL, "--format", "csv"]);
    assert_eq!(code, 0);
    let mut lines = out.lines();
    assert!(lines.next().unwrap().starts_with(
        "measurand,unit,estimate,standard_uncertainty,expanded_uncertainty,coverage_factor,"
    ));
    assert!(
        lines.next().unwrap().starts_with("V,mm^3,2830628.8"),
        "{out}"
    );
    assert_eq!(lines.next(), None);
    let (code, out, _) = incertus(&["eval", VESSEL, "--format", "budget-csv"]);
    assert_eq!(code, 0);
    let mut lines = out.lines();
    assert_eq!(
        lines.next().unwrap(),
        "measurand,kind,input,value,standard_uncertainty,dof,evaluation,distribution,sensitivity,sensitivity_formula,contribution,share,unit,sensitivity_unit,contribution_unit"
    );
    assert!(out.contains("V,correlation,d h,"));
    // Units: the input's own, the coefficient's (y per x), the
    // contribution's (y's), the covariance term's as the square of y's.
    assert!(out.contains(",mm,mm^2,mm^3\n"), "{out}");
    assert!(out.contains(",1/K,mm^3*K,mm^3\n"), "{out}");
    assert!(out.contains(",mm^6\n"), "{out}");
    let (code, out, _) = incertus(&["eval", VESSEL, "--format", "json", "--coverage", "0.99"]);
    assert_eq!(code, 0);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["results"][0]["coverage_probability"], 0.99);
    // Second-order terms are refused for correlated inputs (d, h).
    let (code, _, err) = incertus(&["eval", VESSEL, "--second-order"]);
    assert_eq!(code, 1);
    assert!(
        err.contains("independent inputs only") && err.contains("`d` and `h` are correlated"),
        "{err}"
    );
    let (code, out, _) = incertus(&[
        "eval",
        "tests/models/jcgm100_h1_gauge_block.toml",
        "--second-order",
    ]);
    assert_eq!(code, 0);
    assert!(out.contains("with higher-order terms"));
}

#[test]
fn check_reports_agreement_and_disagreement() {
    let dir = scratch("check");
    let good = write(
        &dir,
        "good.toml",
        r#"
[inputs.a]
value = 2.0
standard_uncertainty = 0.1
sensitivity = "3*b"          # derived by hand: d(3ab)/da
[inputs.b]
value = 1.5
standard_uncertainty = 0.05
sensitivity = 6.0
[[measurands]]
name = "y"
formula = "3*a*b"
expected_value = 9.0
expected_standard_uncertainty = 0.54
"#,
    );
    let (code, out, err) = incertus(&["check", good.to_str().unwrap()]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(out.contains("4 agree, 0 disagree"), "{out}");
    // u = sqrt((4.5·0.1)² + (6·0.05)²) = 0.5408, so 0.50 is off by more than
    // its rounding; the formula a + 2b + 1 equals c(b) = 3a = 6 at the
    // estimates (a = 2, b = 1.5) but is not the derivative of 3ab.
    let bad = write(
        &dir,
        "bad.toml",
        r#"
[inputs.a]
value = 2.0
standard_uncertainty = 0.1
sensitivity = "3*b"
[inputs.b]
value = 1.5
standard_uncertainty = 0.05
sensitivity = "a + 2*b + 1"
[[measurands]]
name = "y"
formula = "3*a*b"
expected_standard_uncertainty = 0.50
"#,
    );
    let (code, out, err) = incertus(&["check", bad.to_str().unwrap()]);
    assert_eq!(code, 1);
    assert!(out.contains("DISAGREES  line 13"), "{out}");
    assert!(out.contains("agrees at the estimates but not"), "{out}");
    assert!(out.contains("1 agree, 2 disagree"), "{out}");
    assert!(err.contains("disagree"), "{err}");
}

/// Each bad model, the fragment of the message, and the line it must name
/// (0 = no line).
#[test]
fn bad_models_are_clear_errors_and_files_stay_unchanged() {
    let dir = scratch("bad");
    let cases: &[(&str, &str, usize)] = &[
        (
            "[inputs.a]\nvalue = 1\nstandard_uncertanty = 0.1\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n",
            "unknown key `standard_uncertanty`; did you mean `standard_uncertainty`?",
            3,
        ),
        (
            "[inputs.a]\nvalue = 1\nstandard_uncertainty = 0.1\nexpanded_uncertainty = 0.2\ncoverage_factor = 2\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n",
            "two descriptions of the uncertainty of `a`",
            4,
        ),
        ("[inputs.a]\nvalue = 1\nstandard_uncertainty = 0.1\ndof = \"12\"\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n", "`inputs.a.dof`: expected a number, found a string", 4),
        ("[inputs.a]\nvalue = 1\nstandard_uncertainty = -0.1\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n", "must be zero or positive", 3),
        ("[inputs.a]\nvalue = 1\nstandard_uncertainty = nan\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n", "not a finite number", 3),
        ("[inputs.a]\nvalue = 1\nstandard_uncertainty = 0.1\ndof = 0\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n", "`inputs.a.dof`: must be positive", 4),
        ("coverage_probability = 1.5\n[inputs.a]\nvalue = 1\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n", "strictly between 0 and 1", 1),
        (
            "[inputs.a]\nvalue = 1\nstandard_uncertainty = 0.1\n[inputs.b]\nvalue = 1\nstandard_uncertainty = 0.1\n[[correlations]]\ninputs = [\"a\", \"b\"]\ncoefficient = 1.2\n[[measurands]]\nname = \"y\"\nformula = \"a+b\"\n",
            "lies in [-1, 1]",
            9,
        ),
        (
            "[inputs.a]\nvalue = 1\nstandard_uncertainty = 0.1\n[[correlations]]\ninputs = [\"a\", \"bb\"]\ncoefficient = 0.5\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n",
            "`bb` is not an input",
            5,
        ),
        (
            "[inputs.a]\nvalue = 1\nstandard_uncertainty = 0.1\n[inputs.b]\nvalue = 1\nstandard_uncertainty = 0.1\n[inputs.c]\nvalue = 1\nstandard_uncertainty = 0.1\n\
             [[correlations]]\ninputs = [\"a\", \"b\"]\ncoefficient = 0.9\n[[correlations]]\ninputs = [\"b\", \"c\"]\ncoefficient = 0.9\n[[correlations]]\ninputs = [\"a\", \"c\"]\ncoefficient = -0.9\n\
             [[measurands]]\nname = \"y\"\nformula = \"a+b+c\"\n",
            "not positive semi-definite",
            10,
        ),
        ("[inputs.a]\nobservations = [1.0]\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n", "at least two observations, found 1", 2),
        ("[inputs.a]\nvalue = 2\nstandard_uncertainty = 0.1\n[[measurands]]\nname = \"y\"\nformula = \"sqrt(a - 5)\"\n", "square root of a negative number", 0),
        ("[inputs.a]\nvalue = 2\n[[measurands]]\nname = \"y\"\nformula = \"z + a\"\n[[measurands]]\nname = \"z\"\nformula = \"2*y\"\n", "cycle: y -> z -> y", 3),
        ("[inputs.alpha]\nvalue = 2\n[[measurands]]\nname = \"y\"\nformula = \"2*alpa\"\n", "`alpa` is neither an input nor a measurand; did you mean `alpha`?", 5),
        ("[inputs.a]\nvalue = 2\n[[measurands]]\nname = \"a\"\nformula = \"2\"\n", "`a` is defined twice", 4),
        ("[inputs.a]\nvalue = 2\n[inputs.a]\nvalue = 3\n", "not valid TOML", 3),
        ("[inputs.a]\nvalue = = 2\n", "not valid TOML", 2),
        ("[inputs.a]\nvalue = 2\n", "has no measurands", 0),
        ("[inputs.a]\nvalue = 2\nstandard_uncertainty = 0.1\ndistribution = \"t\"\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n", "needs dof", 4),
        ("[inputs.a]\nvalue = 2\nstandard_uncertainty = 0.1\ndof = 3\nrelative_reliability = 0.1\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n", "not both", 4),
        ("[inputs.a]\nvalue = 2\n[[measurands]]\nname = \"y\"\nformula = \"2*(a+\"\n", "expected a number, a name or '('", 5),
        ("[inputs.a]\nconstant = \"k_b\"\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n", "did you mean `k_B`?", 2),
        ("[inputs.\"a b\"]\nvalue = 2\n[[measurands]]\nname = \"y\"\nformula = \"1\"\n", "cannot be used as a name", 1),
    ];
    for (i, (text, fragment, line)) in cases.iter().enumerate() {
        let path = write(&dir, &format!("bad{i}.toml"), text);
        let before = std::fs::read(&path).unwrap();
        let (code, out, err) = incertus(&["eval", path.to_str().unwrap()]);
        assert_eq!(code, 1, "case {i}: {err}");
        assert!(out.is_empty(), "case {i}: {out}");
        assert!(
            err.contains(fragment),
            "case {i}: expected {fragment:?} in\n{err}"
        );
        assert!(!err.contains("panicked"), "case {i}: {err}");
        if *line > 0 {
            let at = format!("bad{i}.toml:{line}:");
            assert!(err.contains(&at), "case {i}: expected {at} in\n{err}");
        }
        assert_eq!(
            std::fs::read(&path).unwrap(),
            before,
            "case {i}: the model file changed"
        );
    }
}

#[test]
fn formula_errors_in_a_model_show_a_caret() {
    let dir = scratch("caret");
    let p = write(
        &dir,
        "m.toml",
        "[inputs.x]\nvalue = 1\n[[measurands]]\nname = \"y\"\nformula = \"x + sqrt(q)\"\n",
    );
    let (code, _, err) = incertus(&["eval", p.to_str().unwrap()]);
    assert_eq!(code, 1);
    assert!(err.ends_with("x + sqrt(q)\n         ^\n"), "{err}");
}

#[test]
fn missing_and_unreadable_files() {
    let (code, _, err) = incertus(&["eval", "no/such/model.toml"]);
    assert_eq!(code, 1);
    assert!(
        err.contains("no/such/model.toml: cannot read the file"),
        "{err}"
    );
    let dir = scratch("dir");
    let (code, _, err) = incertus(&["eval", dir.to_str().unwrap()]);
    assert_eq!(code, 1);
    assert!(err.contains("is a directory"), "{err}");
    let p = dir.join("binary.toml");
    std::fs::write(&p, [0xff, 0xfe, 0x00, 0x41]).unwrap();
    let (code, _, err) = incertus(&["eval", p.to_str().unwrap()]);
    assert_eq!(code, 1);
    assert!(err.contains("not UTF-8"), "{err}");
    let (code, _, err) = incertus(&["eval", VESSEL, "--coverage", "1"]);
    assert_eq!(code, 1);
    assert!(
        err.contains("--coverage must lie strictly between 0 and 1"),
        "{err}"
    );
}

#[test]
fn check_compares_like_with_like() {
    // common practice, no published source: a stated figure is compared in the
    // units of the budget, and the relative difference shown is the one judged.
    let dir = scratch("check_units");
    let cases: &[(&str, &str, bool, &str)] = &[
        // a formula off by 2.5e-5 relative, inputs in mm, result in mm^3
        (
            "pi*d*h/2*(1 + 2.5e-5)",
            "",
            false,
            "relative difference +2.50e-5",
        ),
        ("pi*d*h/2", "", true, "relative difference +0.00e0"),
        // a stated u of 0 against a computed one that is not 0
        (
            "pi*d*h/2",
            "expected_standard_uncertainty = 0\n",
            false,
            "standard uncertainty of V: stated 0",
        ),
        (
            "pi*d*h/2",
            "expected_standard_uncertainty = 1.1e3\n",
            true,
            "stated 1.1e3",
        ),
    ];
    for (i, (formula, extra, agrees, fragment)) in cases.iter().enumerate() {
        let text = format!(
            "[inputs.d]\nvalue = 120\nstandard_uncertainty = 0.02\nunit = \"mm\"\nsensitivity = \"{formula}\"\n\
             [inputs.h]\nvalue = 250\nstandard_uncertainty = 0.05\nunit = \"mm\"\n\
             [[measurands]]\nname = \"V\"\nformula = \"pi*d^2*h/4\"\nunit = \"mm^3\"\n{extra}"
        );
        let p = write(&dir, &format!("c{i}.toml"), &text);
        let (code, out, err) = incertus(&["check", p.to_str().unwrap()]);
        assert_eq!(code == 0, *agrees, "case {i}: {out}{err}");
        assert!(out.contains(fragment), "case {i}: {fragment:?} in\n{out}");
        assert!(
            !out.contains("e2 ") && !out.contains("+9.9"),
            "case {i}: {out}"
        );
    }
}
