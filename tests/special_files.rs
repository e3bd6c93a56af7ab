//! Model and data files must be regular files, read within their limits: a
//! device that never ends (`/dev/zero`), a pipe nobody writes (a FIFO) or a
//! file whose size the system does not know (`/proc/self/environ`) is an
//! error naming the problem, never a hang, an abort or an echo of what the
//! file holds.

mod common;
use common::{scratch, write};

use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

/// Run the binary; a run that would block for ever is stopped after a
/// minute and reported (a guard against hanging CI, not a timing check).
fn run(args: &[&str]) -> (i32, String) {
    let mut child = Command::new(env!("CARGO_BIN_EXE_incertus"))
        .args(args)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let start = Instant::now();
    loop {
        if child.try_wait().unwrap().is_some() {
            let out = child.wait_with_output().unwrap();
            return (
                out.status.code().unwrap_or(-1),
                String::from_utf8_lossy(&out.stderr).into_owned(),
            );
        }
        if start.elapsed() > Duration::from_secs(60) {
            let _ = child.kill();
            panic!("`incertus {}` did not end", args.join(" "));
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

fn model_with_data(dir: &std::path::Path, data: &str) -> std::path::PathBuf {
    write(
        dir,
        &format!("m{}.toml", data.len()),
        &format!(
            "[fits.f]\ndata = \"{data}\"\nx = \"a\"\ny = \"b\"\n\
             [inputs.s]\nfit = \"f\"\nparameter = \"slope\"\n\
             [[measurands]]\nname = \"y\"\nformula = \"s\"\n"
        ),
    )
}

#[test]
fn special_files_are_refused_by_name() {
    let dir = scratch("special");
    let fifo = dir.join("pipe");
    let made = Command::new("mkfifo").arg(&fifo).status().unwrap();
    assert!(made.success(), "mkfifo is part of coreutils");
    for (args, expect) in [
        (vec!["eval", "/dev/zero"], "is not a regular file"),
        (
            vec!["eval", fifo.to_str().unwrap()],
            "is not a regular file",
        ),
        (
            vec!["fit", "/dev/zero", "--x", "a", "--y", "b"],
            "is not a regular file",
        ),
    ] {
        let (code, err) = run(&args);
        assert_eq!(code, 1, "{args:?}: {err}");
        assert!(err.contains(expect), "{args:?}: {err}");
    }
    for data in ["/dev/zero", fifo.to_str().unwrap()] {
        let m = model_with_data(&dir, data);
        let (code, err) = run(&["eval", m.to_str().unwrap()]);
        assert_eq!(code, 1, "{data}: {err}");
        assert!(err.contains("is not a regular file"), "{data}: {err}");
    }
    // A file the system reports as empty but that holds the environment:
    // read within the limit, and its content never echoed.
    let m = model_with_data(&dir, "/proc/self/environ");
    let (code, err) = run(&["eval", m.to_str().unwrap()]);
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("not a header of column names"), "{err}");
    assert!(!err.contains("PATH="), "{err}");
}
