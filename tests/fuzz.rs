//! Bounded-time fuzzing of the four readers of user text: the formula
//! parser (with everything done to a formula afterwards), the model-file
//! loader (with propagation, second-order terms, conformity, a short
//! Monte Carlo run, every report writer and every plot), the CSV reader (with a fit) and the shell's statements.
//!
//! `cargo fuzz` needs a nightly compiler and this project builds on stable
//! only, so this is a mutation fuzzer of our own, run as a test: seeds from
//! `tests/fuzz/corpus/TARGET/`, mutations (bytes, ranges, splices, tokens of
//! the target's language, awkward numbers), and guidance by outcome rather
//! than by coverage: an input whose outcome (success, or the kind and
//! opening words of the error) has not been seen joins the working corpus.
//! Every input must return without a panic and within `HANG_SECONDS`; a
//! watchdog ends the process with the input if one does not.
//!
//! `INCERTUS_FUZZ_SECONDS` sets the time per target (default 2; `.ci/run`
//! sets 25), `INCERTUS_FUZZ_SEED` the seed (fixed by default, so CI is
//! deterministic; `random` asks for a new one; printed either way). A finding
//! is written to `target/fuzz-findings/` and printed; copy it to
//! `tests/fuzz/regressions/TARGET/` so that it is replayed on every run.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

const HANG_SECONDS: u64 = 20;
const MAX_INPUT: usize = 16 << 10;

/// SplitMix64: small, seedable, good enough to pick mutations.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn below(&mut self, n: usize) -> usize {
        if n == 0 {
            0
        } else {
            (self.next() % n as u64) as usize
        }
    }
}

const NUMBERS: &[&str] = &[
    "0",
    "-0.0",
    "1e308",
    "1e-308",
    "5e-324",
    "1e400",
    "-1e400",
    "nan",
    "inf",
    "-inf",
    "1e-40",
    "1e40",
    "0.5",
    "-1",
    "2147483648",
    "9007199254740993",
    "1_000",
    "0x10",
    "1.",
    ".5",
    "1e",
    "1e+",
    "00",
    "3.0e-30",
];

fn dictionary(target: &str) -> &'static [&'static str] {
    match target {
        "formula" => &[
            "(", ")", "^", "*", "/", "+", "-", ",", "sqrt(", "ln(", "exp(", "atan2(", "hypot(",
            "pow(", "abs(", "sign(", "asin(", "acosh(", "pi", "x", "y", "μ", "ε_r", "--", "^-",
            "((((", "))))", "e", " ", "\u{0}", "÷", "²",
        ],
        "model" => &[
            "[inputs.x]\n",
            "[[measurands]]\n",
            "name = \"y\"\n",
            "formula = \"x*2\"\n",
            "value = ",
            "standard_uncertainty = ",
            "observations = [1, 2, 3]\n",
            "distribution = \"rectangular\"\n",
            "half_width = ",
            "dof = ",
            "unit = \"mg/L\"\n",
            "unit = \"degC\"\n",
            "[[correlations]]\ninputs = [\"a\", \"b\"]\ncoefficient = 1.0\n",
            "[measurands.specification]\nupper = 1\n",
            "rule = \"guarded acceptance\"\n",
            "max_specific_risk = 0.05\n",
            "guard_multiple = 1\n",
            "coverage_probability = ",
            "[fits.f]\nx = [1, 2, 3]\ny = [2, 4, 7]\n",
            "fit = \"f\"\nparameter = \"slope\"\n",
            "constant = \"c\"\n",
            "\"",
            "=",
            "[",
            "]",
            "{",
            "}",
            "\n",
            "#",
            "'''",
        ],
        "csv" => &[
            ",", "\n", "\"", "#", "x", "y", "u", "  ", "\r\n", ",,", "\"a,b\"",
        ],
        "items" => &[
            ",",
            "\n",
            "\"",
            "#",
            "t_ref",
            "t_ind.observations",
            "d_res.half_width",
            ".value",
            ".distribution",
            "rectangular",
            "1e308",
            "-0",
            "NaN",
            " ",
            "item",
            "\r\n",
        ],
        "budget" => &[
            ",",
            "\n",
            "\"",
            "Quantity",
            "Estimate",
            "Standard uncertainty",
            "Contribution",
            "combined standard uncertainty",
            "coverage factor",
            "m",
            "r",
            "h",
            "A",
            "rho",
            "1e308",
            "-",
            "(g)",
            "\r\n",
        ],
        _ => &[
            "x = ",
            "y = ",
            " ± ",
            " +- ",
            " u=",
            " a=",
            "(5)",
            " (k=2)",
            " rectangular",
            " triangular",
            " [mm]",
            " dof=3",
            "budget ",
            "sensitivities ",
            "montecarlo ",
            "correlate x y ",
            "list",
            "specify q lower=1 upper=9 rule=guarded-acceptance guard=1\n",
            "specify q off\n",
            " risk=0.05",
            " process_mean=6 process_sd=1",
            " rule=guarded-rejection",
            "help",
            "\n",
            "#",
            "=",
            "q",
            "x*y",
            " 0.5",
            " 1e300",
        ],
    }
}

fn mutate(rng: &mut Rng, input: &[u8], corpus: &[Vec<u8>], dict: &[&str]) -> Vec<u8> {
    let mut v = input.to_vec();
    for _ in 0..1 + rng.below(4) {
        let len = v.len();
        match rng.below(10) {
            0 if len > 0 => {
                let i = rng.below(len);
                v[i] ^= 1 << rng.below(8);
            }
            1 => {
                let i = rng.below(len + 1);
                v.insert(i, rng.next() as u8);
            }
            2 if len > 0 => {
                let a = rng.below(len);
                let b = (a + 1 + rng.below(16)).min(len);
                v.drain(a..b);
            }
            3 if len > 0 => {
                let a = rng.below(len);
                let b = (a + 1 + rng.below(32)).min(len);
                let piece = v[a..b].to_vec();
                let at = rng.below(len + 1);
                v.splice(at..at, piece);
            }
            4 | 5 => {
                let t = dict[rng.below(dict.len())].as_bytes();
                let at = rng.below(len + 1);
                v.splice(at..at, t.iter().copied());
            }
            6 => {
                // Replace a run of digits by an awkward number.
                let starts: Vec<usize> = (0..len).filter(|&i| v[i].is_ascii_digit()).collect();
                if let Some(&a) = starts.get(rng.below(starts.len())) {
                    let mut b = a;
                    while b < len && (v[b].is_ascii_digit() || v[b] == b'.') {
                        b += 1;
                    }
                    let n = NUMBERS[rng.below(NUMBERS.len())].as_bytes();
                    v.splice(a..b, n.iter().copied());
                }
            }
            7 if !corpus.is_empty() => {
                let other = &corpus[rng.below(corpus.len())];
                if !other.is_empty() {
                    let a = rng.below(other.len());
                    let b = (a + 1 + rng.below(64)).min(other.len());
                    let at = rng.below(len + 1);
                    v.splice(at..at, other[a..b].iter().copied());
                }
            }
            8 => {
                // A token at the start of a line keeps line-based formats
                // (TOML, CSV, shell scripts) mostly well formed.
                let starts: Vec<usize> = std::iter::once(0)
                    .chain((0..len).filter(|&i| v[i] == b'\n').map(|i| i + 1))
                    .collect();
                let at = starts[rng.below(starts.len())];
                let t = dict[rng.below(dict.len())].as_bytes();
                v.splice(at..at, t.iter().copied());
            }
            _ if len > 1 => {
                v.truncate(rng.below(len));
            }
            _ => {}
        }
    }
    v.truncate(MAX_INPUT);
    v
}

/// An outcome's signature: "ok", or the first four plain words of the
/// error's first clause, with quoted text (names, values) and digits removed, so
/// that it tells the kind of error and not the input.
fn signature(r: Result<String, String>) -> String {
    match r {
        Ok(features) => format!("ok {features}"),
        Err(e) => {
            let mut out = String::new();
            let mut quoted: Option<char> = None;
            for c in e.chars().take(200) {
                match (quoted, c) {
                    (None, '`' | '"') => quoted = Some(c),
                    (Some(q), c) if c == q => quoted = None,
                    (Some(_), _) => {}
                    (None, '\n' | ';') => break,
                    (None, c) if c.is_ascii_digit() => {}
                    (None, c) => out.push(c),
                }
            }
            // The opening words name the kind of error; the rest is detail.
            out.split_whitespace()
                .filter(|w| {
                    w.chars()
                        .all(|c| c.is_ascii_alphabetic() || ":()".contains(c))
                })
                .take(4)
                .collect::<Vec<_>>()
                .join(" ")
        }
    }
}

// ---- targets -------------------------------------------------------------

fn formula_target(input: &[u8]) -> Result<String, String> {
    use incertus::expr::{derivative, derivative_size, parse, print, simplify, Tape};
    let text = String::from_utf8_lossy(input);
    let e = parse(&text).map_err(|e| format!("parse {:?}: {}", e.kind, e.message))?;
    let names = e.names();
    // The printing round trip is an invariant (DEVELOPERS.md).
    let printed = print(&e);
    let again = parse(&printed).map_err(|err| {
        format!("INVARIANT: the printed formula {printed:?} of {text:?} does not parse: {err}")
    })?;
    assert_eq!(
        print(&again),
        printed,
        "printing is not stable for {text:?}"
    );
    let _ = simplify(&e);
    let refs: Vec<&str> = names.iter().map(String::as_str).collect();
    let env: Vec<(&str, f64)> = refs.iter().map(|n| (*n, 0.7)).collect();
    let mut exprs = vec![e.clone()];
    for n in &refs {
        if derivative_size(&e, n) < 2e5 {
            let d = derivative(&e, n);
            let _ = d.eval(env.as_slice());
            exprs.push(d);
        }
    }
    let tree: Result<f64, _> = e.eval(env.as_slice());
    let tape = Tape::compile(&exprs, &refs).map_err(|e| format!("tape: {}", e.message))?;
    let x: Vec<f64> = vec![0.7; refs.len()];
    let mut out = vec![0.0; exprs.len()];
    tape.eval_point(&x, &mut out);
    if let Ok(v) = tree {
        // One arithmetic (DEVELOPERS.md): tree and tape agree bit for bit.
        assert!(
            v.to_bits() == out[0].to_bits() || (v.is_nan() && out[0].is_nan()),
            "tree {v} and tape {} differ for {text:?}",
            out[0]
        );
    }
    // Features of a formula that parsed: which kinds of node it has, how
    // deep it is, how many names (so that the corpus grows towards
    // formulas unlike those seen).
    let mut kinds = std::collections::BTreeSet::new();
    let mut stack = vec![&e];
    while let Some(x) = stack.pop() {
        kinds.insert(format!("{:?}", std::mem::discriminant(&x.kind)));
        if let incertus::expr::Kind::Call(f, _) = &x.kind {
            kinds.insert(format!("{f:?}"));
        }
        stack.extend(x.children());
    }
    Ok(format!(
        "{} d{} n{}",
        kinds.into_iter().collect::<Vec<_>>().join(","),
        e.depth().min(12),
        names.len().min(6)
    ))
}

fn model_target(input: &[u8]) -> Result<String, String> {
    let text = String::from_utf8_lossy(input);
    let model = incertus::gum::load_str(&text, "tests/fuzz/corpus/model/fuzz.toml")
        .map_err(|e| format!("load {}: {}", e.path, e.message))?;
    let report = incertus::gum::propagate(&model, &incertus::gum::Options::default())
        .map_err(|e| format!("propagate: {}", e.message))?;
    let _ = incertus::gum::propagate(
        &model,
        &incertus::gum::Options {
            second_order: true,
            ..Default::default()
        },
    );
    let settings = incertus::mc::Settings {
        trials: incertus::mc::Trials::Fixed(2000),
        threads: Some(1),
        memory_limit: Some(64 << 20),
        ..Default::default()
    };
    let mc = incertus::mc::run(&model, &report, &settings).map_err(|e| format!("mc: {e}"))?;
    let mut report = report;
    incertus::mc::attach(&model, &mut report, &mc);
    // Every writer and every plot of a report folder, in memory.
    let style = incertus_cli::report::Style { digits: 2 };
    let _ = incertus_cli::report::text(&report, style, Some(&mc));
    let _ = incertus_cli::report::markdown(&report, style, Some(&mc));
    let _ = incertus_cli::report::json(&report, Some(&mc));
    let _ = incertus_cli::tables::csv(&report);
    let _ = incertus_cli::plots::plots(&report, Some(&mc));
    Ok(String::new())
}

fn csv_target(input: &[u8]) -> Result<String, String> {
    let cols = incertus::fit::columns_from_reader(input, "fuzz.csv", &["x", "y"], 100_000)
        .map_err(|e| format!("csv: {e}"))?;
    let r = incertus::fit::fit(&incertus::fit::FitRequest {
        x: &cols.columns[0],
        y: &cols.columns[1],
        u_y: None,
        u_x: None,
        rows: cols.rows.clone(),
        degree: 1,
        exclude: vec![],
        exclude_reason: None,
        scale_by_chi_squared: false,
        diagnostics: true,
    })
    .map_err(|e| format!("fit: {e}"))?;
    let _ = r;
    Ok(String::new())
}

fn shell_target(input: &[u8]) -> Result<String, String> {
    let text = String::from_utf8_lossy(input);
    // A `montecarlo NAME TRIALS` asking for millions of trials is honoured
    // by the shell (within the memory check); here it would only slow the
    // search, so the trial count is capped.
    let lines: Vec<String> = text
        .lines()
        .map(|l| {
            let t = l.trim_start();
            if t.starts_with("montecarlo") {
                t.split_whitespace().take(2).collect::<Vec<_>>().join(" ") + " 2000"
            } else {
                l.to_string()
            }
        })
        .collect();
    let out = incertus_cli::run_statements(lines.iter().map(String::as_str));
    match out.iter().find(|l| l.starts_with("error:")) {
        Some(e) => Err(e.clone()),
        None => Ok(String::new()),
    }
}

/// The whole program on a table written to a file of this thread: an
/// internal error (exit 70) is a finding, any other error an answer.
fn program_on_file(input: &[u8], ext: &str, args: &[&str]) -> Result<String, String> {
    let file = std::env::temp_dir().join(format!(
        "incertus-fuzz-{}-{:?}.{ext}",
        std::process::id(),
        std::thread::current().id()
    ));
    std::fs::write(&file, input).map_err(|e| e.to_string())?;
    let mut all: Vec<String> = vec!["incertus".into()];
    all.extend(args.iter().map(|a| a.replace("{}", file.to_str().unwrap())));
    let (mut out, mut err) = (Vec::new(), Vec::new());
    let code = incertus_cli::run_with(&all, &mut out, &mut err);
    let _ = std::fs::remove_file(&file);
    let err = String::from_utf8_lossy(&err).replace(file.to_str().unwrap(), "TABLE");
    assert_ne!(code, 70, "internal error: {err}");
    if code == 0 {
        Ok(String::new())
    } else {
        Err(err.lines().next().unwrap_or("").to_string())
    }
}

fn items_target(input: &[u8]) -> Result<String, String> {
    program_on_file(
        input,
        "csv",
        &[
            "eval",
            "examples/items/thermometers.toml",
            "--items",
            "{}",
            "--format",
            "csv",
        ],
    )
}

fn budget_target(input: &[u8]) -> Result<String, String> {
    program_on_file(
        input,
        "csv",
        &[
            "check",
            "tests/fixtures/budgets/cylinder.toml",
            "--budget",
            "{}",
        ],
    )
}

// ---- driver --------------------------------------------------------------

fn files(dir: &Path, ext: Option<&str>) -> Vec<Vec<u8>> {
    let mut paths: Vec<PathBuf> = std::fs::read_dir(dir)
        .map(|d| d.filter_map(|e| e.ok().map(|e| e.path())).collect())
        .unwrap_or_default();
    paths.sort();
    paths
        .into_iter()
        .filter(|p| p.is_file())
        .filter(|p| ext.is_none_or(|x| p.extension().is_some_and(|e| e == x)))
        .filter_map(|p| std::fs::read(p).ok())
        .collect()
}

fn escaped(input: &[u8]) -> String {
    input.escape_ascii().to_string()
}

fn save_finding(target: &str, input: &[u8]) -> PathBuf {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("target/fuzz-findings");
    let _ = std::fs::create_dir_all(&dir);
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in input {
        h = (h ^ *b as u64).wrapping_mul(0x100_0000_01b3);
    }
    let p = dir.join(format!("{target}-{h:016x}.txt"));
    let _ = std::fs::write(&p, input);
    p
}

fn fuzz(target: &'static str, run: fn(&[u8]) -> Result<String, String>, ext: Option<&str>) {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fuzz");
    let seconds: u64 = std::env::var("INCERTUS_FUZZ_SECONDS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(2);
    // A fixed seed unless asked otherwise: CI is deterministic; a long
    // local run may say INCERTUS_FUZZ_SEED=random (or give a number).
    let seed: u64 = match std::env::var("INCERTUS_FUZZ_SEED").ok().as_deref() {
        Some("random") => std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(1, |d| d.as_nanos() as u64),
        Some(s) => s.parse().unwrap_or(20_261_202),
        None => 20_261_202,
    };
    let seeds = files(&root.join("corpus").join(target), ext);
    assert!(!seeds.is_empty(), "no seeds for {target}");
    let regressions = files(&root.join("regressions").join(target), None);

    // The watchdog: an input that runs longer than HANG_SECONDS is a finding.
    let current: Arc<Mutex<Vec<u8>>> = Arc::new(Mutex::new(Vec::new()));
    let started = Arc::new(AtomicU64::new(0));
    let done = Arc::new(AtomicBool::new(false));
    let t0 = Instant::now();
    {
        let (current, started, done) = (current.clone(), started.clone(), done.clone());
        std::thread::spawn(move || {
            while !done.load(Ordering::Relaxed) {
                std::thread::sleep(Duration::from_millis(200));
                let s = started.load(Ordering::Relaxed);
                if s > 0
                    && (t0.elapsed().as_millis() as u64).saturating_sub(s) > HANG_SECONDS * 1000
                {
                    let input = current.lock().map(|c| c.clone()).unwrap_or_default();
                    let p = save_finding(target, &input);
                    eprintln!(
                        "fuzz {target}: HANG over {HANG_SECONDS} s, input saved to {}:\n{}",
                        p.display(),
                        escaped(&input)
                    );
                    std::process::exit(3);
                }
            }
        });
    }
    let exec = |input: &[u8]| -> Result<String, String> {
        if let Ok(mut c) = current.lock() {
            c.clear();
            c.extend_from_slice(input);
        }
        started.store(t0.elapsed().as_millis() as u64 + 1, Ordering::Relaxed);
        let r = catch_unwind(AssertUnwindSafe(|| run(input)));
        started.store(0, Ordering::Relaxed);
        match r {
            Ok(r) => Ok(signature(r)),
            Err(p) => {
                let msg = p
                    .downcast_ref::<String>()
                    .cloned()
                    .or_else(|| p.downcast_ref::<&str>().map(|s| s.to_string()))
                    .unwrap_or_default();
                let path = save_finding(target, input);
                Err(format!(
                    "fuzz {target} (seed {seed}): PANIC {msg}\ninput saved to {}:\n{}",
                    path.display(),
                    escaped(input)
                ))
            }
        }
    };
    let check = |r: Result<String, String>| -> String {
        match r {
            Ok(s) => {
                assert!(
                    !s.starts_with("INVARIANT"),
                    "fuzz {target} (seed {seed}): {s}"
                );
                s
            }
            Err(e) => panic!("{e}"),
        }
    };
    for r in &regressions {
        check(exec(r));
    }
    let mut corpus = seeds.clone();
    let mut seen = std::collections::HashSet::new();
    for s in &seeds {
        seen.insert(check(exec(s)));
    }
    let mut rng = Rng(seed);
    let dict = dictionary(target);
    let deadline = Instant::now() + Duration::from_secs(seconds);
    let mut runs = 0u64;
    // Inputs that went through the whole target without an error.
    let mut whole = 0u64;
    // INCERTUS_FUZZ_SHOW=N prints the first N new outcomes (to tune the
    // signature).
    let mut show: usize = std::env::var("INCERTUS_FUZZ_SHOW")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(0);
    let mut slowest = Duration::ZERO;
    // Inputs that went all the way are picked as parents half of the time,
    // so that mutations explore the deep end of the target too.
    let mut accepted: Vec<Vec<u8>> = seeds.clone();
    while Instant::now() < deadline {
        let parent = if rng.below(2) == 0 {
            &accepted[rng.below(accepted.len())]
        } else {
            &corpus[rng.below(corpus.len())]
        };
        let child = mutate(&mut rng, parent, &corpus, dict);
        let t = Instant::now();
        let sig = check(exec(&child));
        slowest = slowest.max(t.elapsed());
        runs += 1;
        if sig.starts_with("ok") {
            whole += 1;
            if accepted.len() < 5000 && !seen.contains(&sig) {
                accepted.push(child.clone());
            }
        }
        if show > 0 && !seen.contains(&sig) {
            show -= 1;
            eprintln!("fuzz {target}: new outcome {sig:?}");
        }
        if seen.insert(sig) && corpus.len() < 5000 {
            corpus.push(child);
        }
    }
    done.store(true, Ordering::Relaxed);
    eprintln!(
        "fuzz {target}: seed {seed}, {runs} inputs in {seconds} s ({whole} accepted all the way), {} outcomes, corpus {} (from {} seeds, {} regressions), slowest input {:.1} ms",
        seen.len(),
        corpus.len(),
        seeds.len(),
        regressions.len(),
        slowest.as_secs_f64() * 1e3
    );
}

#[test]
fn fuzz_formula_parser() {
    fuzz("formula", formula_target, Some("txt"));
}

#[test]
fn fuzz_model_loader() {
    fuzz("model", model_target, Some("toml"));
}

#[test]
fn fuzz_csv_reader() {
    fuzz("csv", csv_target, Some("csv"));
}

#[test]
fn fuzz_items_table() {
    fuzz("items", items_target, Some("csv"));
}

#[test]
fn fuzz_budget_sheet() {
    fuzz("budget", budget_target, Some("csv"));
}

#[test]
fn fuzz_shell_statements() {
    fuzz("shell", shell_target, Some("txt"));
}
