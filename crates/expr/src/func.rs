//! The built-in functions: names, arity, values and domains.
//!
//! Domains follow the real-valued functions of ISO 80000-2:2019 (chapter 2-13
//! onwards): a point outside the domain is an error at point evaluation and a
//! NaN, counted, in batch evaluation.

use num_traits::Float;

/// A built-in function.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Func {
    /// √x.
    Sqrt,
    /// ∛x.
    Cbrt,
    /// Eˣ.
    Exp,
    /// Natural logarithm.
    Ln,
    /// Base-10 logarithm.
    Log10,
    /// Base-2 logarithm.
    Log2,
    /// Sine (radians).
    Sin,
    /// Cosine (radians).
    Cos,
    /// Tangent (radians).
    Tan,
    /// Arc sine.
    Asin,
    /// Arc cosine.
    Acos,
    /// Arc tangent.
    Atan,
    /// Atan2(y, x), the angle of the point (x, y).
    Atan2,
    /// Hyperbolic sine.
    Sinh,
    /// Hyperbolic cosine.
    Cosh,
    /// Hyperbolic tangent.
    Tanh,
    /// Inverse hyperbolic sine.
    Asinh,
    /// Inverse hyperbolic cosine.
    Acosh,
    /// Inverse hyperbolic tangent.
    Atanh,
    /// Absolute value.
    Abs,
    /// Sign: −1, 0 or 1.
    Sign,
    /// Hypot(a, b) = √(a² + b²).
    Hypot,
    /// Pow(x, p) = xᵖ.
    Pow,
}

/// Every function, in the order help texts list them.
pub const ALL: [Func; 23] = [
    Func::Sqrt,
    Func::Cbrt,
    Func::Exp,
    Func::Ln,
    Func::Log10,
    Func::Log2,
    Func::Sin,
    Func::Cos,
    Func::Tan,
    Func::Asin,
    Func::Acos,
    Func::Atan,
    Func::Atan2,
    Func::Sinh,
    Func::Cosh,
    Func::Tanh,
    Func::Asinh,
    Func::Acosh,
    Func::Atanh,
    Func::Abs,
    Func::Sign,
    Func::Hypot,
    Func::Pow,
];

impl Func {
    /// The name in formulas.
    pub fn name(self) -> &'static str {
        match self {
            Func::Sqrt => "sqrt",
            Func::Cbrt => "cbrt",
            Func::Exp => "exp",
            Func::Ln => "ln",
            Func::Log10 => "log10",
            Func::Log2 => "log2",
            Func::Sin => "sin",
            Func::Cos => "cos",
            Func::Tan => "tan",
            Func::Asin => "asin",
            Func::Acos => "acos",
            Func::Atan => "atan",
            Func::Atan2 => "atan2",
            Func::Sinh => "sinh",
            Func::Cosh => "cosh",
            Func::Tanh => "tanh",
            Func::Asinh => "asinh",
            Func::Acosh => "acosh",
            Func::Atanh => "atanh",
            Func::Abs => "abs",
            Func::Sign => "sign",
            Func::Hypot => "hypot",
            Func::Pow => "pow",
        }
    }

    /// The function called `name`, if any.
    pub fn from_name(name: &str) -> Option<Func> {
        ALL.iter().copied().find(|f| f.name() == name)
    }

    /// Number of arguments.
    pub fn arity(self) -> usize {
        match self {
            Func::Atan2 | Func::Hypot | Func::Pow => 2,
            _ => 1,
        }
    }

    /// Value at a point, or a description of the domain violated.
    pub fn apply<T: Float>(self, args: &[T]) -> Result<T, &'static str> {
        let zero = T::zero();
        let one = T::one();
        let a = args[0];
        Ok(match self {
            Func::Sqrt => {
                if a < zero {
                    return Err("square root of a negative number");
                }
                a.sqrt()
            }
            Func::Cbrt => a.cbrt(),
            Func::Exp => a.exp(),
            Func::Ln | Func::Log10 | Func::Log2 => {
                if a <= zero {
                    return Err("logarithm of a number that is not positive");
                }
                match self {
                    Func::Ln => a.ln(),
                    Func::Log10 => a.log10(),
                    _ => a.log2(),
                }
            }
            Func::Sin => a.sin(),
            Func::Cos => a.cos(),
            Func::Tan => a.tan(),
            Func::Asin | Func::Acos => {
                if a.abs() > one {
                    return Err("inverse sine or cosine of a number outside [-1, 1]");
                }
                if self == Func::Asin {
                    a.asin()
                } else {
                    a.acos()
                }
            }
            Func::Atan => a.atan(),
            Func::Atan2 => {
                let x = args[1];
                if a == zero && x == zero {
                    return Err("atan2 of (0, 0) is undefined");
                }
                a.atan2(x)
            }
            Func::Sinh => a.sinh(),
            Func::Cosh => a.cosh(),
            Func::Tanh => a.tanh(),
            Func::Asinh => a.asinh(),
            Func::Acosh => {
                if a < one {
                    return Err("inverse hyperbolic cosine of a number below 1");
                }
                a.acosh()
            }
            Func::Atanh => {
                if a.abs() >= one {
                    return Err("inverse hyperbolic tangent of a number outside (-1, 1)");
                }
                a.atanh()
            }
            Func::Abs => a.abs(),
            Func::Sign => {
                if a > zero {
                    one
                } else if a < zero {
                    -one
                } else {
                    zero
                }
            }
            Func::Hypot => a.hypot(args[1]),
            Func::Pow => return power(a, args[1]),
        })
    }
}

/// `base ^ exponent` on the reals for an exponent that is not a literal:
/// `powf`, refused for a negative base with a non-integer exponent.
pub fn power<T: Float>(base: T, exponent: T) -> Result<T, &'static str> {
    let zero = T::zero();
    if base == zero && exponent < zero {
        return Err("zero raised to a negative power (division by zero)");
    }
    if base < zero && exponent.fract() != zero {
        return Err("negative number raised to a non-integer power");
    }
    Ok(base.powf(exponent))
}

/// `base ^ n` for a literal integer exponent: `base * base` for 2, `powi`
/// otherwise. The tape evaluator uses the same rule, so both agree bit for bit.
pub fn power_int<T: Float>(base: T, n: i32) -> Result<T, &'static str> {
    if base == T::zero() && n < 0 {
        return Err("zero raised to a negative power (division by zero)");
    }
    Ok(if n == 2 { base * base } else { base.powi(n) })
}

/// The exponent as an `i32` when it is a literal integer of modest size:
/// `3`, or `-3` (which the parser reads as the negation of the literal 3).
pub fn literal_integer(e: &crate::Expr) -> Option<i32> {
    let v = match &e.kind {
        crate::Kind::Num(v) => *v,
        crate::Kind::Neg(a) => -a.as_num()?,
        _ => return None,
    };
    if v.fract() == 0.0 && v.abs() <= 1024.0 {
        Some(v as i32)
    } else {
        None
    }
}
