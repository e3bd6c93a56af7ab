//! Piped `incertus shell` sessions end to end, with exact expected output.

mod common;
use common::scratch;

use std::io::Write;
use std::process::{Command, Stdio};

/// The recovery files kept in a home folder, one per session.
fn recovery_files(home: &std::path::Path) -> Vec<std::path::PathBuf> {
    std::fs::read_dir(home.join("recovery"))
        .map(|d| d.flatten().map(|e| e.path()).collect())
        .unwrap_or_default()
}

fn session(input: &str, home: &std::path::Path, cwd: &std::path::Path) -> (i32, String) {
    let mut child = Command::new(env!("CARGO_BIN_EXE_incertus"))
        .arg("shell")
        .env("INCERTUS_HOME", home)
        .current_dir(cwd)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the binary runs");
    // Written from a thread: a long script's output must be read while
    // the script is still being written, or both pipes fill.
    let mut stdin = child.stdin.take().unwrap();
    let input = input.to_string();
    let writer = std::thread::spawn(move || stdin.write_all(input.as_bytes()));
    let out = child.wait_with_output().unwrap();
    let _ = writer.join(); // a script may end (quit) before all is written
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
    )
}

#[test]
fn a_scripted_session_prints_exactly_this() {
    let dir = scratch("shell1");
    let (code, out) = session(
        "x = 2.0 u=0.1\n\
         y = 3.0 u = 0.2\n\
         z = 1.234(5)\n\
         w = 10.0 ± 0.5 (k=2)\n\
         q = x*y\n\
         r = q - x*y   # exactly zero\n\
         x^2\n\
         correlate x y 0.5\n\
         q\n\
         sensitivities q\n\
         foo(x)\n\
         q = x*\n\
         q\n\
         quit\n",
        &dir.join("home"),
        &dir,
    );
    // Two statements fail (foo(x), q = x*): a script with errors exits 1.
    assert_eq!(code, 1);
    // u(x y) = √((3·0.1)² + (2·0.2)²) = 0.5; with r = 0.5 the correlation
    // term 2·3·2·0.5·0.1·0.2 = 0.12 makes u² = 0.37 (JCGM 100:2008, 5.2.2).
    let expected = "\
x = 2.00, u(x) = 0.10   (concise: 2.00(10))
y = 3.00, u(y) = 0.20   (concise: 3.00(20))
z = 1.2340, u(z) = 0.0050   (concise: 1.2340(50))
w = 10.00, u(w) = 0.25   (concise: 10.00(25))
q = 6.00, u(q) = 0.50   (concise: 6.00(50))
r = 0  (exact)
4.00, u = 0.40   (concise: 4.00(40))
r(x, y) = 0.5
6.00, u = 0.61   (concise: 6.00(61))
∂q/∂x = y  = 3
∂q/∂y = x  = 2
error: unknown function `foo`; known functions: sqrt, cbrt, exp, ln, log10, log2, sin, cos, tan, asin, acos, atan, atan2, sinh, cosh, tanh, asinh, acosh, atanh, abs, sign, hypot, pow
foo(x)
^^^
error: expected a number, a name or '(' but found the end of the formula
x*
  ^
6.00, u = 0.61   (concise: 6.00(61))
";
    assert_eq!(out, expected);
    // The definitions were kept for recovery.
    assert_eq!(recovery_files(&dir.join("home")).len(), 1);
}

#[test]
fn save_then_eval_gives_the_same_numbers_and_never_overwrites() {
    let dir = scratch("shell2");
    let (code, out) = session(
        "a = 10.0 rectangular a=0.5 [mm] dof=8\nb = 2.5 u=0.01 [mm]\nA = a*b [mm^2]\nsave area.toml\nsave area.toml\nquit\n",
        &dir.join("home"),
        &dir,
    );
    // The refused second save is an error of the script.
    assert_eq!(code, 1);
    assert!(out.contains("A = 25.00 mm^2, u(A) = 0.73 mm^2"), "{out}");
    assert!(out.contains("saved to area.toml"));
    assert!(
        out.contains("error: area.toml exists; use save! area.toml to replace it"),
        "{out}"
    );
    let ev = Command::new(env!("CARGO_BIN_EXE_incertus"))
        .args(["eval", "area.toml", "--format", "json"])
        .current_dir(&dir)
        .output()
        .unwrap();
    assert!(
        ev.status.success(),
        "{}",
        String::from_utf8_lossy(&ev.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&ev.stdout).unwrap();
    let r = &v["results"][0];
    assert_eq!(r["name"], "A");
    assert!((r["value"].as_f64().unwrap() - 25.0).abs() < 1e-12);
    // u = √((2.5·0.5/√3)² + (10·0.01)²) in mm².
    let u = ((2.5f64 * 0.5 / 3f64.sqrt()).powi(2) + 0.1f64.powi(2)).sqrt();
    assert!((r["standard_uncertainty"].as_f64().unwrap() - u).abs() < 1e-12);
    // Loading it back into a new session gives the same result line.
    let (_, out2) = session("load area.toml\nA\n", &dir.join("home"), &dir);
    assert!(
        out2.starts_with("loaded 3 definitions from area.toml\n"),
        "{out2}"
    );
    assert!(
        out2.contains("25.00 × 10⁻⁶ m^2, u = 0.73 × 10⁻⁶ m^2"),
        "{out2}"
    );
}

#[test]
fn the_recovery_file_is_offered_to_the_next_session() {
    let dir = scratch("shell3");
    let home = dir.join("home");
    session("x = 1.5 u=0.1\n", &home, &dir); // ends at end of input
    let (_, out) = session("recover\nx*2\n", &home, &dir);
    assert!(out.contains("loaded 1 definitions"), "{out}");
    assert!(out.contains("3.00, u = 0.20"), "{out}");
}

#[test]
fn a_specification_in_the_shell() {
    // q = x·y = 6.00 with u = 0.5 (JCGM 100:2008, 5.1.6 relative rule, as
    // above); tolerance [5, 7] is ±2u: p_c = 2Φ(2) − 1 = 95.45 % (standard
    // normal table, value recalled from memory).
    let dir = scratch("shell-spec");
    let (code, out) = session(
        "x = 2.0 u=0.1\ny = 3.0 u=0.2\nq = x*y\n\
         specify q lower=5 upper=7 rule=guarded-acceptance guard=1\n\
         save spec.toml\nspecify q lower=7 upper=5\nspecify q off\nquit\n",
        &dir.join("home"),
        &dir,
    );
    assert_eq!(code, 1, "the reversed limits are an error of the script");
    for f in [
        "conformity assessment of q (JCGM 106:2012)",
        "acceptance interval                [5.98, 6.02]",
        "conformance probability p_c        95.45 %",
        "verdict                            ACCEPTED, specific consumer's risk 4.55 %",
        "error: the upper limit 5.0 must be greater than the lower limit 7.0",
        "q: no specification",
    ] {
        assert!(out.contains(f), "missing {f:?} in\n{out}");
    }
    // The saved session carries the specification, and eval gives the same verdict.
    let ev = Command::new(env!("CARGO_BIN_EXE_incertus"))
        .args(["eval", "spec.toml", "--format", "json"])
        .current_dir(&dir)
        .output()
        .unwrap();
    let v: serde_json::Value = serde_json::from_slice(&ev.stdout).unwrap();
    assert_eq!(v["results"][0]["conformity"]["verdict"], "accepted");
    assert_eq!(v["results"][0]["conformity"]["rule"], "guarded acceptance");
}

#[test]
fn load_keeps_the_settings_of_the_file() {
    // A 99 % file stays at 99 % in the shell, and its title and settings are saved again.
    let dir = scratch("shell_load_settings");
    std::fs::write(
        dir.join("m.toml"),
        "title = \"Ninety-nine\"\ncoverage_probability = 0.99\neffective_dof_rounding = \"exact\"\n\
         [inputs.x]\nvalue = 2.0\nstandard_uncertainty = 0.1\ndof = 7\n\
         [[measurands]]\nname = \"y\"\nformula = \"2*x\"\n",
    )
    .unwrap();
    let (code, out) = session(
        "load m.toml\nbudget y\nsave s.toml\nquit\n",
        &dir.join("home"),
        &dir,
    );
    assert_eq!(code, 0, "{out}");
    assert!(out.contains("Ninety-nine"), "{out}");
    assert!(out.contains("for p = 99 %"), "{out}");
    let saved = std::fs::read_to_string(dir.join("s.toml")).unwrap();
    for key in [
        "title = \"Ninety-nine\"",
        "coverage_probability = 0.99",
        "effective_dof_rounding = \"exact\"",
    ] {
        assert!(saved.contains(key), "{key} in\n{saved}");
    }
    // The saved file gives the same U as the original.
    let eval = |f: &str| {
        let o = Command::new(env!("CARGO_BIN_EXE_incertus"))
            .args(["eval", f, "--format", "json"])
            .current_dir(&dir)
            .output()
            .unwrap();
        let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        v["results"][0]["expanded_uncertainty"].as_f64().unwrap()
    };
    assert_eq!(eval("m.toml"), eval("s.toml"));
}

/// Every name a model file takes works in the shell (Greek letters,
/// subscripts); a name the formulas cannot use is refused with a message
/// about names, not about files.
#[test]
fn the_shell_takes_every_name_a_model_file_takes() {
    let dir = scratch("shell_names");
    let (code, out) = session(
        "α = 1.2e-5 u=1e-6 [1/K]\nρ_w = 998.2 u=0.05 [kg/m^3]\nΔT = 2.0 u=0.1 [K]\n\
         V0 = 10 u=0.01 [mL]\nm = ρ_w*V0*(1 + α*ΔT) [g]\nsave names.toml\na.b = 3\n\
         k = ρ_v*2\nquit\n",
        &dir.join("home"),
        &dir,
    );
    assert_eq!(code, 1, "{out}");
    // A slip is matched against the whole session, not only the part of
    // the model the statement touches.
    assert!(
        out.contains("error: `ρ_v` is neither an input nor a measurand; did you mean `ρ_w`?"),
        "{out}"
    );
    assert!(out.contains("m = 9.982"), "{out}");
    assert!(
        out.contains("error: `a.b` cannot be a name: a name starts with a letter"),
        "{out}"
    );
    assert!(!out.contains("TOML"), "{out}");
    // The saved file is a model file eval reads, with the same names.
    let o = Command::new(env!("CARGO_BIN_EXE_incertus"))
        .args(["eval", "names.toml", "--format", "json"])
        .current_dir(&dir)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["results"][0]["name"], "m");
}

/// An empty session has nothing to show or keep: no placeholder result,
/// no recovery file; a session of inputs only saves a draft that loads back.
#[test]
fn an_empty_session_keeps_no_placeholder() {
    let dir = scratch("shell_empty");
    let home = dir.join("home");
    let (code, out) = session("list\nquit\n", &home, &dir);
    assert_eq!((code, out.as_str()), (0, "nothing is defined yet\n"));
    assert!(!home.join("recovery.toml").exists());
    let (code, out) = session("x = 1.0 u=0.1\nlist\nsave d.toml\n", &home, &dir);
    assert_eq!(code, 0, "{out}");
    assert!(!out.contains("_nothing"), "{out}");
    let saved = std::fs::read_to_string(dir.join("d.toml")).unwrap();
    assert!(!saved.contains("measurands"), "{saved}");
    let (code, out) = session("load d.toml\nx*3\n", &home, &dir);
    assert_eq!(code, 0, "{out}");
    assert!(out.contains("loaded 1 definitions"), "{out}");
    assert!(out.contains("3.00, u = 0.30"), "{out}");
}

/// A long session does not slow down with its length: every statement is
/// evaluated on the part of the model it touches. 10 000 statements (5 000
/// inputs, 5 000 results) run here; the benchmark `shell` measures the
/// 1 000-statement session.
#[test]
fn a_long_session_runs_to_its_end() {
    let dir = scratch("shell_long");
    let mut script = String::new();
    for i in 0..5000usize {
        script.push_str(&format!("x{i} = {}.0 u=0.01\n", i + 1));
        script.push_str(&format!("y{i} = 2*x{i} + x{}\n", i.saturating_sub(1)));
    }
    script.push_str("x0 = 1.0 u=0.02\ny1\ncorrelate x0 x1 0.5\ny1\n");
    let (code, out) = session(&script, &dir.join("home"), &dir);
    assert_eq!(code, 0);
    let lines: Vec<&str> = out.lines().collect();
    assert_eq!(lines.len(), 10_004);
    // y1 = 2 x1 + x0 = 5; u² = (2·0.01)² + 0.02² → 0.028; with r = 0.5,
    // + 2·2·1·0.5·0.01·0.02 = 0.0004 → u = √0.0012 = 0.035.
    assert!(
        lines[10_001].starts_with("5.000, u = 0.028"),
        "{}",
        lines[10_001]
    );
    assert!(
        lines[10_003].starts_with("5.000, u = 0.035"),
        "{}",
        lines[10_003]
    );
}

/// `load` keeps what the file holds — settings, fits with their data, groups
/// observed together — and `save` writes it back.
#[test]
fn load_keeps_fits_and_groups() {
    let dir = scratch("shell_load_fits");
    std::fs::write(
        dir.join("cal.csv"),
        "conc,signal\n0,0.002\n1,0.101\n2,0.199\n3,0.302\n4,0.398\n",
    )
    .unwrap();
    std::fs::write(
        dir.join("m.toml"),
        "[fits.cal]\ndata = \"cal.csv\"\nx = \"conc\"\ny = \"signal\"\n\n\
         [inputs.b0]\nfit = \"cal\"\nparameter = \"intercept\"\n\
         [inputs.b1]\nfit = \"cal\"\nparameter = \"slope\"\n\
         [inputs.p]\nobservations = [1.0, 1.2, 0.9, 1.1]\n\
         [inputs.q]\nobservations = [2.0, 2.3, 1.9, 2.2]\n\n\
         [[observed_together]]\ninputs = [\"p\", \"q\"]\n\n\
         [[measurands]]\nname = \"c\"\nformula = \"(0.25 - b0)/b1\"\n\
         [[measurands]]\nname = \"r\"\nformula = \"p/q\"\n",
    )
    .unwrap();
    let (code, out) = session("load m.toml\nc\nr\nsave s.toml\n", &dir.join("home"), &dir);
    assert_eq!(code, 0, "{out}");
    let eval = |f: &str| {
        let o = Command::new(env!("CARGO_BIN_EXE_incertus"))
            .args(["eval", f, "--format", "json"])
            .current_dir(&dir)
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        let u = |k: usize| v["results"][k]["standard_uncertainty"].as_f64().unwrap();
        (u(0), u(1))
    };
    assert_eq!(eval("m.toml"), eval("s.toml"));
    let saved = std::fs::read_to_string(dir.join("s.toml")).unwrap();
    assert!(saved.contains("observed_together"), "{saved}");
}

/// A piped script is decoded strictly: a line that is not UTF-8 is an
/// error naming it, the rest of the script still runs, and the script
/// exits 1.
#[test]
fn a_bad_byte_is_an_error_with_its_line_and_the_script_goes_on() {
    let dir = scratch("shell_bad_byte");
    let mut script = b"x = 2.0 u=0.1\ny = caf".to_vec();
    script.push(0xE9); // Latin-1 é
    script.extend_from_slice(b" = 3\nz = x*2\nsave after.toml\n");
    let out = common::shell_bytes(&dir, &script);
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert_eq!(out.status.code(), Some(1), "{stdout}");
    assert!(
        stdout.contains("error: line 2 is not UTF-8 text (byte 0xE9 after `y = caf`)"),
        "{stdout}"
    );
    assert!(stdout.contains("z = 4.00, u(z) = 0.20"), "{stdout}");
    assert!(
        dir.join("after.toml").exists(),
        "the rest of the script ran"
    );
}

/// Each session keeps its own recovery file: a later piped script does not
/// replace an earlier session's state, and `recover` loads the newest other
/// one.
#[test]
fn sessions_keep_their_own_recovery_state() {
    let dir = scratch("shell_own_state");
    let home = dir.join("home");
    session("a = 1.0 u=0.1\n", &home, &dir);
    std::thread::sleep(std::time::Duration::from_millis(20));
    session("b = 2.0 u=0.1\n", &home, &dir);
    let files = recovery_files(&home);
    assert_eq!(files.len(), 2, "{files:?}");
    let texts: Vec<String> = files
        .iter()
        .map(|p| std::fs::read_to_string(p).unwrap())
        .collect();
    assert!(texts.iter().any(|t| t.contains("[inputs.a]")));
    assert!(texts.iter().any(|t| t.contains("[inputs.b]")));
    let (_, out) = session("recover\nb*2\n", &home, &dir);
    assert!(out.contains("4.00, u = 0.20"), "{out}");
}

/// SIGTERM (or SIGHUP, a closed terminal) while a script waits for its next
/// line: the definitions so far are on disk.
#[test]
fn a_terminated_session_leaves_its_state_on_disk() {
    use std::io::{BufRead, BufReader};
    let dir = scratch("shell_sigterm");
    let home = dir.join("home");
    let mut child = Command::new(env!("CARGO_BIN_EXE_incertus"))
        .arg("shell")
        .env("INCERTUS_HOME", &home)
        .current_dir(&dir)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut stdin = child.stdin.take().unwrap();
    stdin.write_all(b"x = 2.0 u=0.1\ny = 3*x\n").unwrap();
    stdin.flush().unwrap();
    let mut lines = BufReader::new(child.stdout.take().unwrap()).lines();
    // Both statements answered: the shell now waits for more input.
    lines.next().unwrap().unwrap();
    lines.next().unwrap().unwrap();
    let kill = Command::new("kill")
        .args(["-TERM", &child.id().to_string()])
        .status()
        .unwrap();
    assert!(kill.success());
    let status = child.wait().unwrap();
    drop(stdin);
    assert_ne!(status.code(), Some(0));
    let files = recovery_files(&home);
    assert_eq!(files.len(), 1, "{files:?}");
    let text = std::fs::read_to_string(&files[0]).unwrap();
    assert!(
        text.contains("[inputs.x]") && text.contains("formula = \"3*x\""),
        "{text}"
    );
}
