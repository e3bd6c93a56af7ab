//! End-to-end tests of fits: `incertus fit` and fits inside model files.

mod common;
use common::{incertus, scratch, write};

const CSV: &str = "examples/models/calibration.csv";

#[test]
fn json_follows_the_contract() {
    let (code, out, err) = incertus(&[
        "fit", CSV, "--x", "conc", "--y", "signal", "--format", "json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["parameters"][0]["name"], "intercept");
    assert_eq!(v["parameters"][1]["name"], "slope");
    for key in [
        "covariance",
        "correlation",
        "residual_standard_deviation",
        "dof",
        "r_squared",
        "points",
    ] {
        assert!(v.get(key).is_some(), "{key} missing");
    }
    for key in [
        "row",
        "x",
        "y",
        "residual",
        "studentized_residual",
        "leverage",
        "cooks_distance",
        "flagged",
        "excluded",
    ] {
        assert!(v["points"][0].get(key).is_some(), "points[0].{key} missing");
    }
    assert_eq!(v["dof"], 10);
    assert_eq!(v["points"][9]["flagged"], true);
    let (code, out, _) = incertus(&[
        "fit", CSV, "--x", "conc", "--y", "signal", "--degree", "2", "--format", "json",
    ]);
    assert_eq!(code, 0);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let names: Vec<&str> = v["parameters"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["name"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["c0", "c1", "c2"]);
}

#[test]
fn text_shows_flags_exclusions_and_both_results() {
    let (code, out, err) = incertus(&[
        "fit",
        CSV,
        "--x",
        "conc",
        "--y",
        "signal",
        "--y-uncertainty",
        "u_signal",
        "--exclude",
        "10",
        "--exclude-reason",
        "cuvette not rinsed",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("method: weighted least squares"), "{out}");
    assert!(out.contains("χ² = ") && out.contains("not scaled"), "{out}");
    assert!(out.contains("EXCLUDED: cuvette not rinsed"), "{out}");
    assert!(out.contains("without the exclusions (rows 10)"), "{out}");
    assert!(out.contains("flagged: "), "{out}");
    let (code, _, err) = incertus(&[
        "fit",
        CSV,
        "--x",
        "conc",
        "--y",
        "signal",
        "--exclude",
        "10",
    ]);
    assert_eq!(code, 1);
    assert!(err.contains("--exclude-reason"), "{err}");
}

#[test]
fn fitted_parameters_enter_the_budget_with_their_correlation() {
    let (code, out, err) = incertus(&[
        "eval",
        "examples/models/calibration.toml",
        "--format",
        "json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let fit = &v["fits"][0]["result"];
    let r = &v["results"][0];
    let budget = r["budget"].as_array().unwrap();
    assert_eq!(budget[0]["evaluation"], "fit");
    assert_eq!(budget[0]["dof"].as_f64(), fit["dof"].as_f64());
    let cl = &r["correlation_budget"][0];
    assert_eq!(cl["from_fit"], "cal");
    let rho = fit["correlation"][0][1].as_f64().unwrap();
    assert_eq!(cl["coefficient"].as_f64().unwrap(), rho);
    // u²(c) by hand from the fit's covariance (first order):
    // c = (y0 − a)/b, c_a = −1/b, c_b = −(y0 − a)/b², c_y0 = 1/b.
    let a = fit["parameters"][0]["value"].as_f64().unwrap();
    let b = fit["parameters"][1]["value"].as_f64().unwrap();
    let cov = &fit["covariance"];
    let (vaa, vbb, vab) = (
        cov[0][0].as_f64().unwrap(),
        cov[1][1].as_f64().unwrap(),
        cov[0][1].as_f64().unwrap(),
    );
    let y0 = budget[2]["value"].as_f64().unwrap();
    let uy0 = budget[2]["standard_uncertainty"].as_f64().unwrap();
    let (ca, cb, cy) = (-1.0 / b, -(y0 - a) / (b * b), 1.0 / b);
    let u2 = ca * ca * vaa + cb * cb * vbb + 2.0 * ca * cb * vab + cy * cy * uy0 * uy0;
    let got = r["standard_uncertainty"].as_f64().unwrap();
    assert!(
        (got - u2.sqrt()).abs() < 1e-12 * got,
        "{got} vs {}",
        u2.sqrt()
    );
    assert_eq!(fit["excluded_rows"][0], 10);
    // Monte Carlo samples the fit's parameters jointly (multivariate t).
    let (code, out, err) =
        incertus(&["eval", "examples/models/calibration.toml", "--mc", "200000"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("a, b: multivariate t with 9 dof"), "{out}");
}

#[test]
fn bad_data_and_fit_keys_are_clear_errors() {
    let dir = scratch("bad");
    let cases: &[(&str, &str, &str)] = &[
        ("x,y\n1,2\n2,\n3,4\n", "", "d.csv:3: column `y` is empty"),
        (
            "x,y\n1,2\n2,abc\n3,4\n",
            "",
            "d.csv:3: column `y` holds `abc`, which is not a number",
        ),
        (
            "x,y\n1,2\n2\n3,4\n",
            "",
            "d.csv:3: the line has 1 field but the header has 2",
        ),
        (
            "x,z\n1,2\n2,3\n3,4\n",
            "",
            "no column named `y`; the columns are: x, z",
        ),
        (
            "x,y\n1,2\n2,3\n",
            "",
            "2 points are too few for 2 parameters",
        ),
        (
            "x,y\n1,2\n2,3\n3,5\n4,4\n",
            "parameter = \"slop\"",
            "has no parameter `slop`; its parameters are intercept, slope",
        ),
        ("x,y\n1,2\n2,3\n3,5\n4,4\n", "fit2", "no fit named `cal2`"),
    ];
    for (i, (csv, twist, fragment)) in cases.iter().enumerate() {
        write(&dir, "d.csv", csv);
        let fit_name = if *twist == "fit2" { "cal2" } else { "cal" };
        let param = if twist.starts_with("parameter") {
            twist.to_string()
        } else {
            "parameter = \"slope\"".into()
        };
        let model = format!(
            "[fits.cal]\ndata = \"d.csv\"\nx = \"x\"\ny = \"y\"\n[inputs.b]\nfit = \"{fit_name}\"\n{param}\n[[measurands]]\nname = \"m\"\nformula = \"2*b\"\n"
        );
        let p = write(&dir, &format!("m{i}.toml"), &model);
        let before = std::fs::read(dir.join("d.csv")).unwrap();
        let (code, out, err) = incertus(&["eval", p.to_str().unwrap()]);
        assert_eq!(code, 1, "case {i}: {out}{err}");
        assert!(
            err.contains(fragment),
            "case {i}: expected {fragment:?} in\n{err}"
        );
        assert!(!err.contains("panicked"));
        assert_eq!(
            std::fs::read(dir.join("d.csv")).unwrap(),
            before,
            "the data file is never changed"
        );
    }
    // Exclusions need a reason; inline arrays work.
    let p = write(&dir, "x.toml", "[fits.cal]\nx = [1, 2, 3, 4]\ny = [2, 3, 5, 4]\nexclude = [2]\n[[measurands]]\nname = \"m\"\nformula = \"1\"\n");
    let (code, _, err) = incertus(&["eval", p.to_str().unwrap()]);
    assert_eq!(code, 1);
    assert!(err.contains("exclude_reason"), "{err}");
    let p = write(&dir, "ok.toml", "[fits.cal]\nx = [1, 2, 3, 4]\ny = [2, 3, 5, 4]\n[inputs.b]\nfit = \"cal\"\nparameter = \"slope\"\n[[measurands]]\nname = \"m\"\nformula = \"2*b\"\n");
    let (code, out, err) = incertus(&["eval", p.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("least-squares fit `cal`"), "{out}");
}
