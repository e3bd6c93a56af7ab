//! Helpers shared by the end-to-end tests of the binary.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::Command;

/// Run the built binary: exit code, standard output, standard error.
pub fn incertus(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_incertus"))
        .args(args)
        .output()
        .expect("the binary runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// A fresh directory for one test's files.
pub fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("incertus-test-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("the temporary directory is writable");
    dir
}

/// Write a file into a scratch directory.
pub fn write(dir: &Path, file: &str, text: &str) -> PathBuf {
    let p = dir.join(file);
    std::fs::write(&p, text).expect("the temporary directory is writable");
    p
}

/// Run `incertus shell` in `dir` (its home `dir/home`) with `script` piped
/// in as bytes, which need not be UTF-8.
pub fn shell_bytes(dir: &Path, script: &[u8]) -> std::process::Output {
    use std::io::Write;
    let mut child = Command::new(env!("CARGO_BIN_EXE_incertus"))
        .arg("shell")
        .env("INCERTUS_HOME", dir.join("home"))
        .current_dir(dir)
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("the binary runs");
    child
        .stdin
        .take()
        .expect("piped")
        .write_all(script)
        .expect("the script is taken");
    child.wait_with_output().expect("the shell ends")
}
