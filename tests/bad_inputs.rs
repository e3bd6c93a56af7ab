//! The bad-input catalogue (`tests/bad_inputs/`, see its README): every
//! file through the binary, with a non-zero exit that is not the internal
//! error code, each expected message fragment, no panic, and no file of the
//! folder changed (input files are never opened for writing).

use std::collections::BTreeMap;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

fn snapshot(dir: &Path) -> BTreeMap<PathBuf, Vec<u8>> {
    std::fs::read_dir(dir)
        .expect("the catalogue folder")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.is_file())
        .map(|p| {
            let bytes = std::fs::read(&p).expect("readable");
            (p, bytes)
        })
        .collect()
}

#[test]
fn every_bad_input_gets_a_clear_error_and_changes_nothing() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad_inputs");
    let home = std::env::temp_dir().join(format!("incertus-bad-inputs-{}", std::process::id()));
    let before = snapshot(&dir);
    let mut cases = 0;
    let mut failures = Vec::new();
    for (path, bytes) in &before {
        let name = path.file_name().unwrap().to_string_lossy().to_string();
        let text = String::from_utf8_lossy(bytes).to_string();
        let expects: Vec<&str> = text
            .lines()
            .filter_map(|l| l.strip_prefix("# expect: "))
            .collect();
        let run = text
            .lines()
            .find_map(|l| l.strip_prefix("# run: "))
            .map(str::to_string);
        let mut stdin = None;
        let args: Vec<String> = if name.ends_with(".formula") {
            let formula: Vec<&str> = text.lines().filter(|l| !l.starts_with('#')).collect();
            vec!["derive".into(), formula.join("\n")]
        } else if name.ends_with(".shell") {
            stdin = Some(text.clone());
            vec!["shell".into()]
        } else if let Some(r) = &run {
            r.split_whitespace()
                .map(|a| a.replace("{}", &name))
                .collect()
        } else if name.ends_with(".toml") {
            vec!["eval".into(), name.clone()]
        } else {
            continue;
        };
        assert!(!expects.is_empty(), "{name} has no `# expect:` line");
        cases += 1;
        let mut child = Command::new(env!("CARGO_BIN_EXE_incertus"))
            .args(&args)
            .current_dir(&dir)
            .env("INCERTUS_HOME", &home)
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("the binary runs");
        let mut input = child.stdin.take().expect("stdin");
        if let Some(s) = &stdin {
            input
                .write_all(s.as_bytes())
                .expect("stdin takes the script");
        }
        drop(input);
        let out = child.wait_with_output().expect("the binary ends");
        let all = format!(
            "{}{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        );
        let code = out.status.code().unwrap_or(-1);
        if code == 0 || code == 70 || code == -1 {
            failures.push(format!("{name}: exit code {code}\n{all}"));
        }
        if all.contains("panicked") || all.contains("RUST_BACKTRACE") {
            failures.push(format!("{name}: panicked\n{all}"));
        }
        for e in &expects {
            if !all.contains(e) {
                failures.push(format!("{name}: missing {e:?} in\n{all}"));
            }
        }
    }
    let _ = std::fs::remove_dir_all(&home);
    assert!(cases >= 40, "only {cases} cases found");
    assert_eq!(
        snapshot(&dir),
        before,
        "a file of the catalogue changed: inputs must never be written"
    );
    assert!(failures.is_empty(), "{}", failures.join("\n\n"));
}
