//! Errors about a formula, each with the byte span it concerns and a
//! rendering that puts a caret under the offending text.

use crate::ast::Span;

/// What went wrong, broadly.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum ErrorKind {
    /// The text is not a formula (unexpected character, missing operand, ...).
    Syntax,
    /// An unknown function, a wrong number of arguments, an unknown name.
    Name,
    /// The formula exceeds a size or nesting limit.
    Limit,
    /// A value outside a function's domain, or a division by zero.
    Domain,
}

/// An error about a formula.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("{message}")]
pub struct FormulaError {
    /// What went wrong, broadly.
    pub kind: ErrorKind,
    /// What went wrong, for a person.
    pub message: String,
    /// The part of the formula concerned.
    pub span: Span,
}

impl FormulaError {
    /// An error of `kind` at `span`.
    pub fn new(kind: ErrorKind, message: impl Into<String>, span: Span) -> Self {
        FormulaError {
            kind,
            message: message.into(),
            span,
        }
    }

    /// The message, the formula and a caret line under the span:
    ///
    /// ```
    /// let src = "2*(x+";
    /// let err = incertus_expr::parse(src).unwrap_err();
    /// let text = err.render(src);
    /// assert!(text.contains("2*(x+\n"));
    /// assert!(text.ends_with("     ^"));
    /// ```
    pub fn render(&self, src: &str) -> String {
        format!("{}\n{}", self.message, caret(src, self.span))
    }
}

/// Two lines: the formula (or a window of it around the span, for long
/// formulas) and carets under the span. Columns count characters, not bytes.
pub fn caret(src: &str, span: Span) -> String {
    const WINDOW: usize = 38;
    let start = floor_boundary(src, span.start.min(src.len()));
    let end = floor_boundary(src, span.end.min(src.len()).max(start));
    // Show a single line: replace line breaks so the caret stays aligned.
    let flat: String = src
        .chars()
        .map(|c| {
            if c == '\n' || c == '\r' || c == '\t' {
                ' '
            } else {
                c
            }
        })
        .collect();
    let col = src[..start].chars().count();
    let width = src[start..end].chars().count().max(1);
    let total = flat.chars().count();
    let (from, to) = if total > 2 * WINDOW + 10 {
        let from = col.saturating_sub(WINDOW);
        // A span longer than the window is shown by its start.
        let to = (col + width.min(2 * WINDOW) + WINDOW).min(total);
        (from, to)
    } else {
        (0, total)
    };
    let mut line = String::new();
    let mut pad = col - from;
    if from > 0 {
        line.push_str("...");
        pad += 3;
    }
    line.extend(flat.chars().skip(from).take(to - from));
    if to < total {
        line.push_str("...");
    }
    let width = width.min(to.saturating_sub(col).max(1));
    format!("{}\n{}{}", line, " ".repeat(pad), "^".repeat(width))
}

fn floor_boundary(s: &str, mut i: usize) -> usize {
    while i > 0 && !s.is_char_boundary(i) {
        i -= 1;
    }
    i
}
