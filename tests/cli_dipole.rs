//! `incertus dipole` on a user's files and `incertus demo`, end to end.

mod common;
use common::{incertus, scratch, write};

use std::process::Command;

#[test]
fn demo_prints_a_budget_the_moment_in_debye_and_writes_a_report() {
    let dir = scratch("demo");
    let out = Command::new(env!("CARGO_BIN_EXE_incertus"))
        .arg("demo")
        .current_dir(&dir)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    for fragment in [
        "INVENTED",
        "Caution",
        "uncertainty budget of mu",
        "a_eps",
        "result   mu = ",
        " D   (",
        "validation of the first-order result",
        "report written to incertus-demo-report",
    ] {
        assert!(text.contains(fragment), "missing {fragment:?}");
    }
    assert!(dir.join("incertus-demo-report/report.html").exists());
    // A second run chooses a fresh folder, never overwriting the first.
    let out = Command::new(env!("CARGO_BIN_EXE_incertus"))
        .arg("demo")
        .current_dir(&dir)
        .output()
        .unwrap();
    assert!(
        String::from_utf8_lossy(&out.stdout).contains("report written to incertus-demo-report-2")
    );
}

#[test]
fn dipole_reads_a_users_toml_and_csv() {
    let dir = scratch("dipole");
    write(&dir, "series.csv", "w,eps,n\n0.0,2.2727,1.49790\n0.01,2.3321,1.49832\n0.02,2.3915,1.49879\n0.03,2.4507,1.49921\n0.04,2.5104,1.49962\n");
    let p = write(
        &dir,
        "problem.toml",
        "title = \"test solute in a non-polar solvent\"\n\
         [series]\ndata = \"series.csv\"\nweight_fraction = \"w\"\npermittivity = \"eps\"\nrefractive_index = \"n\"\n\
         [solvent]\npermittivity = { value = 2.2727, standard_uncertainty = 0.002 }\ndensity = { value = 0.8737, standard_uncertainty = 0.0002, unit = \"g/cm^3\" }\n\
         [solute]\nmolar_mass = { value = 120.0, standard_uncertainty = 0.01, unit = \"g/mol\" }\n\
         [conditions]\ntemperature = { value = 25.0, standard_uncertainty = 0.1, unit = \"degC\" }\n",
    );
    let (code, out, err) = incertus(&[
        "dipole",
        p.to_str().unwrap(),
        "--mc",
        "100000",
        "--format",
        "json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["results"][0]["unit"], "D");
    assert!(v["results"][0]["value"].as_f64().unwrap() > 0.5);
    assert!(v["results"][0]["monte_carlo"]["validation"]
        .get("passed")
        .is_some());
    // Errors name the file and the problem.
    let bad = write(&dir, "bad.toml", "[series]\ndata = \"series.csv\"\nweight_fraction = \"w\"\npermittivity = \"eps\"\nrefractive_index = \"q\"\n[solvent]\npermittivity = { value = 2.2727, standard_uncertainty = 0.002 }\ndensity = { value = 0.8737, standard_uncertainty = 0.0002, unit = \"g/cm^3\" }\n[solute]\nmolar_mass = { value = 120.0, standard_uncertainty = 0.01 }\n[conditions]\ntemperature = { value = 298.15, standard_uncertainty = 0.1, unit = \"K\" }\n");
    let (code, _, err) = incertus(&["dipole", bad.to_str().unwrap()]);
    assert_eq!(code, 1);
    assert!(err.contains("no column named `q`"), "{err}");
    let bad = write(
        &dir,
        "bad2.toml",
        "[series]\ndata = \"series.csv\"\nweight_fractions = \"w\"\n",
    );
    let (code, _, err) = incertus(&["dipole", bad.to_str().unwrap()]);
    assert_eq!(code, 1);
    assert!(
        err.contains("bad2.toml") && err.contains("weight_fractions"),
        "{err}"
    );
}

/// A problem with a density column (which once indexed past the columns
/// read and panicked): the Halverstadt-Kumler moment against the
/// independent computation of tests/fixtures/make_dipole_density.py
/// (closed-form least-squares lines and the Halverstadt-Kumler relation
/// written out in Python; it printed mu_hk = 1.680037534018 D).
#[test]
fn dipole_with_densities_gives_the_halverstadt_kumler_moment() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let out = Command::new(env!("CARGO_BIN_EXE_incertus"))
        .args(["dipole", "--format", "json"])
        .arg(root.join("examples/dipole/density.toml"))
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let hk = v["results"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["name"] == "mu_hk")
        .expect("mu_hk reported");
    let mu = hk["value"].as_f64().unwrap();
    assert!((mu - 1.680037534018).abs() < 1e-9, "{mu}");
    assert!(hk["standard_uncertainty"].as_f64().unwrap() > 0.0);
    // Every output format and the Monte Carlo path reach it too.
    for args in [
        &["--format", "text"][..],
        &["--format", "markdown"],
        &["--mc", "20000"],
    ] {
        let out = Command::new(env!("CARGO_BIN_EXE_incertus"))
            .arg("dipole")
            .args(args)
            .arg(root.join("examples/dipole/density.toml"))
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{args:?}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        assert!(String::from_utf8_lossy(&out.stdout).contains("mu_hk"));
    }
}
