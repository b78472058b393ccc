//! One interface over the runtime's observers, for the convergence checks
//! and the cost measurements: step in the observer's own scalar, convert
//! the plant's f64 signals in and the estimate out.

use lookout::{
    Accumulation, CurrentObserver, Fixed, FixedFusedObserver, FixedPredictorObserver,
    FusedObserver, PredictorObserver, Q15, Q31, Status,
};

/// An observer of N states, M inputs and P outputs, stepped in `Scalar`.
pub trait Observe<const N: usize, const M: usize, const P: usize> {
    /// f32, Q31 or Q15.
    type Scalar: Copy;
    /// The scalar's name as printed: `f32`, `q31` or `q15`.
    const SCALAR: &'static str;
    /// Multiply-adds of one step with every channel present (the runtime
    /// docs' count, gate included).
    fn macs(&self) -> usize;
    /// One step with every channel offered.
    fn step(&mut self, u: &[Self::Scalar; M], y: &[Self::Scalar; P]) -> Status;
    /// The input in the observer's scalar.
    fn input(&self, u: &[f64; M]) -> [Self::Scalar; M];
    /// The reading in the observer's scalar.
    fn reading(&self, y: &[f64; P]) -> [Self::Scalar; P];
    /// The predicted estimate x̂\[k+1\] after the last step, in f64.
    fn estimate(&self) -> [f64; N];
}

/// N·N + N·M + 2·N·P + P·M, plus P·P + P with a gate: the predictor and
/// current forms.
const fn two_pass_macs(n: usize, m: usize, p: usize, gated: bool) -> usize {
    n * n + n * m + 2 * n * p + p * m + if gated { p * p + p } else { 0 }
}

/// N·(N + M + P), plus P·(N + M) + P·P + P with a gate: the fused form.
const fn fused_macs(n: usize, m: usize, p: usize, gated: bool) -> usize {
    n * (n + m + p) + if gated { p * (n + m) + p * p + p } else { 0 }
}

macro_rules! observe_f32 {
    ($($obs:ident, $estimate:ident, $macs:ident;)*) => {$(
        impl<const N: usize, const M: usize, const P: usize> Observe<N, M, P>
            for $obs<'_, f32, N, M, P>
        {
            type Scalar = f32;
            const SCALAR: &'static str = "f32";
            fn macs(&self) -> usize {
                $macs(N, M, P, self.tables().gate.is_some())
            }
            #[inline(always)]
            fn step(&mut self, u: &[f32; M], y: &[f32; P]) -> Status {
                $obs::step(self, u, y)
            }
            fn input(&self, u: &[f64; M]) -> [f32; M] {
                u.map(|v| v as f32)
            }
            fn reading(&self, y: &[f64; P]) -> [f32; P] {
                y.map(|v| v as f32)
            }
            fn estimate(&self) -> [f64; N] {
                $obs::$estimate(self).map(f64::from)
            }
        }
    )*};
}

observe_f32! {
    PredictorObserver, estimate, two_pass_macs;
    CurrentObserver, predicted, two_pass_macs;
    FusedObserver, estimate, fused_macs;
}

/// A Q value of `v` at scale exponent `s`, saturated when out of range.
macro_rules! quantise {
    ($q:ident, $v:expr, $s:expr) => {
        $q::from_real($v, $s).unwrap_or(if $v > 0.0 { $q::MAX } else { $q::MIN })
    };
}

macro_rules! observe_fixed {
    ($($obs:ident, $q:ident, $name:literal, $macs:ident;)*) => {$(
        impl<const N: usize, const M: usize, const P: usize, K: Accumulation> Observe<N, M, P>
            for $obs<'_, $q, N, M, P, K>
        {
            type Scalar = $q;
            const SCALAR: &'static str = $name;
            fn macs(&self) -> usize {
                $macs(N, M, P, self.tables().gate.is_some())
            }
            #[inline(always)]
            fn step(&mut self, u: &[$q; M], y: &[$q; P]) -> Status {
                $obs::step(self, u, y)
            }
            fn input(&self, u: &[f64; M]) -> [$q; M] {
                let s = &self.tables().scales.input;
                core::array::from_fn(|i| {
                    let (v, e) = (u.get(i).copied().unwrap_or(0.0), s.get(i).copied().unwrap_or(0));
                    quantise!($q, v, e)
                })
            }
            fn reading(&self, y: &[f64; P]) -> [$q; P] {
                let s = &self.tables().scales.output;
                core::array::from_fn(|i| {
                    let (v, e) = (y.get(i).copied().unwrap_or(0.0), s.get(i).copied().unwrap_or(0));
                    quantise!($q, v, e)
                })
            }
            fn estimate(&self) -> [f64; N] {
                let s = &self.tables().scales.state;
                let x = $obs::estimate(self);
                core::array::from_fn(|i| match (x.get(i), s.get(i)) {
                    (Some(q), Some(&e)) => q.to_real(e),
                    _ => 0.0,
                })
            }
        }
    )*};
}

observe_fixed! {
    FixedPredictorObserver, Q31, "q31", two_pass_macs;
    FixedPredictorObserver, Q15, "q15", two_pass_macs;
    FixedFusedObserver, Q31, "q31", fused_macs;
    FixedFusedObserver, Q15, "q15", fused_macs;
}
