//! The record of an evaluation that a report folder carries, so that an
//! assessor can see how to repeat it and who stands behind it (ISO/IEC
//! 17025:2017, 7.5.1: technical records with enough information to repeat
//! the activity, the date, who performed and who checked it): the program
//! and its version, the command line, the date and time (UTC), every file
//! the evaluation read with its SHA-256, the settings, and a block for the
//! names of who evaluated and who checked, left blank for signing.

use std::path::PathBuf;
use std::sync::OnceLock;

use sha2::{Digest, Sha256};

/// The command line of this run, as given.
static COMMAND: OnceLock<String> = OnceLock::new();

/// Remember the command line (first call wins).
pub(crate) fn set_command(args: &[String]) {
    let quoted: Vec<String> = args
        .iter()
        .map(|a| {
            if !a.is_empty()
                && a.chars()
                    .all(|c| c.is_alphanumeric() || "-_./=:,+@%".contains(c))
            {
                a.clone()
            } else {
                format!("'{}'", a.replace('\'', "'\\''"))
            }
        })
        .collect();
    let _ = COMMAND.set(quoted.join(" "));
}

/// What a report records about its evaluation.
#[derive(Clone, Debug)]
pub struct Record {
    /// `incertus` and its version.
    pub program: String,
    /// The command line.
    pub command: String,
    /// Date and time of the evaluation, UTC, ISO 8601.
    pub date: String,
    /// Each file read, with its SHA-256 (hex), or why it could not be hashed.
    pub files: Vec<(String, String)>,
    /// The settings that shape the numbers.
    pub settings: Vec<(String, String)>,
    /// Who evaluated, and who checked (blank lines for signing when `None`).
    pub evaluated_by: Option<String>,
    pub checked_by: Option<String>,
}

/// SHA-256 of a file, read as a regular file within 256 MiB.
pub fn sha256(path: &std::path::Path) -> Result<String, String> {
    let mut r = incertus_fit::open_regular(path, 256 << 20)?;
    let mut h = Sha256::new();
    std::io::copy(&mut r, &mut h).map_err(|e| format!("cannot read the file: {e}"))?;
    Ok(h.finalize().iter().map(|b| format!("{b:02x}")).collect())
}

/// `seconds` since 1970 as `YYYY-MM-DDThh:mm:ssZ` (the civil calendar from
/// a day count, by the days-from-civil inversion; checked in the tests
/// against known dates).
pub fn utc(seconds: u64) -> String {
    let days = (seconds / 86_400) as i64;
    let rest = seconds % 86_400;
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        rest / 3600,
        rest / 60 % 60,
        rest % 60
    )
}

impl Record {
    /// The record of this run: `files` read, `settings` used.
    pub fn new(
        files: &[PathBuf],
        settings: Vec<(String, String)>,
        evaluated_by: Option<String>,
        checked_by: Option<String>,
    ) -> Self {
        let now = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| d.as_secs());
        Record {
            program: format!("incertus {}", env!("CARGO_PKG_VERSION")),
            command: COMMAND.get().cloned().unwrap_or_default(),
            date: utc(now),
            files: files
                .iter()
                .map(|p| {
                    let h = sha256(p).unwrap_or_else(|e| format!("(not hashed: {e})"));
                    (p.display().to_string(), h)
                })
                .collect(),
            settings,
            evaluated_by,
            checked_by,
        }
    }

    fn rows(&self) -> Vec<(String, String)> {
        let mut rows = vec![
            ("program".to_string(), self.program.clone()),
            ("command".to_string(), self.command.clone()),
            ("date and time (UTC)".to_string(), self.date.clone()),
        ];
        for (f, h) in &self.files {
            rows.push((format!("file {f}"), format!("SHA-256 {h}")));
        }
        rows.extend(self.settings.iter().cloned());
        rows
    }

    /// As Markdown: a table, then the signing block.
    pub fn markdown(&self, escape: impl Fn(&str) -> String) -> String {
        let mut s = String::from("## Record of the evaluation\n\n| | |\n|---|---|\n");
        for (k, v) in self.rows() {
            s.push_str(&format!("| {} | {} |\n", escape(&k), escape(&v)));
        }
        s.push_str(&format!(
            "\nEvaluated by: {}\n\nChecked by: {}\n\n",
            self.evaluated_by
                .as_deref()
                .map_or("____________________  date ________".into(), &escape),
            self.checked_by
                .as_deref()
                .map_or("____________________  date ________".into(), &escape)
        ));
        s
    }

    /// As HTML: a table, then the signing block.
    pub fn html(&self, esc: impl Fn(&str) -> String) -> String {
        let mut s = String::from(
            "<h2 id=\"record\">Record of the evaluation</h2>\n<table class=\"record\">\n",
        );
        for (k, v) in self.rows() {
            s.push_str(&format!(
                "<tr><th>{}</th><td>{}</td></tr>\n",
                esc(&k),
                esc(&v)
            ));
        }
        s.push_str("</table>\n<p class=\"sign\">");
        for (what, who) in [
            ("Evaluated by", &self.evaluated_by),
            ("Checked by", &self.checked_by),
        ] {
            s.push_str(&format!(
                "{what}: {}<br/>\n",
                who.as_deref()
                    .map_or("____________________ &#160; date ________".into(), &esc)
            ));
        }
        s.push_str("</p>\n");
        s
    }

    /// As JSON.
    pub fn json(&self) -> serde_json::Value {
        serde_json::json!({
            "program": self.program,
            "command": self.command,
            "date": self.date,
            "files": self.files.iter().map(|(f, h)| serde_json::json!({"path": f, "sha256": h})).collect::<Vec<_>>(),
            "settings": self.settings.iter().map(|(k, v)| serde_json::json!({"name": k, "value": v})).collect::<Vec<_>>(),
            "evaluated_by": self.evaluated_by,
            "checked_by": self.checked_by,
        })
    }
}
