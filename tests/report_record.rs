//! The record a report folder carries (ISO/IEC 17025:2017, 7.5.1): the
//! program, the command line, the date and time, every file read with its
//! SHA-256, the settings, and the names of who evaluated and checked (or a
//! blank for signing).

mod common;
use common::{incertus, scratch, write};

use incertus_cli::record::{sha256, utc};

#[test]
fn sha256_and_dates_agree_with_outside_references() {
    let dir = scratch("record_refs");
    // FIPS 180-2, appendix B.1: SHA-256("abc").
    let abc = write(&dir, "abc.txt", "abc");
    assert_eq!(
        sha256(&abc).unwrap(),
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    );
    // Dates from Python's datetime (UTC), leap days and a century included.
    for (s, d) in [
        (0, "1970-01-01T00:00:00Z"),
        (951_782_400, "2000-02-29T00:00:00Z"),
        (1_709_164_800, "2024-02-29T00:00:00Z"),
        (4_107_542_399, "2100-02-28T23:59:59Z"),
        (1_798_761_599, "2026-12-31T23:59:59Z"),
    ] {
        assert_eq!(utc(s), d, "{s}");
    }
}

#[test]
fn a_report_records_its_files_settings_and_people() {
    let dir = scratch("record_report").join("r");
    let (code, _, err) = incertus(&[
        "eval",
        "examples/models/calibration.toml",
        "--mc",
        "100000",
        "--report",
        dir.to_str().unwrap(),
        "--checked-by",
        "B. Checker",
    ]);
    assert_eq!(code, 0, "{err}");
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("result.json")).unwrap()).unwrap();
    let rec = &json["record"];
    assert!(rec["program"].as_str().unwrap().starts_with("incertus "));
    assert!(rec["command"]
        .as_str()
        .unwrap()
        .contains("--checked-by 'B. Checker'"));
    assert_eq!(rec["checked_by"], "B. Checker");
    assert!(rec["evaluated_by"].is_null());
    let files = rec["files"].as_array().unwrap();
    assert_eq!(files.len(), 2, "the model and its data file");
    // Each hash as coreutils' sha256sum gives it.
    for f in files {
        let path = f["path"].as_str().unwrap();
        let out = std::process::Command::new("sha256sum")
            .arg(path)
            .output()
            .unwrap();
        let expected = String::from_utf8_lossy(&out.stdout);
        assert_eq!(
            f["sha256"].as_str().unwrap(),
            expected.split_whitespace().next().unwrap()
        );
    }
    let settings: Vec<String> = rec["settings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| {
            format!(
                "{}={}",
                s["name"].as_str().unwrap(),
                s["value"].as_str().unwrap()
            )
        })
        .collect();
    for want in [
        "coverage probability p=0.95",
        "Monte Carlo trials=100000",
        "Monte Carlo seed=",
    ] {
        assert!(
            settings.iter().any(|s| s.starts_with(want)),
            "{want} in {settings:?}"
        );
    }
    let html = std::fs::read_to_string(dir.join("report.html")).unwrap();
    let md = std::fs::read_to_string(dir.join("report.md")).unwrap();
    for t in [&html, &md] {
        assert!(t.contains("Record of the evaluation"));
        assert!(t.contains("Checked by: B. Checker"));
        assert!(t.contains("Evaluated by: ____"), "a blank for signing");
    }
}

/// `results.csv`: one row per measurand that another program can read, the
/// numbers equal to `result.json`'s to the last bit.
#[test]
fn results_csv_has_one_row_per_measurand() {
    let dir = scratch("results_csv").join("r");
    let (code, _, err) = incertus(&[
        "eval",
        "examples/models/vessel.toml",
        "--report",
        dir.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let csv = std::fs::read_to_string(dir.join("results.csv")).unwrap();
    let mut lines = csv.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let row: Vec<&str> = lines.next().unwrap().split(',').collect();
    assert!(lines.next().is_none());
    assert_eq!(header.len(), row.len());
    let col = |name: &str| row[header.iter().position(|h| *h == name).unwrap()];
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("result.json")).unwrap()).unwrap();
    let r = &json["results"][0];
    assert_eq!(col("measurand"), "V");
    assert_eq!(col("unit"), "mm^3");
    for (c, j) in [
        ("estimate", &r["reported"]["value"]),
        (
            "standard_uncertainty",
            &r["reported"]["standard_uncertainty"],
        ),
        (
            "expanded_uncertainty",
            &r["reported"]["expanded_uncertainty"],
        ),
        ("coverage_factor", &r["coverage_factor"]),
    ] {
        assert_eq!(col(c).parse::<f64>().unwrap(), j.as_f64().unwrap(), "{c}");
    }
    assert_eq!(col("method"), "first order");
}
