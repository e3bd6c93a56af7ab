//! The README's examples, run as a reader would type them: every ```text
//! block that starts with `$ incertus ...` is executed in the repository's
//! folder and its output compared line by line. A line `...` stands for any
//! number of lines; the thread count and the memory estimate of a Monte
//! Carlo run, which depend on the machine, are compared as patterns.
//! `| grep 'PATTERN'` (a prefix with `^`) filters the output as the shell would.

use std::process::Command;

fn split_args(cmd: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut cur = String::new();
    let mut quote: Option<char> = None;
    let mut any = false;
    for c in cmd.chars() {
        match (quote, c) {
            (Some(q), c) if c == q => quote = None,
            (Some(_), c) => cur.push(c),
            (None, '"' | '\'') => {
                quote = Some(c);
                any = true;
            }
            (None, c) if c.is_whitespace() => {
                if !cur.is_empty() || any {
                    out.push(std::mem::take(&mut cur));
                    any = false;
                }
            }
            (None, c) => cur.push(c),
        }
    }
    if !cur.is_empty() || any {
        out.push(cur);
    }
    out
}

/// Machine-dependent parts of a line, made comparable.
fn normalise(line: &str) -> String {
    let mut s = line.trim_end().to_string();
    if s.starts_with("Monte Carlo: ") {
        if let (Some(a), Some(b)) = (s.find('('), s.find(" thread")) {
            s.replace_range(a + 1..b, "N");
        }
        if let Some(a) = s.find("about ") {
            s.truncate(a);
        }
    }
    s
}

fn blocks(readme: &str) -> Vec<(String, Vec<String>)> {
    let mut out = Vec::new();
    let mut lines = readme.lines();
    while let Some(l) = lines.next() {
        if l.trim() != "```text" {
            continue;
        }
        let body: Vec<&str> = lines.by_ref().take_while(|l| l.trim() != "```").collect();
        // A block may hold several commands, each followed by its output.
        let mut here: Vec<(String, Vec<String>)> = Vec::new();
        for l in body {
            if let Some(cmd) = l.strip_prefix("$ incertus ") {
                here.push((cmd.to_string(), Vec::new()));
            } else if let Some((_, expected)) = here.last_mut() {
                expected.push(l.to_string());
            }
        }
        out.extend(here);
    }
    out
}

fn matches(expected: &[String], got: &[String]) -> Result<(), String> {
    // Greedy match with `...` as a wildcard over lines.
    fn go(e: &[String], g: &[String]) -> bool {
        match e.first() {
            None => g.is_empty(),
            Some(x) if x.trim() == "..." => (0..=g.len()).any(|k| go(&e[1..], &g[k..])),
            Some(x) => {
                g.first().is_some_and(|y| normalise(x) == normalise(y)) && go(&e[1..], &g[1..])
            }
        }
    }
    if go(expected, got) {
        return Ok(());
    }
    // The first line that differs, for the message.
    let first = expected
        .iter()
        .zip(got)
        .position(|(e, g)| e.trim() != "..." && normalise(e) != normalise(g));
    Err(match first {
        Some(i) => format!("line {}: expected\n{}\ngot\n{}", i + 1, expected[i], got[i]),
        None => format!(
            "expected {} lines, got {}:\n{}",
            expected.len(),
            got.len(),
            got.join("\n")
        ),
    })
}

#[test]
fn every_readme_example_prints_what_the_readme_says() {
    let root = env!("CARGO_MANIFEST_DIR");
    let readme = std::fs::read_to_string(format!("{root}/README.md")).unwrap();
    let examples = blocks(&readme);
    assert!(examples.len() >= 8, "found {} examples", examples.len());
    let mut failures = Vec::new();
    for (cmd, expected) in &examples {
        let (cmd_part, grep) = match cmd.split_once(" | grep ") {
            Some((c, g)) => (c, Some(split_args(g).remove(0))),
            None => (cmd.as_str(), None),
        };
        let out = Command::new(env!("CARGO_BIN_EXE_incertus"))
            .args(split_args(cmd_part))
            .current_dir(root)
            .output()
            .expect("the binary runs");
        let mut text = String::from_utf8_lossy(&out.stdout).into_owned();
        text.push_str(&String::from_utf8_lossy(&out.stderr));
        let mut got: Vec<String> = text.lines().map(str::to_string).collect();
        if let Some(p) = grep {
            let p = p.strip_prefix('^').expect("the README greps line starts");
            got.retain(|l| l.starts_with(p));
        }
        while got.last().is_some_and(|l| l.trim().is_empty()) {
            got.pop();
        }
        let mut exp = expected.clone();
        while exp.last().is_some_and(|l| l.trim().is_empty()) {
            exp.pop();
        }
        if let Err(e) = matches(&exp, &got) {
            failures.push(format!("$ incertus {cmd}\n{e}"));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n\n"));
}
