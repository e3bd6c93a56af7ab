//! `eval MODEL --items TABLE.csv`: one model over a table of items.
//!
//! - Every row's result equals `eval` of the model with that row written
//!   into the model file (a property test over random rows: estimates,
//!   series, half-widths, standard uncertainties with dof, expanded
//!   uncertainties, distributions), field for field in the JSON.
//! - The summary's counts and expected number of nonconforming items
//!   against a hand computation with the standard normal distribution
//!   (Φ(1) = 0.841344746068543, from any table of the normal distribution,
//!   e.g. NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.7.1).
//! - U over the range of values against numpy's polyfit of the same points
//!   (tests/fixtures/make_items_range_fixture.py).
//! - Bad rows are errors naming the line, the column and the item, and
//!   nothing is written.

mod common;
use common::*;
use proptest::prelude::*;

/// The model of the property test; `x` carries a Type A series or a
/// value with u, `h` limits, `k` an expanded uncertainty.
fn model_text(x: &str, h: &str, k: &str, w: &str) -> String {
    format!(
        "title = \"items\"\n\
         [inputs.x]\nunit = \"mm\"\n{x}\n\
         [inputs.h]\nunit = \"mm\"\n{h}\n\
         [inputs.k]\n{k}\n\
         [inputs.w]\n{w}\n\
         [[measurands]]\nname = \"y\"\nunit = \"mm^2\"\nformula = \"x*h*k + w*x^2\"\n\
         [measurands.specification]\nlower = 50\nupper = 400\nrule = \"guarded acceptance\"\nguard_multiple = 0.5\n"
    )
}

const BASE_X: &str = "value = 10.0\nstandard_uncertainty = 0.05";
const BASE_H: &str = "value = 12.0\nhalf_width = 0.1\ndistribution = \"rectangular\"";
const BASE_K: &str = "value = 1.0\nexpanded_uncertainty = 0.002\ncoverage_factor = 2";
const BASE_W: &str = "value = 0.5\nstandard_uncertainty = 0.01\ndof = 8";

/// One generated row: the table's cells and the same keys as model-file
/// text for each input.
#[derive(Clone, Debug)]
struct Row {
    cells: Vec<String>,
    x: String,
    h: String,
    k: String,
    w: String,
}

fn num(v: f64) -> String {
    format!("{v:?}")
}

fn row() -> impl Strategy<Value = Row> {
    (
        prop::collection::vec(9.0..11.0f64, 2..6),
        8.0..16.0f64,
        0.01..0.5f64,
        prop::sample::select(vec!["rectangular", "triangular", "arcsine"]),
        0.99..1.01f64,
        0.3..0.7f64,
        0.001..0.05f64,
        2.0..30.0f64,
    )
        .prop_map(|(obs, h, hw, dist, k, w, uw, dof)| {
            let series = obs.iter().map(|v| num(*v)).collect::<Vec<_>>().join(" ");
            Row {
                cells: vec![
                    series.clone(),
                    num(h),
                    num(hw),
                    dist.to_string(),
                    num(k),
                    num(w),
                    num(uw),
                    num(dof),
                ],
                // A series replaces x's evaluation.
                x: format!(
                    "observations = [{}]",
                    obs.iter().map(|v| num(*v)).collect::<Vec<_>>().join(", ")
                ),
                // h: value, half-width and distribution: a whole evaluation.
                h: format!(
                    "value = {}\nhalf_width = {}\ndistribution = \"{dist}\"",
                    num(h),
                    num(hw)
                ),
                // k alone: only the estimate changes.
                k: format!(
                    "value = {}\nexpanded_uncertainty = 0.002\ncoverage_factor = 2",
                    num(k)
                ),
                // w with u and dof: a whole evaluation.
                w: format!(
                    "value = {}\nstandard_uncertainty = {}\ndof = {}",
                    num(w),
                    num(uw),
                    num(dof)
                ),
            }
        })
}

const HEADER: &str =
    "item,x.observations,h,h.half_width,h.distribution,k,w.value,w.standard_uncertainty,w.dof";

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, rng_seed: proptest::test_runner::RngSeed::Fixed(20), ..ProptestConfig::default() })]

    /// Each item's results equal `eval` of the model with the row written in.
    #[test]
    fn every_item_equals_eval_of_its_own_model(rows in prop::collection::vec(row(), 1..5)) {
        let dir = scratch("items-prop");
        let model = write(&dir, "m.toml", &model_text(BASE_X, BASE_H, BASE_K, BASE_W));
        let mut table = format!("{HEADER}\n");
        for (i, r) in rows.iter().enumerate() {
            table.push_str(&format!("it-{i},{}\n", r.cells.join(",")));
        }
        let table = write(&dir, "t.csv", &table);
        let (code, out, err) = incertus(&["eval", model.to_str().unwrap(), "--items", table.to_str().unwrap(), "--format", "json"]);
        prop_assert_eq!(code, 0, "{}", err);
        let v: serde_json::Value = serde_json::from_str(&out).unwrap();
        let items = v["items"].as_array().unwrap();
        prop_assert_eq!(items.len(), rows.len());
        for (i, r) in rows.iter().enumerate() {
            let own = write(&dir, &format!("own{i}.toml"), &model_text(&r.x, &r.h, &r.k, &r.w));
            let (code, one, err) = incertus(&["eval", own.to_str().unwrap(), "--format", "json"]);
            prop_assert_eq!(code, 0, "{}", err);
            let e: serde_json::Value = serde_json::from_str(&one).unwrap();
            prop_assert_eq!(&items[i]["item"], &serde_json::json!(format!("it-{i}")));
            prop_assert_eq!(&items[i]["results"], &e["results"], "row {}", i);
        }
        let _ = std::fs::remove_dir_all(&dir);
    }
}

/// y = x with u(x) = 0.1 (normal, infinite dof), tolerance [−1, 1], simple
/// acceptance. Items at 0, 0.9, −0.95 and 1.2: the first three are
/// accepted with specific consumer's risks P(|Y| > 1 | y) — for 0.9,
/// 1 − Φ(1) + Φ(−19); for −0.95, 1 − Φ(0.5) + Φ(−19.5) — and 1.2 is
/// rejected.
#[test]
fn the_summary_counts_and_expected_nonconforming_by_hand() {
    let dir = scratch("items-hand");
    let model = write(
        &dir,
        "m.toml",
        "[inputs.x]\nvalue = 0\nstandard_uncertainty = 0.1\n[[measurands]]\nname = \"y\"\nformula = \"x\"\n\
         [measurands.specification]\nlower = -1\nupper = 1\n",
    );
    let table = write(&dir, "t.csv", "item,x\na,0\nb,0.9\nc,-0.95\nd,1.2\n");
    let (code, out, err) = incertus(&[
        "eval",
        model.to_str().unwrap(),
        "--items",
        table.to_str().unwrap(),
        "--format",
        "json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let s = &v["summary"]["measurands"][0];
    assert_eq!(s["items"], 4);
    assert_eq!(s["accepted"], 3);
    assert_eq!(s["rejected"], 1);
    // Φ(1) = 0.841344746068543, Φ(0.5) = 0.691462461274013 (normal table);
    // Φ(−19), Φ(−19.5) and the risk of the item at 0 (2 Φ(−10)) are below
    // 1e-22 and vanish beside them.
    let by_hand = (1.0 - 0.841_344_746_068_543) + (1.0 - 0.691_462_461_274_013);
    let got = s["expected_nonconforming_among_accepted"].as_f64().unwrap();
    assert!((got - by_hand).abs() < 1e-12, "{got} vs {by_hand}");
    // And it is the sum of the accepted items' own risks.
    let sum: f64 = v["items"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|i| i["results"][0]["conformity"]["verdict"] == "accepted")
        .map(|i| {
            i["results"][0]["conformity"]["specific_risk"]
                .as_f64()
                .unwrap()
        })
        .sum();
    assert_eq!(got, sum);
    // Text: the table and the summary.
    let (code, text, _) = incertus(&[
        "eval",
        model.to_str().unwrap(),
        "--items",
        table.to_str().unwrap(),
    ]);
    assert_eq!(code, 0);
    assert!(text.contains("accepted 3, rejected 1"), "{text}");
    assert!(
        text.contains("expected nonconforming among the accepted: 0.467"),
        "{text}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn the_range_fits_agree_with_numpy_polyfit() {
    let f: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string("tests/fixtures/items_range.json").unwrap())
            .unwrap();
    let close =
        |a: f64, b: f64, scale: f64| (a - b).abs() <= 1e-9 * scale.max(a.abs()).max(b.abs());
    for (n, c) in f["cases"].as_array().unwrap().iter().enumerate() {
        let y: Vec<f64> = c["y"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let u: Vec<f64> = c["U"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let fits = incertus_cli::items::range_fits(&y, &u).unwrap();
        let umax = u.iter().cloned().fold(0.0, f64::max);
        let ymax = y.iter().map(|v| v.abs()).fold(0.0, f64::max);
        let (a, b) = (
            c["linear"]["a"].as_f64().unwrap(),
            c["linear"]["b"].as_f64().unwrap(),
        );
        assert!(
            close(fits[0].a, a, umax),
            "case {n}: a {} vs numpy {a}",
            fits[0].a
        );
        assert!(
            close(fits[0].b, b, umax / ymax),
            "case {n}: b {} vs numpy {b}",
            fits[0].b
        );
        let (a2, b2) = (
            c["quadrature_squares"]["a2"].as_f64().unwrap(),
            c["quadrature_squares"]["b2"].as_f64().unwrap(),
        );
        let q = &fits[1];
        if a2 >= 0.0 {
            assert!(
                close(q.a * q.a, a2, umax * umax),
                "case {n}: a² {} vs numpy {a2}",
                q.a * q.a
            );
        } else {
            assert_eq!(q.a, 0.0, "case {n}: a negative a² is taken as 0");
        }
        if b2 >= 0.0 {
            assert!(
                close(q.b * q.b, b2, umax * umax / (ymax * ymax)),
                "case {n}: b² {} vs numpy {b2}",
                q.b * q.b
            );
        }
        // The largest relative deviation is what it says.
        let worst = y
            .iter()
            .zip(&u)
            .map(|(v, uu)| ((fits[0].a + fits[0].b * v.abs()) - uu).abs() / uu)
            .fold(0.0, f64::max);
        assert!((fits[0].max_relative_deviation - worst).abs() <= 1e-12 * worst.max(1.0));
    }
}

/// Bad rows: located errors, exit 1, nothing written.
#[test]
fn bad_rows_are_located_and_nothing_is_written() {
    let dir = scratch("items-bad");
    let model = write(&dir, "m.toml", &model_text(BASE_X, BASE_H, BASE_K, BASE_W));
    let cases: &[(&str, &[&str])] = &[
        (
            "item,h\na,12\nb,twelve\n",
            &[
                "t.csv:3",
                "item b",
                "column `h`",
                "`twelve` is not a number",
            ],
        ),
        (
            "item,w.standard_uncertainty\na,0.01\nb,-0.02\n",
            &["t.csv:3", "item b", "w.standard_uncertainty", "positive"],
        ),
        (
            "item,x.observations\na,10.0\n",
            &[
                "t.csv:2",
                "item a",
                "x.observations",
                "at least two observations",
            ],
        ),
        (
            "item,h\na,12\nb,\n",
            &["t.csv:3", "item b", "column `h`", "empty"],
        ),
        ("item,hh\na,12\n", &["t.csv:1", "`hh`", "did you mean `h`"]),
        ("item,y\na,12\n", &["t.csv:1", "it is a measurand"]),
        (
            "item,h.colour\na,12\n",
            &["t.csv:1", "`colour` is not a key"],
        ),
        ("item,h\na,12\na,13\n", &["t.csv:3", "also on line 2"]),
        (
            "item,h\na,12,3\n",
            &["line 2", "3 cells where the header has 2"],
        ),
        ("item,h\na,inf\n", &["t.csv:2", "not a finite number"]),
        ("item,k\na,0\n", &[]),
        ("item,h\n", &["no items"]),
    ];
    for (i, (table, want)) in cases.iter().enumerate() {
        let t = write(&dir, "t.csv", table);
        let report = dir.join(format!("report{i}"));
        let (code, out, err) = incertus(&[
            "eval",
            model.to_str().unwrap(),
            "--items",
            t.to_str().unwrap(),
            "--report",
            report.to_str().unwrap(),
        ]);
        if want.is_empty() {
            // k = 0 is a valid estimate: y stays defined.
            assert_eq!(code, 0, "{table}: {err}");
            continue;
        }
        assert_eq!(code, 1, "{table}: {out}");
        for w in *want {
            assert!(err.contains(w), "{table}: missing {w:?} in {err}");
        }
        assert!(out.is_empty(), "{table}: printed {out}");
        assert!(!report.exists(), "{table}: a report was written");
        assert!(!err.contains("panicked"), "{err}");
    }
    // An evaluation that fails at one row's estimate names that row.
    let m = write(
        &dir,
        "log.toml",
        "[inputs.x]\nvalue = 1\nstandard_uncertainty = 0.1\n[[measurands]]\nname = \"y\"\nformula = \"ln(x)\"\n",
    );
    let t = write(&dir, "t.csv", "item,x\nA,2\nB,-1\nC,3\n");
    let (code, _, err) = incertus(&["eval", m.to_str().unwrap(), "--items", t.to_str().unwrap()]);
    assert_eq!(code, 1);
    assert!(err.contains("t.csv:3: item B"), "{err}");
    let _ = std::fs::remove_dir_all(&dir);
}

/// The example of the README: thermometers calibrated by comparison, the
/// text output, CSV, a report folder, and Monte Carlo per item with a
/// stream fixed by the seed and the row whatever the threads.
#[test]
fn the_thermometer_example_in_every_format() {
    let dir = scratch("items-example");
    let args = [
        "eval",
        "examples/items/thermometers.toml",
        "--items",
        "examples/items/thermometers.csv",
    ];
    let (code, text, err) = incertus(&args);
    assert_eq!(code, 0, "{err}");
    assert!(
        text.contains("T-105") && text.contains("rejected"),
        "{text}"
    );
    let mut a = args.to_vec();
    a.extend(["--format", "csv"]);
    let (code, csv, _) = incertus(&a);
    assert_eq!(code, 0);
    assert_eq!(csv.lines().count(), 7);
    assert!(csv.starts_with(
        "item,measurand,unit,estimate,standard_uncertainty,expanded_uncertainty,coverage_factor,"
    ));
    let rep = dir.join("rep");
    let mut a = args.to_vec();
    a.extend(["--report", rep.to_str().unwrap()]);
    let (code, _, err) = incertus(&a);
    assert_eq!(code, 0, "{err}");
    for f in [
        "report.html",
        "report.md",
        "items.csv",
        "result.json",
        "items_E.svg",
    ] {
        assert!(rep.join(f).exists(), "{f}");
    }
    let html = std::fs::read_to_string(rep.join("report.html")).unwrap();
    let opts = roxmltree::ParsingOptions {
        allow_dtd: true,
        ..Default::default()
    };
    if let Err(e) = roxmltree::Document::parse_with_options(&html, opts) {
        panic!("report.html is not well-formed XML: {e}");
    }
    assert!(html.contains("Record of the evaluation") && html.contains("thermometers.csv"));
    // Monte Carlo per item: the same with 1 and 2 threads.
    let run = |threads: &str| {
        let mut a = args.to_vec();
        a.extend(["--mc", "20000", "--threads", threads, "--format", "json"]);
        let (code, out, err) = incertus(&a);
        assert_eq!(code, 0, "{err}");
        let v: serde_json::Value = serde_json::from_str(&out).unwrap();
        v["items"].clone()
    };
    let one = run("1");
    assert_eq!(one, run("2"));
    let seeds: Vec<u64> = one
        .as_array()
        .unwrap()
        .iter()
        .map(|i| i["results"][0]["monte_carlo"]["seed"].as_u64().unwrap())
        .collect();
    let mut distinct = seeds.clone();
    distinct.sort();
    distinct.dedup();
    assert_eq!(distinct.len(), seeds.len(), "each item its own stream");
    let _ = std::fs::remove_dir_all(&dir);
}

/// Keys that describe an uncertainty another way than the model (an
/// expanded uncertainty with k where the model states u; a standard
/// uncertainty where it states limits) replace the model's description and
/// keep its estimate; an estimate column for an input the model gives as a
/// series is refused with the column to use.
#[test]
fn other_descriptions_of_an_uncertainty_keep_the_estimate() {
    let dir = scratch("items-other");
    let model = write(&dir, "m.toml", &model_text(BASE_X, BASE_H, BASE_K, BASE_W));
    let table = write(
        &dir,
        "t.csv",
        "item,x.expanded_uncertainty,x.coverage_factor,h.standard_uncertainty\nA,0.2,2,0.03\n",
    );
    let (code, out, err) = incertus(&[
        "eval",
        model.to_str().unwrap(),
        "--items",
        table.to_str().unwrap(),
        "--format",
        "json",
    ]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let own = write(
        &dir,
        "own.toml",
        &model_text(
            "value = 10.0\nexpanded_uncertainty = 0.2\ncoverage_factor = 2",
            "value = 12.0\nstandard_uncertainty = 0.03",
            BASE_K,
            BASE_W,
        ),
    );
    let (code, one, err) = incertus(&["eval", own.to_str().unwrap(), "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let e: serde_json::Value = serde_json::from_str(&one).unwrap();
    assert_eq!(v["items"][0]["results"], e["results"]);
    // A series in the model: its estimate is their mean, not a column.
    let series = write(
        &dir,
        "s.toml",
        &model_text("observations = [10.0, 10.1, 9.9]", BASE_H, BASE_K, BASE_W),
    );
    let table = write(&dir, "t2.csv", "item,x\nA,10.2\n");
    let (code, _, err) = incertus(&[
        "eval",
        series.to_str().unwrap(),
        "--items",
        table.to_str().unwrap(),
    ]);
    assert_eq!(code, 1);
    assert!(
        err.contains("t2.csv:2: item A, column `x`") && err.contains("x.observations"),
        "{err}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}
