//! Terminal safety: control characters that come from files or statements
//! (a title, a formula, a unit, a key, a shell line) are shown escaped in
//! everything the program prints, so an escape sequence in a model file
//! cannot set the terminal's title, clear the screen or hide text. Line
//! breaks and tabs pass; every other C0 control, DEL and the C1 controls
//! are written as `\x1B`-style escapes. JSON escapes them itself.

use std::io::Write;

/// `s` with its control characters escaped (line breaks and tabs kept).
pub fn visible(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        if is_hidden(c) {
            out.push_str(&format!("\\x{:02X}", c as u32));
        } else {
            out.push(c);
        }
    }
    out
}

fn is_hidden(c: char) -> bool {
    (c.is_control() && c != '\n' && c != '\t') || c == '\u{7f}'
}

/// A writer that passes text through [`visible`]; bytes that are not
/// UTF-8 are passed as they are.
pub struct Visible<'a>(pub &'a mut dyn Write);

impl Write for Visible<'_> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        match std::str::from_utf8(buf) {
            Ok(s) if s.chars().any(is_hidden) => self.0.write_all(visible(s).as_bytes())?,
            _ => self.0.write_all(buf)?,
        }
        Ok(buf.len())
    }

    fn flush(&mut self) -> std::io::Result<()> {
        self.0.flush()
    }
}
