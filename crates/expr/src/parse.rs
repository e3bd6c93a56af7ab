//! Text to syntax tree.
//!
//! Tokens are recognised with `nom` combinators; the grammar is a
//! recursive-descent parser over the tokens that counts its own nesting, so
//! a formula nested deeper than [`Limits::max_depth`] is an error and never a
//! stack overflow. Grammar, loosest binding first:
//!
//! ```text
//! formula := sum
//! sum     := product (('+' | '-') product)*
//! product := unary (('*' | '/') unary)*
//! unary   := ('-' | '+') unary | power
//! power   := primary ('^' unary)?          right-associative: a^b^c = a^(b^c)
//! primary := number | name | name '(' sum (',' sum)* ')' | '(' sum ')'
//! ```
//!
//! So `-x^2` is `-(x^2)` and `x^-2` is `x^(-2)`, the convention of
//! mathematical writing (common practice, no published source). `**` is read
//! as `^`; `·` and `×` as `*`; `÷` as `/`; the minus sign U+2212 as `-`, so that
//! formulas pasted from documents parse.

use nom::branch::alt;
use nom::bytes::complete::{tag, take_while};
use nom::character::complete::{char, digit0, digit1, one_of, satisfy};
use nom::combinator::{opt, recognize};
use nom::{IResult, Parser};

use crate::ast::{Expr, Factor, Kind, Span, Term};
use crate::error::{ErrorKind, FormulaError};
use crate::func::{Func, ALL};

/// Size limits applied while parsing.
#[derive(Clone, Copy, Debug)]
pub struct Limits {
    /// Longest accepted formula, in bytes.
    pub max_len: usize,
    /// Deepest accepted nesting of parentheses, calls, signs and powers.
    pub max_depth: usize,
}

impl Default for Limits {
    fn default() -> Self {
        Limits {
            max_len: 1 << 20,
            max_depth: 256,
        }
    }
}

/// Parse a formula with the default [`Limits`].
///
/// ```
/// let f = incertus_expr::parse("x^2*sin(y)").unwrap();
/// assert_eq!(f.names(), ["x", "y"]);
/// ```
pub fn parse(src: &str) -> Result<Expr, FormulaError> {
    parse_with(src, Limits::default())
}

/// Parse a formula with explicit limits.
pub fn parse_with(src: &str, limits: Limits) -> Result<Expr, FormulaError> {
    if src.len() > limits.max_len {
        return Err(FormulaError::new(
            ErrorKind::Limit,
            format!(
                "the formula is {} bytes long; the limit is {} bytes",
                src.len(),
                limits.max_len
            ),
            Span::new(limits.max_len, src.len()),
        ));
    }
    let tokens = lex(src)?;
    let mut p = Parser_ {
        src,
        tokens,
        pos: 0,
        depth: 0,
        limits,
    };
    if p.tokens.len() == 1 {
        return Err(FormulaError::new(
            ErrorKind::Syntax,
            "the formula is empty",
            Span::new(0, src.len()),
        ));
    }
    let e = p.sum()?;
    let t = p.peek();
    match t.tok {
        Tok::End => Ok(e),
        Tok::Close => Err(FormulaError::new(
            ErrorKind::Syntax,
            "this ')' has no matching '('",
            t.span,
        )),
        Tok::Comma => Err(FormulaError::new(
            ErrorKind::Syntax,
            "a ',' separates arguments and belongs inside a function call",
            t.span,
        )),
        _ => Err(FormulaError::new(
            ErrorKind::Syntax,
            format!(
                "expected an operator (+ - * / ^) before {}",
                describe(src, &t)
            ),
            t.span,
        )),
    }
}

#[derive(Clone, Debug, PartialEq)]
enum Tok {
    Num(f64),
    Name,
    Plus,
    Minus,
    Star,
    Slash,
    Caret,
    Open,
    Close,
    Comma,
    End,
}

#[derive(Clone, Debug)]
struct Token {
    tok: Tok,
    span: Span,
}

fn describe(src: &str, t: &Token) -> String {
    match t.tok {
        Tok::End => "the end of the formula".to_string(),
        Tok::Num(_) => format!("the number `{}`", &src[t.span.start..t.span.end]),
        Tok::Name => format!("the name `{}`", &src[t.span.start..t.span.end]),
        _ => format!("`{}`", &src[t.span.start..t.span.end]),
    }
}

fn number(i: &str) -> IResult<&str, &str> {
    recognize((
        alt((
            recognize((digit1, opt((char('.'), digit0)))),
            recognize((char('.'), digit1)),
        )),
        opt((one_of("eE"), opt(one_of("+-")), digit1)),
    ))
    .parse(i)
}

fn name(i: &str) -> IResult<&str, &str> {
    recognize((
        satisfy(|c| c.is_alphabetic() || c == '_'),
        take_while(|c: char| c.is_alphanumeric() || c == '_'),
    ))
    .parse(i)
}

fn symbol(i: &str) -> IResult<&str, Tok> {
    alt((
        tag("**").map(|_| Tok::Caret),
        one_of("+-*/^(),·×÷\u{2212}").map(|c| match c {
            '+' => Tok::Plus,
            '-' | '\u{2212}' => Tok::Minus,
            '*' | '·' | '×' => Tok::Star,
            '/' | '÷' => Tok::Slash,
            '^' => Tok::Caret,
            '(' => Tok::Open,
            ')' => Tok::Close,
            _ => Tok::Comma,
        }),
    ))
    .parse(i)
}

fn lex(src: &str) -> Result<Vec<Token>, FormulaError> {
    let mut out = Vec::new();
    let mut rest = src;
    loop {
        rest = rest.trim_start();
        let at = src.len() - rest.len();
        if rest.is_empty() {
            out.push(Token {
                tok: Tok::End,
                span: Span::new(at, at),
            });
            return Ok(out);
        }
        let (next, tok) = if let Ok((next, _)) = number(rest) {
            // The text consumed (taken from the lengths, which is what the
            // spans use as well).
            let text = &rest[..rest.len() - next.len()];
            let v: f64 = text.parse().map_err(|_| {
                FormulaError::new(
                    ErrorKind::Syntax,
                    "this number cannot be read",
                    Span::new(at, at + text.len()),
                )
            })?;
            if !v.is_finite() {
                return Err(FormulaError::new(
                    ErrorKind::Syntax,
                    "this number is too large for double precision",
                    Span::new(at, at + text.len()),
                ));
            }
            (next, Tok::Num(v))
        } else if let Ok((next, _)) = name(rest) {
            (next, Tok::Name)
        } else if let Ok((next, tok)) = symbol(rest) {
            (next, tok)
        } else {
            let c = rest.chars().next().expect("rest is not empty");
            return Err(FormulaError::new(
                ErrorKind::Syntax,
                format!(
                    "unexpected character `{}`; a formula holds numbers, names, \
                     + - * / ^, parentheses and function calls",
                    c
                ),
                Span::new(at, at + c.len_utf8()),
            ));
        };
        let end = src.len() - next.len();
        out.push(Token {
            tok,
            span: Span::new(at, end),
        });
        rest = next;
    }
}

// Named with a trailing underscore so that it does not clash with nom's trait.
struct Parser_<'a> {
    src: &'a str,
    tokens: Vec<Token>,
    pos: usize,
    depth: usize,
    limits: Limits,
}

impl<'a> Parser_<'a> {
    fn peek(&self) -> Token {
        self.tokens[self.pos].clone()
    }

    fn bump(&mut self) -> Token {
        let t = self.tokens[self.pos].clone();
        if t.tok != Tok::End {
            self.pos += 1;
        }
        t
    }

    fn enter(&mut self, span: Span) -> Result<(), FormulaError> {
        self.depth += 1;
        if self.depth > self.limits.max_depth {
            return Err(FormulaError::new(
                ErrorKind::Limit,
                format!(
                    "the formula nests deeper than {} levels (parentheses, calls, signs \
                     and powers); split it into named parts",
                    self.limits.max_depth
                ),
                span,
            ));
        }
        Ok(())
    }

    fn leave(&mut self) {
        self.depth -= 1;
    }

    fn sum(&mut self) -> Result<Expr, FormulaError> {
        let first = self.product()?;
        let mut terms = vec![Term {
            negative: false,
            expr: first,
        }];
        loop {
            let negative = match self.peek().tok {
                Tok::Plus => false,
                Tok::Minus => true,
                _ => break,
            };
            self.bump();
            let expr = self.product()?;
            terms.push(Term { negative, expr });
        }
        if terms.len() == 1 {
            return Ok(terms.pop().expect("one term").expr);
        }
        let span = terms[0].expr.span.join(terms[terms.len() - 1].expr.span);
        Ok(Expr::new(Kind::Sum(terms), span))
    }

    fn product(&mut self) -> Result<Expr, FormulaError> {
        let first = self.unary()?;
        let mut factors = vec![Factor {
            divide: false,
            expr: first,
        }];
        loop {
            let divide = match self.peek().tok {
                Tok::Star => false,
                Tok::Slash => true,
                _ => break,
            };
            self.bump();
            let expr = self.unary()?;
            factors.push(Factor { divide, expr });
        }
        if factors.len() == 1 {
            return Ok(factors.pop().expect("one factor").expr);
        }
        let span = factors[0]
            .expr
            .span
            .join(factors[factors.len() - 1].expr.span);
        Ok(Expr::new(Kind::Product(factors), span))
    }

    fn unary(&mut self) -> Result<Expr, FormulaError> {
        let t = self.peek();
        match t.tok {
            Tok::Minus | Tok::Plus => {
                self.bump();
                self.enter(t.span)?;
                let inner = self.unary()?;
                self.leave();
                let span = t.span.join(inner.span);
                if t.tok == Tok::Plus {
                    Ok(Expr::new(inner.kind, span))
                } else {
                    Ok(Expr::new(Kind::Neg(Box::new(inner)), span))
                }
            }
            _ => self.power(),
        }
    }

    fn power(&mut self) -> Result<Expr, FormulaError> {
        let base = self.primary()?;
        let t = self.peek();
        if t.tok != Tok::Caret {
            return Ok(base);
        }
        self.bump();
        self.enter(t.span)?;
        let exponent = self.unary()?;
        self.leave();
        let span = base.span.join(exponent.span);
        Ok(Expr::new(
            Kind::Pow(Box::new(base), Box::new(exponent)),
            span,
        ))
    }

    fn primary(&mut self) -> Result<Expr, FormulaError> {
        let t = self.bump();
        match t.tok {
            Tok::Num(v) => Ok(Expr::num(v, t.span)),
            Tok::Name => {
                let text = &self.src[t.span.start..t.span.end];
                if self.peek().tok == Tok::Open {
                    return self.call(text, t.span);
                }
                if text == "pi" || text == "π" {
                    return Ok(Expr::new(Kind::Pi, t.span));
                }
                if Func::from_name(text).is_some() {
                    return Err(FormulaError::new(
                        ErrorKind::Name,
                        format!("`{text}` is a function; write {text}(...)"),
                        t.span,
                    ));
                }
                Ok(Expr::var(text, t.span))
            }
            Tok::Open => {
                self.enter(t.span)?;
                let inner = self.sum()?;
                self.leave();
                let close = self.peek();
                if close.tok != Tok::Close {
                    return Err(self.unclosed(t.span, &close));
                }
                self.bump();
                Ok(Expr::new(inner.kind, t.span.join(close.span)))
            }
            _ => Err(FormulaError::new(
                ErrorKind::Syntax,
                format!("expected a number, a name or '(' but found {}", {
                    describe(self.src, &t)
                }),
                t.span,
            )),
        }
    }

    fn unclosed(&self, open: Span, found: &Token) -> FormulaError {
        let col = self.src[..open.start].chars().count() + 1;
        FormulaError::new(
            ErrorKind::Syntax,
            format!(
                "expected ')' to close the '(' at column {col} but found {}",
                describe(self.src, found)
            ),
            found.span,
        )
    }

    fn call(&mut self, text: &str, name_span: Span) -> Result<Expr, FormulaError> {
        let func = match Func::from_name(text) {
            Some(f) => f,
            None => return Err(unknown_function(text, name_span)),
        };
        let open = self.bump();
        self.enter(open.span)?;
        let mut args = Vec::new();
        if self.peek().tok != Tok::Close {
            loop {
                args.push(self.sum()?);
                if self.peek().tok == Tok::Comma {
                    self.bump();
                    continue;
                }
                break;
            }
        }
        self.leave();
        let close = self.peek();
        if close.tok != Tok::Close {
            return Err(self.unclosed(open.span, &close));
        }
        self.bump();
        let span = name_span.join(close.span);
        if args.len() != func.arity() {
            let want = func.arity();
            return Err(FormulaError::new(
                ErrorKind::Name,
                format!(
                    "`{}` takes {} argument{}, found {}",
                    func.name(),
                    want,
                    if want == 1 { "" } else { "s" },
                    args.len()
                ),
                span,
            ));
        }
        Ok(Expr::new(Kind::Call(func, args), span))
    }
}

fn unknown_function(text: &str, span: Span) -> FormulaError {
    let hint = match text {
        "log" => "; write ln for the natural logarithm or log10 for the common one".to_string(),
        "pi" | "π" => "; pi is a constant, not a function".to_string(),
        "sq" | "square" => "; write x^2".to_string(),
        "arcsin" | "arccos" | "arctan" => format!("; write a{}", &text[3..]),
        _ => {
            let names: Vec<&str> = ALL.iter().map(|f| f.name()).collect();
            format!("; known functions: {}", names.join(", "))
        }
    };
    FormulaError::new(
        ErrorKind::Name,
        format!("unknown function `{text}`{hint}"),
        span,
    )
}
