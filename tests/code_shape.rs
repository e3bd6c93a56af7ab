//! Readable units of code: no function in `crates/*/src` or `src/` longer
//! than 150 lines, no source file longer than 1200 (the project's own rule;
//! DEVELOPERS.md). A function is measured from its `fn` line to the line of
//! its closing brace, counting braces outside strings, characters and
//! comments.

use std::path::{Path, PathBuf};

const MAX_FN_LINES: usize = 150;
const MAX_FILE_LINES: usize = 1200;

fn sources(dir: &Path, out: &mut Vec<PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            if p.file_name()
                .is_some_and(|n| n != "tests" && n != "benches")
            {
                sources(&p, out);
            }
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

/// The line without string and character literals and comments.
fn code_of(line: &str) -> String {
    let mut out = String::new();
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        match c {
            '"' => {
                while let Some(d) = chars.next() {
                    if d == '\\' {
                        chars.next();
                    } else if d == '"' {
                        break;
                    }
                }
            }
            '\'' => {
                // A character literal ('x', '\n', '{'), not a lifetime.
                let rest: String = chars.clone().take(4).collect();
                if let Some(end) = rest.find('\'') {
                    if end > 0 {
                        for _ in 0..=end {
                            chars.next();
                        }
                    }
                }
            }
            '/' if chars.peek() == Some(&'/') => break,
            c => out.push(c),
        }
    }
    out
}

fn is_fn_start(line: &str) -> Option<String> {
    let t = line.trim_start();
    if t.starts_with("//") {
        return None;
    }
    let words: Vec<&str> = t.split_whitespace().collect();
    let at = words.iter().position(|w| *w == "fn")?;
    let before_ok = words[..at]
        .iter()
        .all(|w| w.starts_with("pub") || ["const", "async", "unsafe", "extern"].contains(w));
    if !before_ok {
        return None;
    }
    let name = words.get(at + 1)?;
    Some(name.split(['(', '<']).next().unwrap_or(name).to_string())
}

#[test]
fn functions_and_files_stay_readable() {
    let mut files = Vec::new();
    for d in ["crates", "src"] {
        let p = Path::new(env!("CARGO_MANIFEST_DIR")).join(d);
        sources(&p, &mut files);
    }
    assert!(files.len() > 40, "{} files", files.len());
    let mut long = Vec::new();
    for f in &files {
        let text = std::fs::read_to_string(f).unwrap();
        let lines: Vec<&str> = text.lines().collect();
        if lines.len() > MAX_FILE_LINES {
            long.push(format!("{}: {} lines", f.display(), lines.len()));
        }
        let mut i = 0;
        while i < lines.len() {
            let Some(name) = is_fn_start(lines[i]) else {
                i += 1;
                continue;
            };
            let (mut depth, mut opened, mut j) = (0i64, false, i);
            while j < lines.len() {
                let code = code_of(lines[j]);
                for c in code.chars() {
                    match c {
                        '{' => {
                            depth += 1;
                            opened = true;
                        }
                        '}' => depth -= 1,
                        _ => {}
                    }
                }
                if (opened && depth <= 0) || (!opened && code.trim_end().ends_with(';')) {
                    break;
                }
                j += 1;
            }
            let n = j - i + 1;
            if n > MAX_FN_LINES {
                long.push(format!("{}:{}: fn {name}: {n} lines", f.display(), i + 1));
            }
            i += 1;
        }
    }
    assert!(long.is_empty(), "too long:\n{}", long.join("\n"));
}
