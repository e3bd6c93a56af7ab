//! Conformity assessment (JCGM 106:2012) through the binary: every output
//! format carries the verdict, p_c, the risks and the statement, and the
//! Monte Carlo conformance probability agrees with the closed form.

mod common;
use common::{incertus, scratch, write};

const PIPETTE: &str = "examples/models/pipette_conformity.toml";

// A linear model of normal inputs with infinite dof: the first-order
// distribution N(y, u_c) is exact (JCGM 101:2008, 9.2.2 makes the same
// point for its additive model), so p_c by Monte Carlo must agree with the
// closed form within its own standard uncertainty.
const LINEAR: &str = r#"
[inputs.a]
value = 10.0
standard_uncertainty = 0.006
[inputs.b]
value = 0.02
standard_uncertainty = 0.008
[[measurands]]
name = "L"
formula = "a + b"
[measurands.specification]
lower = 9.99
upper = 10.03
"#;

#[test]
fn every_format_carries_the_assessment() {
    let (code, out, err) = incertus(&["eval", PIPETTE]);
    assert_eq!(code, 0, "{err}");
    for f in [
        "conformity assessment of V (JCGM 106:2012)",
        "tolerance interval                 [99.2, 100.8] uL",
        "acceptance interval                [99.256, 100.744] uL",
        "verdict                            ACCEPTED",
        "global risks, process N(100, 0.4) uL",
        "statement: Decision rule: guarded acceptance (JCGM 106:2012, clause 8)",
    ] {
        assert!(out.contains(f), "missing {f:?} in\n{out}");
    }
    let (code, md, _) = incertus(&["eval", PIPETTE, "--format", "markdown"]);
    assert_eq!(code, 0);
    assert!(
        md.contains("**Conformity statement.** Decision rule: guarded acceptance"),
        "{md}"
    );
    let (code, csv, _) = incertus(&["eval", PIPETTE, "--format", "budget-csv"]);
    assert_eq!(code, 0);
    assert!(csv.contains("V,conformity,verdict,accepted"), "{csv}");
    assert!(
        csv.contains("V,conformity,specific_consumer_risk,"),
        "{csv}"
    );
    let (code, json, _) = incertus(&["eval", PIPETTE, "--format", "json"]);
    assert_eq!(code, 0);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let c = &v["results"][0]["conformity"];
    assert_eq!(c["verdict"], "accepted");
    assert_eq!(c["rule"], "guarded acceptance");
    assert_eq!(c["lower_limit"], 99.2);
    let u = v["results"][0]["expanded_uncertainty"].as_f64().unwrap();
    assert_eq!(c["guard_band"].as_f64().unwrap(), u);
    assert!(c["global_risks"]["producer_risk"].as_f64().unwrap() > 0.0);
}

#[test]
fn monte_carlo_conformance_agrees_with_the_closed_form() {
    let dir = scratch("conformity-linear");
    let file = write(&dir, "linear.toml", LINEAR);
    let (code, json, err) = incertus(&[
        "eval",
        file.to_str().unwrap(),
        "--mc",
        "1000000",
        "--format",
        "json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let c = &v["results"][0]["conformity"];
    let pc = c["conformance_probability"].as_f64().unwrap();
    // u_c = 0.01, y = 10.02: p_c = Φ(1) − Φ(−3), scipy.stats.norm.
    let exact = 0.841_344_746_068_542_9 - 0.001_349_898_031_630_094_6;
    assert!((pc - exact).abs() < 1e-12, "{pc}");
    let mc = &c["monte_carlo"];
    let p = mc["conformance_probability"].as_f64().unwrap();
    let s = mc["standard_uncertainty"].as_f64().unwrap();
    assert_eq!(mc["trials"], 1_000_000);
    assert!((p - exact).abs() < 4.0 * s, "{p} vs {exact} (u {s})");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_report_folder_quotes_the_statement() {
    let dir = scratch("conformity-report");
    let out_dir = dir.join("rep");
    let (code, _, err) = incertus(&["eval", PIPETTE, "--report", out_dir.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    let html = std::fs::read_to_string(out_dir.join("report.html")).unwrap();
    assert!(html
        .contains("<h2 id=\"conformity\">Conformity with the specification (JCGM 106:2012)</h2>"));
    assert!(html.contains("Decision rule: guarded acceptance"));
    assert!(html.contains("ISO/IEC 17025:2017, 7.1.3"));
    let svg = std::fs::read_to_string(out_dir.join("conformity_V.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    assert!(svg.contains("tolerance limits") && svg.contains("acceptance limits"));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_bad_specification_is_located() {
    let dir = scratch("conformity-bad");
    let text = LINEAR.replace(
        "upper = 10.03",
        "upper = 10.03\nrule = \"guarded acceptance\"",
    );
    let file = write(&dir, "bad.toml", &text);
    let before = std::fs::read(&file).unwrap();
    let (code, _, err) = incertus(&["eval", file.to_str().unwrap()]);
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("measurands[0].specification"), "{err}");
    assert!(err.contains("needs a guard band"), "{err}");
    assert!(err.contains("bad.toml:"), "{err}");
    assert_eq!(std::fs::read(&file).unwrap(), before);
    let _ = std::fs::remove_dir_all(&dir);
}
