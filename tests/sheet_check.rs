//! `check MODEL --budget FILE`: hand-made budgets checked where they live.
//!
//! Fixtures: tests/fixtures/make_budget_sheets.py writes them with openpyxl
//! (.xlsx), xlwt (.xls) and odfpy (.ods) from PyPI and the csv module, from a budget of
//! tests/fixtures/budgets/cylinder.toml computed there with sensitivity
//! coefficients derived on paper (an outside computation of the same
//! budget), one correct sheet per format and one sheet per typical slip;
//! slips.json names the cell of each slip. EA-4/02 M:2013 S2 (its budget
//! recalled from memory) is typed as a sheet and must pass.

mod common;
use common::*;

const MODEL: &str = "tests/fixtures/budgets/cylinder.toml";

fn check(budget: &str, extra: &[&str]) -> (i32, String, String) {
    let mut args = vec!["check", MODEL, "--budget", budget];
    args.extend(extra);
    incertus(&args)
}

#[test]
fn a_correct_budget_passes_in_every_format() {
    for f in [
        "correct.xlsx",
        "correct.ods",
        "correct.csv",
        "intermediate.csv",
    ] {
        let (code, out, err) = check(&format!("tests/fixtures/budgets/{f}"), &[]);
        assert_eq!(code, 0, "{f}: {out}{err}");
        assert!(out.contains(" 0 disagree"), "{f}: {out}");
        assert!(!out.contains("DISAGREES"), "{f}: {out}");
    }
    // Cells are named as the program names them.
    let (_, out, _) = check("tests/fixtures/budgets/correct.xlsx", &[]);
    assert!(
        out.contains("Budget!C4") && out.contains("header row 3"),
        "{out}"
    );
    let (_, out, _) = check("tests/fixtures/budgets/correct.csv", &[]);
    assert!(out.contains("line 4, column 3"), "{out}");
    // k = 2 with a large ν_eff: accepted with the EA-4/02 note.
    assert!(out.contains("EA-4/02 convention"), "{out}");
}

#[test]
fn every_typical_slip_is_found_in_its_cell() {
    let slips: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string("tests/fixtures/budgets/slips.json").unwrap(),
    )
    .unwrap();
    for (slip, words) in [
        ("u_is_U", "expanded uncertainty U = 0.004 taken as u"),
        ("half_width", "half-width a = 0.002 taken as u"),
        ("sign", "the sign"),
        ("factor_2", "a factor 2 missing"),
        ("intermediate", "a factor 2 missing"),
        ("formula_without_value", "a formula without a stored value"),
    ] {
        let file = if slip == "formula_without_value" {
            "tests/fixtures/budgets/formula_without_value.xlsx".to_string()
        } else {
            format!("tests/fixtures/budgets/slip_{slip}.xlsx")
        };
        let cell = slips["cells"][slip].as_str().unwrap();
        let (code, out, err) = check(&file, &[]);
        assert_eq!(code, 1, "{slip}: {out}{err}");
        let line = out
            .lines()
            .position(|l| l.starts_with("DISAGREES") && l.contains(&format!("{cell} ")))
            .unwrap_or_else(|| panic!("{slip}: no disagreement at {cell} in\n{out}"));
        let next: String = out
            .lines()
            .skip(line)
            .take(3)
            .collect::<Vec<_>>()
            .join("\n");
        assert!(
            next.contains(words),
            "{slip}: {words:?} missing near\n{next}"
        );
        // The first disagreement is the slip's own cell.
        let first = out.lines().find(|l| l.starts_with("DISAGREES")).unwrap();
        assert!(first.contains(cell), "{slip}: first disagreement {first}");
        // JSON: every line with its cell.
        let (code, json, _) = check(&file, &["--format", "json"]);
        assert_eq!(code, 1);
        let v: serde_json::Value = serde_json::from_str(&json).unwrap();
        assert!(v["lines"]
            .as_array()
            .unwrap()
            .iter()
            .any(|l| l["cell"] == cell && l["agrees"] == false));
    }
}

#[test]
fn the_published_ea402_s2_budget_passes() {
    let (code, out, err) = incertus(&[
        "check",
        "tests/models/ea402_s2_weight.toml",
        "--budget",
        "tests/fixtures/budgets/ea402_s2.xlsx",
    ]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(out.contains("contribution of m_S to u(m_X)"), "{out}");
    // Its uncertainties in mg (the column titles say so), the model in g.
    assert!(out.contains("stated in mg, compared in g"), "{out}");
}

#[test]
fn sheets_that_cannot_be_read_or_understood_exit_2() {
    let dir = scratch("sheet-bad");
    let no_header = write(&dir, "no_header.csv", "a,b,c\n1,2,3\n");
    let not_a_sheet = write(&dir, "x.xlsx", "this is not a workbook");
    let other = write(&dir, "budget.txt2", "");
    for (f, want) in [
        (no_header.to_str().unwrap(), "no header row"),
        (not_a_sheet.to_str().unwrap(), "cannot read the workbook"),
        (other.to_str().unwrap(), "not a budget file"),
        ("tests/fixtures/budgets/missing.xlsx", "missing.xlsx"),
    ] {
        let (code, _, err) = check(f, &[]);
        assert_eq!(code, 2, "{f}: {err}");
        assert!(err.contains(want), "{f}: {err}");
        assert!(!err.contains("panicked"));
    }
    let (code, _, err) = check("tests/fixtures/budgets/correct.xlsx", &["--sheet", "Other"]);
    assert_eq!(code, 2);
    assert!(
        err.contains("no sheet `Other`") && err.contains("Budget"),
        "{err}"
    );
    // Other titles mapped with --columns.
    let german = write(
        &dir,
        "de.csv",
        "Größe,Schätzwert,Standardunsicherheit,Beitrag\nm,25.132,0.002,0.00008838\nr,1.2003,0.0005,0.0009252\nh,5.0,0.001155,0.0002565\n",
    );
    let (code, out, err) = check(
        german.to_str().unwrap(),
        &[
            "--columns",
            "Größe=quantity,Schätzwert=estimate,Standardunsicherheit=standard uncertainty,Beitrag=contribution",
        ],
    );
    assert_eq!(code, 0, "{out}{err}");
    let _ = std::fs::remove_dir_all(&dir);
}

/// An intermediate quantity correlated with another line of the budget
/// (y = A·r with A = π r²: A and r are fully correlated) is named, and
/// `eval --in-terms-of` shows the budget in terms of A with the note.
#[test]
fn intermediate_quantities_and_their_correlations() {
    let dir = scratch("sheet-corr");
    let model = write(
        &dir,
        "m.toml",
        "[inputs.r]\nvalue = 2.0\nstandard_uncertainty = 0.01\n\
         [[measurands]]\nname = \"A\"\nformula = \"pi*r^2\"\n\
         [[measurands]]\nname = \"y\"\nformula = \"A*r\"\n",
    );
    let (code, out, err) = incertus(&["eval", model.to_str().unwrap(), "--in-terms-of", "A"]);
    assert_eq!(code, 0, "{err}");
    assert!(
        out.contains("uncertainty budget of y in terms of y = A*r"),
        "{out}"
    );
    assert!(out.contains("A (intermediate)"), "{out}");
    assert!(out.contains("`A` and `r` are correlated (r = 1)"), "{out}");
    // c_A = r = 2, u(A) = 2πr u(r) = 0.12566: contribution 0.25133.
    assert!(out.contains("0.12566") && out.contains("0.25133"), "{out}");
    let sheet = write(
        &dir,
        "b.csv",
        "quantity,standard uncertainty,sensitivity coefficient,contribution\nA,0.12566,2,0.25133\nr,0.01,12.566,0.12566\n,combined standard uncertainty,0.37699\n",
    );
    let (code, out, err) = incertus(&[
        "check",
        model.to_str().unwrap(),
        "--budget",
        sheet.to_str().unwrap(),
    ]);
    // u_c stated as the correlated sum (0.25133 + 0.12566), which is right
    // for r = 1; the note names the correlation.
    assert_eq!(code, 0, "{out}{err}");
    assert!(out.contains("`A` and `r` are correlated"), "{out}");
    let (code, _, err) = incertus(&["eval", model.to_str().unwrap(), "--in-terms-of", "B"]);
    assert_eq!(code, 1);
    assert!(err.contains("no measurand `B`"), "{err}");
    let _ = std::fs::remove_dir_all(&dir);
}

/// A summary label in the quantity column is a summary row even when a
/// word of it names an input (`coverage factor k` with an input `k`); the
/// input's own row, named exactly, is a budget line.
#[test]
fn labels_and_inputs_with_short_names() {
    let dir = scratch("sheet-labels");
    let model = write(
        &dir,
        "m.toml",
        "[inputs.k]\nvalue = 2.0\nstandard_uncertainty = 0.01\n\
         [inputs.x]\nvalue = 3.0\nstandard_uncertainty = 0.02\n\
         [[measurands]]\nname = \"y\"\nformula = \"k*x\"\n",
    );
    // u(y) = sqrt((3·0.01)² + (2·0.02)²) = 0.05; k for p = 95 % is 1.96.
    let sheet = write(
        &dir,
        "b.csv",
        "quantity,standard uncertainty,sensitivity coefficient,contribution\n\
         k,0.01,3,0.03\nx,0.02,2,0.04\ncombined standard uncertainty u,0.05\ncoverage factor k,2\nexpanded uncertainty U,0.1\n",
    );
    let (code, out, err) = incertus(&[
        "check",
        model.to_str().unwrap(),
        "--budget",
        sheet.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(out.contains("c(k): stated 3"), "{out}");
    assert!(out.contains("k: stated 2, computed 1.959964"), "{out}");
    assert!(out.contains("u_c(y): stated 0.05"), "{out}");
    // A CSV cell is named by its line in the file, also after a quoted
    // cell that spans two lines.
    let sheet = write(
        &dir,
        "ml.csv",
        "quantity,standard uncertainty,contribution\n\"k\nthe factor\",0.01,0.03\nx,0.02,0.05\n",
    );
    let (code, out, _) = incertus(&[
        "check",
        model.to_str().unwrap(),
        "--budget",
        sheet.to_str().unwrap(),
    ]);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("DISAGREES line 4, column 3"), "{out}");
    let _ = std::fs::remove_dir_all(&dir);
}
