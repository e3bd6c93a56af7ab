//! A dual number `re + eps·ε` (ε² = 0) implementing `num_traits::Float`, for
//! checking symbolic derivatives against forward-mode automatic
//! differentiation: evaluating a formula on `Dual::var(x)` gives f(x) and
//! f'(x) in one pass, by the chain rule applied operation by operation
//! (common practice, no published source).
#![allow(dead_code)]

use num_traits::{Float, Num, NumCast, One, ToPrimitive, Zero};
use std::num::FpCategory;
use std::ops::{Add, Div, Mul, Neg, Rem, Sub};

#[derive(Clone, Copy, Debug, PartialEq, PartialOrd)]
pub struct Dual {
    pub re: f64,
    pub eps: f64,
}

impl Dual {
    pub fn var(re: f64) -> Self {
        Dual { re, eps: 1.0 }
    }
    pub fn cst(re: f64) -> Self {
        Dual { re, eps: 0.0 }
    }
    fn chain(self, v: f64, d: f64) -> Self {
        Dual {
            re: v,
            eps: self.eps * d,
        }
    }
}

impl Add for Dual {
    type Output = Dual;
    fn add(self, o: Dual) -> Dual {
        Dual {
            re: self.re + o.re,
            eps: self.eps + o.eps,
        }
    }
}
impl Sub for Dual {
    type Output = Dual;
    fn sub(self, o: Dual) -> Dual {
        Dual {
            re: self.re - o.re,
            eps: self.eps - o.eps,
        }
    }
}
impl Mul for Dual {
    type Output = Dual;
    fn mul(self, o: Dual) -> Dual {
        Dual {
            re: self.re * o.re,
            eps: self.eps * o.re + self.re * o.eps,
        }
    }
}
impl Div for Dual {
    type Output = Dual;
    fn div(self, o: Dual) -> Dual {
        Dual {
            re: self.re / o.re,
            eps: (self.eps * o.re - self.re * o.eps) / (o.re * o.re),
        }
    }
}
impl Rem for Dual {
    type Output = Dual;
    fn rem(self, o: Dual) -> Dual {
        Dual {
            re: self.re % o.re,
            eps: self.eps,
        }
    }
}
impl Neg for Dual {
    type Output = Dual;
    fn neg(self) -> Dual {
        Dual {
            re: -self.re,
            eps: -self.eps,
        }
    }
}
impl Zero for Dual {
    fn zero() -> Self {
        Dual::cst(0.0)
    }
    fn is_zero(&self) -> bool {
        self.re == 0.0
    }
}
impl One for Dual {
    fn one() -> Self {
        Dual::cst(1.0)
    }
}
impl Num for Dual {
    type FromStrRadixErr = num_traits::ParseFloatError;
    fn from_str_radix(s: &str, r: u32) -> Result<Self, Self::FromStrRadixErr> {
        f64::from_str_radix(s, r).map(Dual::cst)
    }
}
impl ToPrimitive for Dual {
    fn to_i64(&self) -> Option<i64> {
        self.re.to_i64()
    }
    fn to_u64(&self) -> Option<u64> {
        self.re.to_u64()
    }
    fn to_f64(&self) -> Option<f64> {
        Some(self.re)
    }
}
impl NumCast for Dual {
    fn from<T: ToPrimitive>(n: T) -> Option<Self> {
        n.to_f64().map(Dual::cst)
    }
}

impl Float for Dual {
    fn nan() -> Self {
        Dual::cst(f64::NAN)
    }
    fn infinity() -> Self {
        Dual::cst(f64::INFINITY)
    }
    fn neg_infinity() -> Self {
        Dual::cst(f64::NEG_INFINITY)
    }
    fn neg_zero() -> Self {
        Dual::cst(-0.0)
    }
    fn min_value() -> Self {
        Dual::cst(f64::MIN)
    }
    fn min_positive_value() -> Self {
        Dual::cst(f64::MIN_POSITIVE)
    }
    fn max_value() -> Self {
        Dual::cst(f64::MAX)
    }
    fn is_nan(self) -> bool {
        self.re.is_nan() || self.eps.is_nan()
    }
    fn is_infinite(self) -> bool {
        self.re.is_infinite()
    }
    fn is_finite(self) -> bool {
        self.re.is_finite() && self.eps.is_finite()
    }
    fn is_normal(self) -> bool {
        self.re.is_normal()
    }
    fn classify(self) -> FpCategory {
        self.re.classify()
    }
    fn floor(self) -> Self {
        Dual::cst(self.re.floor())
    }
    fn ceil(self) -> Self {
        Dual::cst(self.re.ceil())
    }
    fn round(self) -> Self {
        Dual::cst(self.re.round())
    }
    fn trunc(self) -> Self {
        Dual::cst(self.re.trunc())
    }
    fn fract(self) -> Self {
        Dual {
            re: self.re.fract(),
            eps: self.eps,
        }
    }
    fn abs(self) -> Self {
        self.chain(self.re.abs(), self.re.signum())
    }
    fn signum(self) -> Self {
        Dual::cst(self.re.signum())
    }
    fn is_sign_positive(self) -> bool {
        self.re.is_sign_positive()
    }
    fn is_sign_negative(self) -> bool {
        self.re.is_sign_negative()
    }
    fn mul_add(self, a: Self, b: Self) -> Self {
        self * a + b
    }
    fn recip(self) -> Self {
        Dual::one() / self
    }
    fn powi(self, n: i32) -> Self {
        self.chain(self.re.powi(n), n as f64 * self.re.powi(n - 1))
    }
    fn powf(self, n: Self) -> Self {
        let v = self.re.powf(n.re);
        // d(a^b) = b a^(b-1) da + a^b ln(a) db; the second term only when b varies.
        let mut eps = n.re * self.re.powf(n.re - 1.0) * self.eps;
        if n.eps != 0.0 {
            eps += v * self.re.ln() * n.eps;
        }
        Dual { re: v, eps }
    }
    fn sqrt(self) -> Self {
        let s = self.re.sqrt();
        self.chain(s, 0.5 / s)
    }
    fn exp(self) -> Self {
        let e = self.re.exp();
        self.chain(e, e)
    }
    fn exp2(self) -> Self {
        let e = self.re.exp2();
        self.chain(e, e * std::f64::consts::LN_2)
    }
    fn ln(self) -> Self {
        self.chain(self.re.ln(), 1.0 / self.re)
    }
    fn log(self, b: Self) -> Self {
        self.ln() / b.ln()
    }
    fn log2(self) -> Self {
        self.chain(self.re.log2(), 1.0 / (self.re * std::f64::consts::LN_2))
    }
    fn log10(self) -> Self {
        self.chain(self.re.log10(), 1.0 / (self.re * std::f64::consts::LN_10))
    }
    fn max(self, o: Self) -> Self {
        if self.re >= o.re {
            self
        } else {
            o
        }
    }
    fn min(self, o: Self) -> Self {
        if self.re <= o.re {
            self
        } else {
            o
        }
    }
    #[allow(deprecated)]
    fn abs_sub(self, o: Self) -> Self {
        if self.re > o.re {
            self - o
        } else {
            Dual::zero()
        }
    }
    fn cbrt(self) -> Self {
        let c = self.re.cbrt();
        self.chain(c, 1.0 / (3.0 * c * c))
    }
    fn hypot(self, o: Self) -> Self {
        (self * self + o * o).sqrt()
    }
    fn sin(self) -> Self {
        self.chain(self.re.sin(), self.re.cos())
    }
    fn cos(self) -> Self {
        self.chain(self.re.cos(), -self.re.sin())
    }
    fn tan(self) -> Self {
        let c = self.re.cos();
        self.chain(self.re.tan(), 1.0 / (c * c))
    }
    fn asin(self) -> Self {
        self.chain(self.re.asin(), 1.0 / (1.0 - self.re * self.re).sqrt())
    }
    fn acos(self) -> Self {
        self.chain(self.re.acos(), -1.0 / (1.0 - self.re * self.re).sqrt())
    }
    fn atan(self) -> Self {
        self.chain(self.re.atan(), 1.0 / (1.0 + self.re * self.re))
    }
    fn atan2(self, x: Self) -> Self {
        let r2 = self.re * self.re + x.re * x.re;
        Dual {
            re: self.re.atan2(x.re),
            eps: (x.re * self.eps - self.re * x.eps) / r2,
        }
    }
    fn sin_cos(self) -> (Self, Self) {
        (self.sin(), self.cos())
    }
    fn exp_m1(self) -> Self {
        self.chain(self.re.exp_m1(), self.re.exp())
    }
    fn ln_1p(self) -> Self {
        self.chain(self.re.ln_1p(), 1.0 / (1.0 + self.re))
    }
    fn sinh(self) -> Self {
        self.chain(self.re.sinh(), self.re.cosh())
    }
    fn cosh(self) -> Self {
        self.chain(self.re.cosh(), self.re.sinh())
    }
    fn tanh(self) -> Self {
        let c = self.re.cosh();
        self.chain(self.re.tanh(), 1.0 / (c * c))
    }
    fn asinh(self) -> Self {
        self.chain(self.re.asinh(), 1.0 / (self.re * self.re + 1.0).sqrt())
    }
    fn acosh(self) -> Self {
        self.chain(self.re.acosh(), 1.0 / (self.re * self.re - 1.0).sqrt())
    }
    fn atanh(self) -> Self {
        self.chain(self.re.atanh(), 1.0 / (1.0 - self.re * self.re))
    }
    fn integer_decode(self) -> (u64, i16, i8) {
        self.re.integer_decode()
    }
}
