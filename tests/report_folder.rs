//! A report folder is one unit: written under a temporary name and put in
//! place by rename, checked before any computing, never holding a file the
//! evaluation reads, never mixing two evaluations, and never in the way of
//! machine-readable standard output.

mod common;
use common::{incertus, scratch, write};

const MODEL: &str = "title = \"plate\"\n[inputs.a]\nvalue = 2.0\nstandard_uncertainty = 0.1\n\
                     [[measurands]]\nname = \"A\"\nformula = \"a^2\"\n";

fn names(dir: &std::path::Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

#[test]
fn machine_readable_output_stays_machine_readable() {
    let dir = scratch("rf_json");
    let model = write(&dir, "m.toml", MODEL);
    for (format, check) in [("json", true), ("csv", false)] {
        let report = dir.join(format!("r_{format}"));
        let (code, out, err) = incertus(&[
            "eval",
            model.to_str().unwrap(),
            "--format",
            format,
            "--report",
            report.to_str().unwrap(),
        ]);
        assert_eq!(code, 0, "{err}");
        assert!(!out.contains("report written"), "{out}");
        assert!(err.contains("report written to"), "{err}");
        if check {
            serde_json::from_str::<serde_json::Value>(&out).expect("stdout is JSON");
        }
    }
}

#[test]
fn force_never_replaces_what_the_evaluation_reads() {
    let dir = scratch("rf_inputs");
    // A model whose own file lives in the folder and is named like a report.
    let folder = dir.join("out");
    std::fs::create_dir_all(&folder).unwrap();
    let model = write(&folder, "report.md", MODEL);
    let before = std::fs::read(&model).unwrap();
    let (code, _, err) = incertus(&[
        "eval",
        model.to_str().unwrap(),
        "--report",
        folder.to_str().unwrap(),
        "--force",
    ]);
    assert_ne!(code, 0);
    assert!(err.contains("which this evaluation reads"), "{err}");
    assert_eq!(std::fs::read(&model).unwrap(), before);
    // A fit's data file named budget.csv in the folder.
    let data = dir.join("data");
    std::fs::create_dir_all(&data).unwrap();
    write(&data, "budget.csv", "x,y\n1,2.1\n2,3.9\n3,6.2\n4,7.8\n");
    let fitted = write(
        &dir,
        "fitted.toml",
        "[fits.line]\ndata = \"data/budget.csv\"\nx = \"x\"\ny = \"y\"\n\
         [inputs.b]\nfit = \"line\"\nparameter = \"slope\"\n\
         [[measurands]]\nname = \"s\"\nformula = \"2*b\"\n",
    );
    let before = std::fs::read(data.join("budget.csv")).unwrap();
    let (code, _, err) = incertus(&[
        "eval",
        fitted.to_str().unwrap(),
        "--report",
        data.to_str().unwrap(),
        "--force",
    ]);
    assert_ne!(code, 0);
    assert!(err.contains("which this evaluation reads"), "{err}");
    assert_eq!(std::fs::read(data.join("budget.csv")).unwrap(), before);
    // A file that is not the program's own.
    let other = dir.join("other");
    std::fs::create_dir_all(&other).unwrap();
    write(&other, "notes.txt", "mine");
    let model = write(&dir, "m.toml", MODEL);
    let (code, _, err) = incertus(&[
        "eval",
        model.to_str().unwrap(),
        "--report",
        other.to_str().unwrap(),
        "--force",
    ]);
    assert_ne!(code, 0);
    assert!(err.contains("not a file of an incertus report"), "{err}");
    assert_eq!(names(&other), vec!["notes.txt"]);
}

#[test]
fn the_folder_is_checked_before_any_computing() {
    let dir = scratch("rf_before");
    let folder = dir.join("taken");
    std::fs::create_dir_all(&folder).unwrap();
    write(&folder, "x.txt", "taken");
    // This model cannot be evaluated; the folder is refused first.
    let model = write(
        &dir,
        "bad.toml",
        "[inputs.a]\nvalue = -1.0\nstandard_uncertainty = 0.1\n\
         [[measurands]]\nname = \"y\"\nformula = \"ln(a)\"\n",
    );
    let (code, _, err) = incertus(&[
        "eval",
        model.to_str().unwrap(),
        "--report",
        folder.to_str().unwrap(),
    ]);
    assert_ne!(code, 0);
    assert!(err.contains("exists and is not empty"), "{err}");
    assert!(!err.contains("logarithm"), "{err}");
}

#[test]
fn a_replaced_report_keeps_nothing_of_the_earlier_one() {
    let dir = scratch("rf_replace");
    let model = write(&dir, "m.toml", MODEL);
    let folder = dir.join("report");
    let run = |extra: &[&str]| {
        let mut args = vec![
            "eval",
            model.to_str().unwrap(),
            "--report",
            folder.to_str().unwrap(),
        ];
        args.extend_from_slice(extra);
        incertus(&args)
    };
    assert_eq!(run(&[]).0, 0);
    // An earlier run's plot that this run will not draw, and the leftovers
    // of a killed run: a temporary file inside, a temporary folder beside
    // (of a process that no longer exists).
    write(&folder, "monte_carlo_A.svg", "<svg/>");
    write(&folder, ".report.html.tmp-999999", "half");
    let stale = dir.join(".report.incertus-new-999999");
    std::fs::create_dir_all(&stale).unwrap();
    write(&stale, "report.html", "half");
    let (code, _, err) = run(&["--force"]);
    assert_eq!(code, 0, "{err}");
    let now = names(&folder);
    assert!(
        !now.iter()
            .any(|n| n.starts_with('.') || n == "monte_carlo_A.svg"),
        "{now:?}"
    );
    assert!(now.contains(&"report.html".to_string()), "{now:?}");
    assert!(!stale.exists(), "the killed run's folder is cleaned");
    // Nothing of the program's is left beside the folder.
    let beside: Vec<String> = names(&dir)
        .into_iter()
        .filter(|n| n.contains("incertus-"))
        .collect();
    assert!(beside.is_empty(), "{beside:?}");
}
