//! The conversions the convergence checks and the cost measurements need
//! on top of the runtime's [`Observer`] interface: the plant's f64 signals
//! into the observer's scalar and the estimate back out.

use lookout::{Fixed, Observer, Q15, Q31};

/// A scalar the firmware steps in: f32, Q31 or Q15.
pub trait Word: Copy {
    /// The scalar's name as printed: `f32`, `q31` or `q15`.
    const NAME: &'static str;
    /// `v` at scale exponent `e` (ignored by f32), saturated when out of range.
    fn of(v: f64, e: i8) -> Self;
    /// Back to f64.
    fn to_f64(self, e: i8) -> f64;
}

impl Word for f32 {
    const NAME: &'static str = "f32";
    fn of(v: f64, _: i8) -> Self {
        v as f32
    }
    fn to_f64(self, _: i8) -> f64 {
        f64::from(self)
    }
}

macro_rules! q_word {
    ($($q:ident, $name:literal;)*) => {$(
        impl Word for $q {
            const NAME: &'static str = $name;
            fn of(v: f64, e: i8) -> Self {
                $q::from_real(v, e).unwrap_or(if v > 0.0 { $q::MAX } else { $q::MIN })
            }
            fn to_f64(self, e: i8) -> f64 {
                self.to_real(e)
            }
        }
    )*};
}

q_word! {
    Q31, "q31";
    Q15, "q15";
}

/// `v` in scalar `W` at the exponents `e` (none for f32).
fn convert<W: Word, const K: usize>(v: &[f64; K], e: Option<&[i8; K]>) -> [W; K] {
    core::array::from_fn(|i| {
        let x = v.get(i).copied().unwrap_or(0.0);
        W::of(x, e.and_then(|e| e.get(i)).copied().unwrap_or(0))
    })
}

/// Every runtime observer whose scalar is a [`Word`], with its signals in
/// f64.
pub trait Observe<const N: usize, const M: usize, const P: usize>:
    Observer<N, M, P, Scalar: Word>
{
    /// The input in the observer's scalar.
    fn input(&self, u: &[f64; M]) -> [Self::Scalar; M] {
        convert(u, self.scales().map(|s| &s.input))
    }
    /// The reading in the observer's scalar.
    fn reading(&self, y: &[f64; P]) -> [Self::Scalar; P] {
        convert(y, self.scales().map(|s| &s.output))
    }
    /// The predicted estimate x̂\[k+1\] after the last step, in f64.
    fn estimate_f64(&self) -> [f64; N] {
        let e = self.scales().map(|s| &s.state);
        let x = self.estimate();
        core::array::from_fn(|i| match x.get(i) {
            Some(&v) => v.to_f64(e.and_then(|e| e.get(i)).copied().unwrap_or(0)),
            None => 0.0,
        })
    }
}

impl<O, const N: usize, const M: usize, const P: usize> Observe<N, M, P> for O where
    O: Observer<N, M, P, Scalar: Word>
{
}
