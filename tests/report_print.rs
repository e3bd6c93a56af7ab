//! The HTML report printed as a laboratory files it: in Debian's chromium,
//! with print media at the width of an A4 page nothing may be wider than the
//! page, and the PDF printed at A4 and at US Letter must hold every figure
//! of the budget of `result.json`, read back from the PDF's text as a
//! person reads it (a number with its printed digits, `1.1547 × 10⁻⁶`
//! included), with the record and the signing block.
//!
//! Needs chromium and pdftotext (poppler-utils); `.ci/run` installs both
//! and runs `cargo test --release --test report_print -- --ignored`. Asked
//! for without them, the tests fail (never a silent skip).
//!
//! Page sizes: A4 is 210 mm × 297 mm (ISO 216), US Letter 8.5 in × 11 in
//! (ANSI/ASME Y14.1); 1 CSS px = 1/96 in (CSS Values and Units, level 3).

mod common;
use common::*;
use std::path::{Path, PathBuf};
use std::process::Command;

fn read(p: &Path) -> String {
    std::fs::read_to_string(p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

fn tool(names: &[&str], what: &str) -> String {
    names
        .iter()
        .find(|p| Path::new(p).exists())
        .unwrap_or_else(|| panic!("{what} is installed (.ci/run installs it)"))
        .to_string()
}

fn chromium() -> String {
    tool(
        &["/usr/bin/chromium", "/usr/bin/chromium-browser"],
        "Debian's chromium",
    )
}

fn chromium_run(profile: &Path, args: &[&str]) -> std::process::Output {
    let mut all = vec![
        "--headless".to_string(),
        "--no-sandbox".into(),
        "--disable-gpu".into(),
        "--disable-quic".into(),
        "--no-first-run".into(),
        "--disable-background-networking".into(),
        "--disable-component-update".into(),
        "--disable-sync".into(),
        format!("--user-data-dir={}", profile.display()),
    ];
    all.extend(args.iter().map(|s| s.to_string()));
    Command::new(chromium())
        .args(&all)
        .output()
        .expect("chromium runs")
}

/// A model that stresses the layout: long names, long words, a long unit,
/// a fit with long column names, many inputs, correlations, a Type A
/// series and a specification (invented data).
const WIDE: &str = r#"
title = "A model written to stress the layout of the printed record"
description = "Averylongwordwithoutanyspacesthatabrowsermustbreaksomewheretokeepthepagewidth and ordinary words after it."
[fits.line_with_a_long_name]
x = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0]
y = [2.01, 3.98, 6.03, 7.99, 10.02, 11.97]
x_unit = "kg m^-3"
y_unit = "mV"
[inputs.temperature_of_the_reference_standard_during_the_second_reading]
description = "read from a thermometer whose calibration certificate number is CERT-2026-000000000000000123456789"
unit = "degC"
observations = [20.011, 20.013, 20.009, 20.012, 20.010, 20.014]
source = "https://example.invalid/a/very/long/path/without/any/spaces/to/a/certificate/document.pdf"
[inputs.b]
fit = "line_with_a_long_name"
parameter = "slope"
[inputs.a]
fit = "line_with_a_long_name"
parameter = "intercept"
[inputs.k_1]
value = 1.000012345
standard_uncertainty = 0.0000023
[inputs.k_2]
value = 0.99998
half_width = 0.00004
distribution = "rectangular"
[inputs.k_3]
value = 1.0
expanded_uncertainty = 0.0002
coverage_factor = 2
[inputs.k_4]
value = 12.5
standard_uncertainty = 0.01
unit = "kg m^-3"
[inputs.alpha]
value = 0.0002
unit = "1/K"
[inputs.T0]
value = 20
unit = "degC"
[[correlations]]
inputs = ["k_1", "k_2"]
coefficient = -0.6
[[measurands]]
name = "result_with_a_rather_long_measurand_name"
unit = "kg m^-3"
formula = "(k_4*b + a)/b * k_1*k_2*k_3 * (1 + alpha*(temperature_of_the_reference_standard_during_the_second_reading - T0))"
[measurands.specification]
lower = 12.0
upper = 13.0
rule = "guarded acceptance"
guard_multiple = 1.0
"#;

/// Many measurands (a wide correlation matrix, printed in blocks of
/// columns) and a polynomial fit of degree 5 (wide covariance matrices),
/// invented data.
fn many() -> String {
    let mut s = String::from(
        "title = \"Many measurands\"\n[fits.p]\nx = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9]\n\
         y = [1.02, 2.71, 7.43, 20.1, 54.5, 148.6, 403.1, 1096.9, 2981.2, 8103.5]\ndegree = 5\n\
         [inputs.c0]\nfit = \"p\"\nparameter = \"c0\"\n[inputs.c5]\nfit = \"p\"\nparameter = \"c5\"\n\
         [inputs.q]\nvalue = 3.0\nstandard_uncertainty = 0.01\n",
    );
    for i in 0..24 {
        s.push_str(&format!(
            "[[measurands]]\nname = \"m{i}\"\nformula = \"c0 + c5*q^{} + {i}*q\"\n",
            i % 4 + 1
        ));
    }
    s
}

/// The report folders the tests print: the demonstration record (a fit
/// from a data file, Type A, Type B with sources, a correlation, Monte
/// Carlo, a specification), the layout stress model and many measurands.
fn reports(name: &str) -> Vec<PathBuf> {
    let dir = scratch(name);
    let wide = write(&dir, "wide.toml", WIDE);
    let many = write(&dir, "many.toml", &many());
    let mut out = Vec::new();
    for (i, model) in [
        "examples/models/sample_record.toml",
        wide.to_str().unwrap(),
        many.to_str().unwrap(),
    ]
    .iter()
    .enumerate()
    {
        let rep = dir.join(format!("report{i}"));
        let (code, _, err) = incertus(&[
            "eval",
            model,
            "--mc",
            "100000",
            "--report",
            rep.to_str().unwrap(),
            "--evaluated-by",
            "A. Analyst",
        ]);
        assert_eq!(code, 0, "{model}: {err}");
        out.push(rep);
    }
    out
}

/// Print media applied on screen at the width left by the page margins:
/// the report's `@media print` rules made unconditional, and a script that
/// writes into the title every element whose box reaches past the width,
/// and every text of a plot that reaches outside its plot (cut off).
fn overflow_probe(html: &str) -> String {
    html.replace("@media print {", "@media all {").replace(
        "</body>",
        "<script>window.addEventListener('load', function () {\
           var w = document.documentElement.clientWidth; var bad = [];\
           var all = document.body.querySelectorAll('*');\
           for (var i = 0; i < all.length; i++) { var r = all[i].getBoundingClientRect();\
             if (r.width > 0 && (r.right > w + 0.5 || r.left < -0.5)) { bad.push(all[i].tagName + '[' + (all[i].textContent || '').slice(0, 40) + ']:' + Math.round(r.left) + '..' + Math.round(r.right)); } }\
           var texts = document.querySelectorAll('svg text');\
           for (var j = 0; j < texts.length; j++) { var t = texts[j].getBoundingClientRect(); var o = texts[j].ownerSVGElement.getBoundingClientRect();\
             if (t.width > 0 && (t.left < o.left - 1 || t.right > o.right + 1 || t.top < o.top - 1 || t.bottom > o.bottom + 1)) { bad.push('cut-off text[' + texts[j].textContent.slice(0, 40) + ']'); } }\
           if (document.documentElement.scrollWidth > w + 0.5) bad.push('page:' + document.documentElement.scrollWidth);\
           document.title = 'width=' + w + ' overflow=' + bad.length + ' ' + bad.slice(0, 8).join(' ');\
         });</script></body>",
    )
}

#[test]
#[ignore = "needs chromium: cargo test --release --test report_print -- --ignored"]
fn nothing_is_wider_than_an_a4_or_letter_page() {
    // Content widths: A4 210 mm and Letter 215.9 mm less the report's
    // margins of 2 × 12 mm, at 96 px per inch.
    let px = |mm: f64| (mm / 25.4 * 96.0).floor() as u32;
    // The report folders of eval, of a fit on its own, of a table of items
    // and of the demonstration.
    let mut folders = reports("print-width");
    let extra = scratch("print-width-more");
    let fit = extra.join("fit");
    let (code, _, err) = incertus(&[
        "fit",
        "examples/models/calibration.csv",
        "--x",
        "conc",
        "--y",
        "signal",
        "--x-unit",
        "mg/L",
        "--exclude",
        "10",
        "--exclude-reason",
        "cuvette not rinsed",
        "--report",
        fit.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    folders.push(fit);
    let items = extra.join("items");
    let (code, _, err) = incertus(&[
        "eval",
        "examples/items/thermometers.toml",
        "--items",
        "examples/items/thermometers.csv",
        "--report",
        items.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    folders.push(items);
    let demo = extra.join("demo");
    let (code, _, err) = incertus(&["demo", "--out", demo.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    folders.push(demo);
    for dir in folders {
        let html = read(&dir.join("report.html"));
        let probe = dir.join("probe.html");
        std::fs::write(&probe, overflow_probe(&html)).unwrap();
        for (paper, width) in [("A4", px(210.0 - 24.0)), ("Letter", px(215.9 - 24.0))] {
            let out = chromium_run(
                &dir.join("profile"),
                &[
                    &format!("--window-size={width},1000"),
                    "--hide-scrollbars",
                    "--virtual-time-budget=5000",
                    "--dump-dom",
                    &format!("file://{}", probe.display()),
                ],
            );
            let dom = String::from_utf8_lossy(&out.stdout);
            let title = dom
                .find("<title>width=")
                .and_then(|a| {
                    dom[a..]
                        .find("</title>")
                        .map(|b| dom[a..a + b].replace('\n', " "))
                })
                .unwrap_or_else(|| {
                    panic!(
                        "{paper}: the probe ran; stderr {}",
                        String::from_utf8_lossy(&out.stderr)
                    )
                });
            assert!(
                title.contains(" overflow=0 "),
                "{}: {paper}: wider than the page: {title}",
                dir.display()
            );
        }
    }
}

/// The numbers printed in a text, read as a person reads them: a decimal
/// with an optional sign and an optional `× 10ⁿ` (superscript exponent).
fn printed_numbers(text: &str) -> Vec<f64> {
    let sup = |c: char| "⁰¹²³⁴⁵⁶⁷⁸⁹".chars().position(|s| s == c);
    let chars: Vec<char> = text.chars().collect();
    let mut out = Vec::new();
    let mut i = 0;
    while i < chars.len() {
        let start_sign = matches!(chars[i], '-' | '−' | '+')
            && chars.get(i + 1).is_some_and(|c| c.is_ascii_digit());
        if !(chars[i].is_ascii_digit() || start_sign)
            || (i > 0 && (chars[i - 1].is_ascii_alphanumeric() || chars[i - 1] == '.'))
        {
            i += 1;
            continue;
        }
        let mut s = String::new();
        if start_sign {
            s.push(if chars[i] == '+' { '+' } else { '-' });
            i += 1;
        }
        while i < chars.len() && (chars[i].is_ascii_digit() || chars[i] == '.') {
            s.push(chars[i]);
            i += 1;
        }
        let mut v: f64 = match s.trim_end_matches('.').parse() {
            Ok(v) => v,
            Err(_) => continue,
        };
        // " × 10⁻⁶"
        let rest: String = chars[i..chars.len().min(i + 12)].iter().collect();
        if let Some(after) = rest.strip_prefix(" × 10") {
            let mut e = 0i32;
            let mut neg = false;
            let mut used = 5;
            for c in after.chars() {
                if c == '⁻' && e == 0 && !neg {
                    neg = true;
                } else if let Some(d) = sup(c) {
                    e = e * 10 + d as i32;
                } else {
                    break;
                }
                used += 1;
            }
            if used > 5 {
                v *= 10f64.powi(if neg { -e } else { e });
                i += used;
            }
        }
        out.push(v);
    }
    out
}

/// Whether `v` is printed among `numbers` to `digits` significant digits
/// (half a unit of the last digit, the rounding of the printed figure).
fn printed(numbers: &[f64], v: f64, digits: i32) -> bool {
    if v == 0.0 {
        return numbers.contains(&0.0);
    }
    let half = 0.5 * 10f64.powi(v.abs().log10().floor() as i32 - digits + 1) * 1.000001;
    numbers.iter().any(|n| (n - v).abs() <= half)
}

fn print_pdf(dir: &Path, paper: &str) -> String {
    let html = read(&dir.join("report.html"));
    let copy = dir.join(format!("print-{paper}.html"));
    let size = if paper == "A4" { "A4" } else { "letter" };
    std::fs::write(
        &copy,
        html.replace("</style>", &format!("@page {{ size: {size}; }}\n</style>")),
    )
    .unwrap();
    let pdf = dir.join(format!("report-{paper}.pdf"));
    let out = chromium_run(
        &dir.join("profile"),
        &[
            "--no-pdf-header-footer",
            &format!("--print-to-pdf={}", pdf.display()),
            &format!("file://{}", copy.display()),
        ],
    );
    assert!(
        pdf.exists(),
        "{paper}: no PDF: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let info = Command::new(tool(&["/usr/bin/pdfinfo"], "pdfinfo (poppler-utils)"))
        .arg(&pdf)
        .output()
        .expect("pdfinfo runs");
    let info = String::from_utf8_lossy(&info.stdout).to_string();
    let want = if paper == "A4" { "(A4)" } else { "(letter)" };
    assert!(info.contains(want), "{paper}: {info}");
    let text = Command::new(tool(&["/usr/bin/pdftotext"], "pdftotext (poppler-utils)"))
        .args([pdf.to_str().unwrap(), "-"])
        .output()
        .expect("pdftotext runs");
    String::from_utf8_lossy(&text.stdout).to_string()
}

#[test]
#[ignore = "needs chromium and pdftotext: cargo test --release --test report_print -- --ignored"]
fn the_printed_record_holds_every_budget_figure() {
    for dir in reports("print-pdf") {
        let v: serde_json::Value = serde_json::from_str(&read(&dir.join("result.json"))).unwrap();
        for paper in ["A4", "Letter"] {
            let text = print_pdf(&dir, paper);
            let flat: String = text.split_whitespace().collect::<Vec<_>>().join(" ");
            let numbers = printed_numbers(&flat);
            let at = format!("{} ({paper})", dir.display());
            for r in v["results"].as_array().unwrap() {
                let name = r["name"].as_str().unwrap();
                // The budget as printed: estimate 8 digits, u, c_i and
                // u_i(y) 5 digits, the share in percent to 4.
                for b in r["budget"].as_array().unwrap() {
                    let input = b["input"].as_str().unwrap();
                    for (key, digits, scale) in [
                        ("value", 8, 1.0),
                        ("standard_uncertainty", 5, 1.0),
                        ("sensitivity", 5, 1.0),
                        ("contribution", 5, 1.0),
                        ("share", 4, 100.0),
                    ] {
                        let x = b[key].as_f64().unwrap() * scale;
                        assert!(
                            printed(&numbers, x, digits),
                            "{at}: {key} of {input} in the budget of {name} ({x}) is not in the PDF"
                        );
                    }
                }
                for c in r["correlation_budget"].as_array().unwrap() {
                    for (key, digits, scale) in [
                        ("coefficient", 4, 1.0),
                        ("term", 5, 1.0),
                        ("share", 4, 100.0),
                    ] {
                        let x = c[key].as_f64().unwrap() * scale;
                        assert!(
                            printed(&numbers, x, digits),
                            "{at}: correlation {key} {x} of {name}"
                        );
                    }
                }
                for (key, digits) in [
                    ("standard_uncertainty", 5),
                    ("expanded_uncertainty", 5),
                    ("coverage_factor", 4),
                ] {
                    let x = r[key].as_f64().unwrap();
                    assert!(printed(&numbers, x, digits), "{at}: {key} of {name} ({x})");
                }
                let rep = &r["reported"];
                for (key, digits) in [
                    ("value", 10),
                    ("standard_uncertainty", 5),
                    ("expanded_uncertainty", 5),
                ] {
                    let x = rep[key].as_f64().unwrap();
                    assert!(
                        printed(&numbers, x, digits),
                        "{at}: reported {key} of {name} ({x})"
                    );
                }
                if let Some(s) = r["conformity"]["statement"].as_str() {
                    let words: String = s.split_whitespace().take(12).collect::<Vec<_>>().join(" ");
                    assert!(flat.contains(&words), "{at}: the conformity statement");
                }
            }
            // The record: the files with their hashes (the hash may wrap),
            // the command, the names and the blank line for signing.
            let squeezed: String = text.split_whitespace().collect();
            for f in v["record"]["files"].as_array().unwrap() {
                let h = f["sha256"].as_str().unwrap();
                assert!(squeezed.contains(h), "{at}: SHA-256 {h}");
            }
            for fragment in [
                "Record of the evaluation",
                "Evaluated by: A. Analyst",
                "Checked by: ____",
                "Inputs",
                "Uncertainty budget of",
            ] {
                assert!(flat.contains(fragment), "{at}: {fragment:?}");
            }
            // Names and sources: every word present (a cell that wraps is
            // read line by line across its row, so phrases are not kept).
            let words: std::collections::HashSet<&str> = text.split_whitespace().collect();
            for i in v["record"]["inputs"].as_array().unwrap() {
                let name = i["name"].as_str().unwrap();
                assert!(
                    squeezed.contains(name) || words.contains(name),
                    "{at}: input {name}"
                );
                if let Some(src) = i["source"].as_str() {
                    // A browser may break a line after a hyphen.
                    for w in src.split_whitespace().flat_map(|w| w.split_inclusive('-')) {
                        assert!(
                            words.contains(w) || squeezed.contains(w),
                            "{at}: {w:?} of the source of {name}"
                        );
                    }
                }
            }
        }
    }
}

#[test]
fn numbers_are_read_back_as_printed() {
    let n =
        printed_numbers("u = 1.1547 × 10⁻⁶ mm, c = -135.87, share 47.22 %, 2.8306 × 10⁶; x1 = 3");
    assert_eq!(n, vec![1.1547e-6, -135.87, 47.22, 2.8306e6, 3.0]);
    assert!(printed(&n, 1.154_700_5e-6, 5));
    assert!(!printed(&n, 1.1549e-6, 5));
}
