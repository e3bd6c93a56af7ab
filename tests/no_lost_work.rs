//! No lost work: the program writes files only through
//! `crates/cli/src/atomic.rs` (temporary name, then rename), and no other
//! source file opens anything for writing, so input files cannot be
//! changed. A check of the sources, complementing the end-to-end checks
//! that inputs stay byte for byte the same (`tests/bad_inputs.rs`,
//! `tests/cli_eval.rs`, `tests/report_files.rs`).

use std::path::{Path, PathBuf};

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for e in std::fs::read_dir(dir).expect("a source folder").flatten() {
        let p = e.path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

#[test]
fn only_the_atomic_writer_writes_files() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut files = Vec::new();
    rust_files(&root.join("src"), &mut files);
    for c in std::fs::read_dir(root.join("crates")).unwrap().flatten() {
        rust_files(&c.path().join("src"), &mut files);
    }
    assert!(files.len() > 20);
    let writes = [
        "fs::write(",
        "File::create(",
        "OpenOptions",
        "save_history(",
        "append_history(",
        "fs::rename(",
        "fs::copy(",
        "set_len(",
    ];
    let mut found = Vec::new();
    for f in &files {
        if f.ends_with("crates/cli/src/atomic.rs") {
            continue;
        }
        let text = std::fs::read_to_string(f).unwrap();
        for (i, line) in text.lines().enumerate() {
            let code = line.split("//").next().unwrap_or("");
            for w in writes {
                if code.contains(w) {
                    // rustyline's history is saved through atomic::replace_with.
                    if w == "save_history(" && text.contains("atomic::replace_with(&history") {
                        continue;
                    }
                    found.push(format!("{}:{}: {}", f.display(), i + 1, line.trim()));
                }
            }
        }
    }
    assert!(
        found.is_empty(),
        "files written outside atomic.rs:\n{}",
        found.join("\n")
    );
}
