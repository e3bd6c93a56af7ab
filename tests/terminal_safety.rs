//! Control characters from a model file (title, formula, unit, keys) and
//! from shell statements never reach the terminal raw: every
//! human-readable output shows them escaped, and Markdown shows text from
//! files literally (no raw HTML, no emphasis, no headings).

mod common;
use common::{incertus, scratch, write};

fn raw_controls(s: &str) -> Vec<char> {
    s.chars()
        .filter(|c| (c.is_control() && *c != '\n' && *c != '\t') || *c == '\u{7f}')
        .collect()
}

#[test]
fn control_characters_from_files_are_shown_escaped() {
    let dir = scratch("term_safety");
    // ESC ] 0 ; … BEL sets a terminal's title; ESC [ 2 J clears the screen.
    let model = write(
        &dir,
        "evil.toml",
        "title = \"t \\u001b]0;pwned\\u0007 <b>*x*</b>\"\n\
         [inputs.x]\nvalue = 1.0\nstandard_uncertainty = 0.1\ndescription = \"d \\u001b[2J \\u009b\"\n\
         [[measurands]]\nname = \"y\"\nformula = \"2*x\"\ndescription = \"\\u001b[31mred\"\n",
    );
    for format in ["text", "markdown", "csv", "budget-csv", "json"] {
        let (code, out, err) = incertus(&["eval", model.to_str().unwrap(), "--format", format]);
        assert_eq!(code, 0, "{err}");
        assert!(
            raw_controls(&out).is_empty(),
            "{format}: {:?}",
            raw_controls(&out)
        );
        assert!(raw_controls(&err).is_empty(), "{format}");
    }
    let (_, md, _) = incertus(&["eval", model.to_str().unwrap(), "--format", "markdown"]);
    assert!(md.contains("&lt;b&gt;\\*x\\*&lt;/b&gt;"), "{md}");
    let (_, text, _) = incertus(&["eval", model.to_str().unwrap()]);
    assert!(text.contains("t \\x1B]0;pwned\\x07"), "{text}");
    // An error message quoting a bad key with an escape in it.
    let bad = write(&dir, "bad.toml", "\"k\\u001b[2J\" = 1\n");
    let (code, _, err) = incertus(&["eval", bad.to_str().unwrap()]);
    assert_ne!(code, 0);
    assert!(raw_controls(&err).is_empty(), "{err:?}");
    assert!(err.contains("\\x1B[2J"), "{err}");
}

#[test]
fn control_characters_from_shell_statements_are_shown_escaped() {
    let dir = scratch("term_shell");
    let out = common::shell_bytes(&dir, b"x = 1 u=0.1\n\x1b[2Jy = 2\nz = x \x1b]0;t\x07\n");
    let stdout = String::from_utf8_lossy(&out.stdout);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(raw_controls(&stdout).is_empty(), "{stdout:?}");
    assert!(raw_controls(&stderr).is_empty(), "{stderr:?}");
    assert!(stdout.contains("\\x1B[2J"), "{stdout}");
}
