//! End-to-end tests of `incertus eval --mc` through the built binary.

mod common;
use common::{incertus, scratch, write};

const MODEL: &str = "examples/models/mc_five_inputs.toml";

#[test]
fn text_shows_both_intervals_the_seed_and_the_verdict() {
    let (code, out, err) = incertus(&["eval", MODEL, "--mc", "1000000"]);
    assert_eq!(code, 0, "{err}");
    for fragment in [
        "propagation of distributions (JCGM 101:2008): 1000000 trials, seed 20260101",
        "probabilistically symmetric 95 % coverage interval",
        "shortest 95 % coverage interval",
        "validation of the first-order result (JCGM 101:2008, 8): numerical tolerance δ = ",
        "d_low = ",
        "the results do not depend on the thread count",
        "of memory",
    ] {
        assert!(out.contains(fragment), "missing {fragment:?} in\n{out}");
    }
    assert!(out.contains("PASSED") || out.contains("NOT PASSED"));
}

#[test]
fn json_fills_the_monte_carlo_object() {
    let (code, out, err) = incertus(&[
        "eval", MODEL, "--mc", "1e5", "--seed", "42", "--format", "json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let mc = &v["results"][0]["monte_carlo"];
    for key in [
        "trials",
        "seed",
        "value",
        "standard_uncertainty",
        "symmetric_interval",
        "shortest_interval",
        "validation",
    ] {
        assert!(mc.get(key).is_some(), "monte_carlo.{key} missing");
    }
    for key in ["numerical_tolerance", "d_low", "d_high", "passed"] {
        assert!(
            mc["validation"].get(key).is_some(),
            "validation.{key} missing"
        );
    }
    assert_eq!(mc["trials"], 100_000);
    assert_eq!(mc["seed"], 42);
    assert_eq!(mc["symmetric_interval"].as_array().unwrap().len(), 2);
    assert!(v["monte_carlo_run"]["memory_bytes"].as_u64().unwrap() > 0);
}

#[test]
fn thread_count_does_not_change_the_numbers() {
    let run = |t: &str| {
        incertus(&[
            "eval",
            MODEL,
            "--mc",
            "300000",
            "--threads",
            t,
            "--format",
            "json",
        ])
        .1
    };
    let strip = |s: String| {
        let mut v: serde_json::Value = serde_json::from_str(&s).unwrap();
        v["monte_carlo_run"]["threads"] = serde_json::Value::Null;
        v["monte_carlo_run"]["memory_bytes"] = serde_json::Value::Null; // per-thread buffers
        v
    };
    assert_eq!(strip(run("1")), strip(run("2")));
}

#[test]
fn adaptive_run_reports_its_trial_count() {
    let (code, out, err) = incertus(&["eval", MODEL, "--mc", "auto"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("adaptive procedure with ndig = 2:"), "{out}");
}

#[test]
fn bad_monte_carlo_requests_are_errors() {
    for (args, fragment) in [
        (
            vec!["eval", MODEL, "--mc", "many"],
            "--mc expects a number of trials",
        ),
        (
            vec!["eval", MODEL, "--mc", "100"],
            "too few for a 95 % coverage interval",
        ),
        (vec!["eval", MODEL, "--mc", "1e14"], "would need about"),
    ] {
        let (code, _, err) = incertus(&args);
        assert_eq!(code, 1, "{args:?}: {err}");
        assert!(err.contains(fragment), "{args:?}: {err}");
        assert!(!err.contains("panicked"));
    }
    let dir = std::env::temp_dir().join(format!("incertus-cli-mc-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join("ln.toml");
    std::fs::write(&p, "[inputs.x]\nvalue = 0.2\nstandard_uncertainty = 0.1\n[[measurands]]\nname = \"y\"\nformula = \"ln(x)\"\n").unwrap();
    let (code, _, err) = incertus(&["eval", p.to_str().unwrap(), "--mc", "100000"]);
    assert_eq!(code, 1);
    assert!(
        err.contains("not a finite number") && err.contains("first is trial"),
        "{err}"
    );
    let (code, out, _) = incertus(&[
        "eval",
        p.to_str().unwrap(),
        "--mc",
        "100000",
        "--mc-drop-nonfinite",
    ]);
    assert_eq!(code, 0);
    assert!(
        out.contains("trials gave a non-finite value and were dropped"),
        "{out}"
    );
}

#[test]
fn a_larger_monte_carlo_u_from_t_sampling_is_explained() {
    // JCGM 101:2008, 6.4.9: a Type A input of n = 4 readings is sampled as a
    // scaled and shifted t with ν = 3, variance ν/(ν − 2)·u² = 3u², so the
    // Monte Carlo u of y = x is √3 times the first-order u.
    let dir = scratch("t_note");
    let p = write(
        &dir,
        "m.toml",
        "[inputs.x]\nobservations = [10.1, 10.4, 9.8, 10.0]\n[[measurands]]\nname = \"y\"\nformula = \"x\"\n",
    );
    let (code, out, err) = incertus(&["eval", p.to_str().unwrap(), "--mc", "200000"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("about 1.73× is expected"), "{out}");
    assert!(out.contains("ν/(ν − 2)"), "{out}");
    let (_, json, _) = incertus(&[
        "eval",
        p.to_str().unwrap(),
        "--mc",
        "20000",
        "--format",
        "json",
    ]);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let ratio = v["results"][0]["monte_carlo"]["t_sampling_variance_ratio"]
        .as_f64()
        .unwrap();
    assert!((ratio - 3.0).abs() < 1e-12, "{ratio}");
}

#[test]
fn monte_carlo_near_the_top_of_the_range() {
    // common practice, no published source: trials near 1e307 give finite
    // moments (summed in units of a power of two near u), and a validation
    // is never "passed" on a figure that is not a number.
    let dir = scratch("mc_big");
    let p = write(
        &dir,
        "m.toml",
        "[inputs.x]\nvalue = 1.5e307\nstandard_uncertainty = 1e306\n\
         [inputs.z]\nvalue = 1.2e307\nstandard_uncertainty = 1e306\n\
         [[measurands]]\nname = \"y\"\nformula = \"x + z\"\n",
    );
    let (code, out, err) = incertus(&[
        "eval",
        p.to_str().unwrap(),
        "--mc",
        "50000",
        "--format",
        "json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let m = &v["results"][0]["monte_carlo"];
    let (y, u) = (
        m["value"].as_f64().unwrap(),
        m["standard_uncertainty"].as_f64().unwrap(),
    );
    assert!((y / 2.7e307 - 1.0).abs() < 1e-3, "{y}");
    assert!((u / (2f64.sqrt() * 1e306) - 1.0).abs() < 0.02, "{u}");
}

#[test]
fn a_result_not_validated_is_replaced_by_the_monte_carlo_one_everywhere() {
    // JCGM 101:2008, 8.2: when the first-order result is not validated, the
    // Monte Carlo result is the one reported, and the conformity decision
    // (JCGM 106:2012) rests on it.
    let dir = scratch("reported");
    let p = write(
        &dir,
        "m.toml",
        "[inputs.a]\nvalue = 2\nstandard_uncertainty = 0.1\n[inputs.b]\nvalue = 2\nstandard_uncertainty = 0.1\n\
         [[measurands]]\nname = \"d\"\nformula = \"abs(a - b)\"\n[measurands.specification]\nupper = 0.2\n",
    );
    let f = p.to_str().unwrap();
    let (code, out, err) = incertus(&["eval", f, "--mc", "100000"]);
    assert_eq!(code, 0, "{err}");
    assert!(
        out.contains("REPORTED RESULT, by propagation of distributions"),
        "{out}"
    );
    assert!(
        out.contains("first-order result (not validated, not the reported result)"),
        "{out}"
    );
    assert!(
        out.contains("Result and conformance probability by propagation of distributions"),
        "{out}"
    );
    let (_, json, _) = incertus(&["eval", f, "--mc", "100000", "--format", "json"]);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let r = &v["results"][0];
    assert_eq!(r["reported"]["method"], "monte_carlo");
    // |a − b| of two N(2, 0.1²): the half-normal with σ = 0.1√2; Pr(≤ 0.2) = erf(1) = 0.8427.
    let pc = r["conformity"]["conformance_probability"].as_f64().unwrap();
    assert!((pc - 0.842_700_79).abs() < 0.005, "{pc}"); // erf(1), Abramowitz and Stegun table 7.1 (value recalled from memory; Python's math.erf agrees)
    let mean = r["reported"]["value"].as_f64().unwrap();
    // E|a − b| = σ√(2/π) with σ = 0.1√2: 0.1128
    assert!(
        (mean - 0.2 / std::f64::consts::PI.sqrt()).abs() < 0.002,
        "{mean}"
    );
    // A validated result stays the first-order one.
    let q = write(
        &dir,
        "ok.toml",
        "[inputs.a]\nvalue = 2\nstandard_uncertainty = 0.1\n[[measurands]]\nname = \"y\"\nformula = \"3*a\"\n",
    );
    let (_, json, _) = incertus(&[
        "eval",
        q.to_str().unwrap(),
        "--mc",
        "200000",
        "--format",
        "json",
    ]);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(v["results"][0]["reported"]["method"], "first_order");
}

#[test]
fn a_disagreeing_monte_carlo_conformance_probability_is_never_silent() {
    // y = x² with x = 10 ± 0.5 is skewed: Pr(y ≤ 120) = Φ((√120 − 10)/0.5) =
    // Φ(1.9089) = 0.9719 (the exact distribution of x² for x > 0), against
    // the first-order Φ(2) = 0.9772; with ndig = 1 the first-order result
    // still passes validation, so the first-order p_c is reported, and the
    // disagreement must be stated beside it.
    let dir = scratch("pc_disagree");
    let p = write(
        &dir,
        "m.toml",
        "[inputs.x]\nvalue = 10\nstandard_uncertainty = 0.5\n[[measurands]]\nname = \"y\"\nformula = \"x^2\"\n\
         [measurands.specification]\nupper = 120\n",
    );
    let (code, out, err) = incertus(&[
        "eval",
        p.to_str().unwrap(),
        "--mc",
        "1000000",
        "--ndig",
        "1",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("differs from the first-order"), "{out}");
    assert!(
        out.contains("which disagrees with this first-order figure"),
        "{out}"
    );
    // The Monte Carlo p_c itself against the exact Φ(1.908902) = 0.971863
    // (Python's math.erfc, an independent libm), within four standard uncertainties.
    let (_, json, _) = incertus(&[
        "eval",
        p.to_str().unwrap(),
        "--mc",
        "1000000",
        "--ndig",
        "1",
        "--format",
        "json",
    ]);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let m = &v["results"][0]["conformity"]["monte_carlo"];
    let (pc, u) = (
        m["conformance_probability"].as_f64().unwrap(),
        m["standard_uncertainty"].as_f64().unwrap(),
    );
    assert!((pc - 0.971_863).abs() < 4.0 * u + 2e-5, "{pc} ± {u}");
}

/// An input with no finite variance (t with ν ≤ 2: two or three
/// observations) stops the adaptive procedure at once with the reason and
/// what to do, instead of running towards its cap (JCGM 101:2008, 6.4.9 and
/// 7.9); a fixed number of trials still runs.
#[test]
fn the_adaptive_procedure_refuses_inputs_without_a_finite_variance() {
    let dir = scratch("mc_infinite_variance");
    for n in [2usize, 3] {
        let obs: Vec<String> = (0..n)
            .map(|k| format!("{}", 1.0 + 0.1 * k as f64))
            .collect();
        let f = write(
            &dir,
            &format!("t{n}.toml"),
            &format!(
                "[inputs.a]\nobservations = [{}]\n[inputs.b]\nvalue = 2.0\nstandard_uncertainty = 0.1\n\
                 [[measurands]]\nname = \"y\"\nformula = \"a*b\"\n",
                obs.join(", ")
            ),
        );
        let (code, _, err) = incertus(&["eval", f.to_str().unwrap(), "--mc", "auto"]);
        assert_eq!(code, 1, "{err}");
        assert!(err.contains("no finite variance"), "{err}");
        assert!(err.contains(&format!("from {n} observations")), "{err}");
        assert!(err.contains("--mc N"), "{err}");
        let (code, _, err) = incertus(&["eval", f.to_str().unwrap(), "--mc", "100000"]);
        assert_eq!(code, 0, "{err}");
    }
}

/// Under a limit on the process's memory (`ulimit -v`, as a batch system
/// or a container sets one) the memory check sees the limit, not only the
/// machine's free memory: a clear refusal, not an abort (exit 134).
#[test]
fn the_memory_check_sees_the_process_limit() {
    let bin = env!("CARGO_BIN_EXE_incertus");
    let out = std::process::Command::new("sh")
        .arg("-c")
        .arg(format!(
            "ulimit -v 600000; exec {bin} eval examples/models/mc_five_inputs.toml --mc 100000000"
        ))
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(1), "{err}");
    assert!(err.contains("of memory, more than the"), "{err}");
}
