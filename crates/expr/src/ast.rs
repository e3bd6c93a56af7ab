//! The syntax tree of a formula.
//!
//! Sums and products are n-ary (`a - b + c` is one [`Kind::Sum`] with three
//! signed terms), so a long flat formula gives a shallow tree and every walk
//! over it stays far from the stack limit; only parentheses, unary signs,
//! powers and calls nest, and the parser bounds their depth.
//!
//! Every node keeps the byte span of the text it came from. Nodes made by
//! differentiation or simplification keep the span of the node they were
//! derived from, so an error in a derivative still points into the formula
//! the user wrote.

use crate::func::Func;

/// A half-open byte range `start..end` into the formula text.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
pub struct Span {
    /// First byte.
    pub start: usize,
    /// One past the last byte.
    pub end: usize,
}

impl Span {
    /// The span from `start` to `end`.
    pub fn new(start: usize, end: usize) -> Self {
        Span { start, end }
    }

    /// The smallest span covering both.
    pub fn join(self, other: Span) -> Span {
        Span::new(self.start.min(other.start), self.end.max(other.end))
    }
}

/// One node of a formula with the span of its text.
#[derive(Clone, Debug)]
pub struct Expr {
    /// What the node is.
    pub kind: Kind,
    /// The text it came from.
    pub span: Span,
}

/// What a node is.
#[derive(Clone, Debug)]
pub enum Kind {
    /// A finite numeric literal.
    Num(f64),
    /// The constant π.
    Pi,
    /// A named quantity.
    Var(String),
    /// Unary minus.
    Neg(Box<Expr>),
    /// `t0 ± t1 ± ...`, evaluated left to right.
    Sum(Vec<Term>),
    /// `f0 */ f1 */ ...`, evaluated left to right.
    Product(Vec<Factor>),
    /// `base ^ exponent`.
    Pow(Box<Expr>, Box<Expr>),
    /// A call of a built-in function.
    Call(Func, Vec<Expr>),
}

/// A term of a sum; `negative` means it is subtracted.
#[derive(Clone, Debug)]
pub struct Term {
    /// Whether the term is subtracted.
    pub negative: bool,
    /// The term.
    pub expr: Expr,
}

/// A factor of a product; `divide` means the running product is divided by it.
#[derive(Clone, Debug)]
pub struct Factor {
    /// Whether the factor divides.
    pub divide: bool,
    /// The factor.
    pub expr: Expr,
}

impl Expr {
    /// A node of `kind` from the text at `span`.
    pub fn new(kind: Kind, span: Span) -> Self {
        Expr { kind, span }
    }

    /// A number.
    pub fn num(v: f64, span: Span) -> Self {
        Expr::new(Kind::Num(v), span)
    }

    /// A name.
    pub fn var(name: impl Into<String>, span: Span) -> Self {
        Expr::new(Kind::Var(name.into()), span)
    }

    /// The numeric value if this node is a literal.
    pub fn as_num(&self) -> Option<f64> {
        match self.kind {
            Kind::Num(v) => Some(v),
            _ => None,
        }
    }

    /// A hash of the structure, ignoring spans, consistent with
    /// [`Expr::same`]: equal structures hash equally (`0.0` and `-0.0`
    /// alike). Used to find equal terms and bases in linear time.
    pub fn shape_hash(&self) -> u64 {
        use std::hash::{Hash, Hasher};
        fn walk(e: &Expr, h: &mut std::collections::hash_map::DefaultHasher) {
            std::mem::discriminant(&e.kind).hash(h);
            match &e.kind {
                Kind::Num(v) => (if *v == 0.0 { 0.0f64 } else { *v }).to_bits().hash(h),
                Kind::Pi => {}
                Kind::Var(n) => n.hash(h),
                Kind::Neg(a) => walk(a, h),
                Kind::Sum(ts) => {
                    ts.len().hash(h);
                    for t in ts {
                        t.negative.hash(h);
                        walk(&t.expr, h);
                    }
                }
                Kind::Product(fs) => {
                    fs.len().hash(h);
                    for f in fs {
                        f.divide.hash(h);
                        walk(&f.expr, h);
                    }
                }
                Kind::Pow(a, b) => {
                    walk(a, h);
                    walk(b, h);
                }
                Kind::Call(f, args) => {
                    f.hash(h);
                    args.len().hash(h);
                    for a in args {
                        walk(a, h);
                    }
                }
            }
        }
        let mut h = std::collections::hash_map::DefaultHasher::new();
        walk(self, &mut h);
        h.finish()
    }

    /// Structural equality, ignoring spans. Literals compare by value
    /// (`0.0` and `-0.0` are the same).
    pub fn same(&self, other: &Expr) -> bool {
        match (&self.kind, &other.kind) {
            (Kind::Num(a), Kind::Num(b)) => a == b,
            (Kind::Pi, Kind::Pi) => true,
            (Kind::Var(a), Kind::Var(b)) => a == b,
            (Kind::Neg(a), Kind::Neg(b)) => a.same(b),
            (Kind::Sum(a), Kind::Sum(b)) => {
                a.len() == b.len()
                    && a.iter()
                        .zip(b)
                        .all(|(x, y)| x.negative == y.negative && x.expr.same(&y.expr))
            }
            (Kind::Product(a), Kind::Product(b)) => {
                a.len() == b.len()
                    && a.iter()
                        .zip(b)
                        .all(|(x, y)| x.divide == y.divide && x.expr.same(&y.expr))
            }
            (Kind::Pow(a, b), Kind::Pow(c, d)) => a.same(c) && b.same(d),
            (Kind::Call(f, a), Kind::Call(g, b)) => {
                f == g && a.len() == b.len() && a.iter().zip(b).all(|(x, y)| x.same(y))
            }
            _ => false,
        }
    }

    /// The direct children of this node, in order.
    pub fn children(&self) -> Vec<&Expr> {
        match &self.kind {
            Kind::Num(_) | Kind::Pi | Kind::Var(_) => Vec::new(),
            Kind::Neg(a) => vec![a],
            Kind::Sum(ts) => ts.iter().map(|t| &t.expr).collect(),
            Kind::Product(fs) => fs.iter().map(|f| &f.expr).collect(),
            Kind::Pow(a, b) => vec![a, b],
            Kind::Call(_, args) => args.iter().collect(),
        }
    }

    /// Number of nodes in the tree (a sum of n terms counts as n - 1 operator
    /// nodes plus its terms, as a binary tree would; likewise products), so
    /// that node counts compare with other tools' binary trees.
    pub fn node_count(&self) -> usize {
        let mut n = 0;
        let mut stack = vec![self];
        while let Some(e) = stack.pop() {
            n += match &e.kind {
                Kind::Sum(ts) => ts.len().saturating_sub(1).max(1),
                Kind::Product(fs) => fs.len().saturating_sub(1).max(1),
                _ => 1,
            };
            stack.extend(e.children());
        }
        n
    }

    /// Depth of the tree (a leaf has depth 1).
    pub fn depth(&self) -> usize {
        let mut best = 0;
        let mut stack = vec![(self, 1usize)];
        while let Some((e, d)) = stack.pop() {
            best = best.max(d);
            stack.extend(e.children().into_iter().map(|c| (c, d + 1)));
        }
        best
    }

    /// The names the formula uses, in order of first appearance.
    pub fn names(&self) -> Vec<String> {
        let mut out: Vec<String> = Vec::new();
        self.visit_names(&mut |n| {
            if !out.iter().any(|o| o == n) {
                out.push(n.to_string());
            }
        });
        out
    }

    fn visit_names(&self, f: &mut dyn FnMut(&str)) {
        if let Kind::Var(n) = &self.kind {
            f(n);
        }
        for c in self.children() {
            c.visit_names(f);
        }
    }

    /// Whether the formula depends on `name`.
    pub fn depends_on(&self, name: &str) -> bool {
        match &self.kind {
            Kind::Var(n) => n == name,
            Kind::Num(_) | Kind::Pi => false,
            Kind::Neg(a) => a.depends_on(name),
            Kind::Sum(ts) => ts.iter().any(|t| t.expr.depends_on(name)),
            Kind::Product(fs) => fs.iter().any(|f| f.expr.depends_on(name)),
            Kind::Pow(a, b) => a.depends_on(name) || b.depends_on(name),
            Kind::Call(_, args) => args.iter().any(|a| a.depends_on(name)),
        }
    }

    /// Whether the formula contains no names (it is a constant).
    pub fn is_constant(&self) -> bool {
        match &self.kind {
            Kind::Var(_) => false,
            _ => self.children().iter().all(|c| c.is_constant()),
        }
    }
}
