//! The one interface of the six observers.

use crate::{ChannelMask, Scales, Status};

/// What every observer of N states, M inputs and P outputs does, whatever
/// its form (predictor, current, fused) and scalar (f32, f64, Q15, Q31).
///
/// Code that drives observers (a simulator, a benchmark, a check in
/// firmware) is written once against this trait. Calls on a concrete
/// observer are resolved at compile time and inlined like the observer's
/// own methods: the trait costs no instruction.
///
/// "The estimate" is the state the next step starts from: x̂\[k+1\] after a
/// step (for the current form the prediction x̂\[k+1|k\]; its
/// [`filtered`](crate::CurrentObserver::filtered) estimate x̂\[k|k\] is the
/// form's own method).
pub trait Observer<const N: usize, const M: usize, const P: usize> {
    /// The scalar of states, inputs and readings: f32, f64, [`Q15`](crate::Q15)
    /// or [`Q31`](crate::Q31).
    type Scalar: Copy;

    /// One step using only the channels in `valid` (float observers also
    /// leave out non-finite readings).
    fn step_masked(
        &mut self,
        u: &[Self::Scalar; M],
        y: &[Self::Scalar; P],
        valid: ChannelMask,
    ) -> Status;

    /// One step with every channel of `y` offered.
    #[inline(always)]
    fn step(&mut self, u: &[Self::Scalar; M], y: &[Self::Scalar; P]) -> Status {
        self.step_masked(u, y, ChannelMask::all(P))
    }

    /// One step without a measurement: x̂ ← A x̂ + B u (up to rounding).
    fn predict(&mut self, u: &[Self::Scalar; M]) -> Status;

    /// The estimate the next step starts from.
    fn estimate(&self) -> &[Self::Scalar; N];

    /// The innovation of the last step (zero on channels it did not use);
    /// `None` for a fused observer without a gate, which never forms it.
    fn innovation(&self) -> Option<&[Self::Scalar; P]>;

    /// Whether the tables carry an innovation gate.
    fn gated(&self) -> bool;

    /// Multiply-adds of one step with every channel present, gate included:
    /// N·N + N·M + 2·N·P + P·M for the predictor and current forms,
    /// N·N + N·M + N·P for the fused one; a gate adds P·P + P (and the
    /// fused form then also forms the innovation, P·(N + M)).
    fn macs(&self) -> usize;

    /// The signal scales of a fixed-point observer (how Q values convert to
    /// physical ones); `None` for a float observer.
    fn scales(&self) -> Option<&Scales<N, M, P>>;

    /// Replaces the estimate (and clears the gate's count of misses).
    fn set_state(&mut self, x: [Self::Scalar; N]);

    /// Returns to the estimate the observer was built with and clears the
    /// innovation and the gate's count of misses.
    fn reset(&mut self);
}

/// Implements [`Observer`] for an observer with one state `x` (predictor
/// and fused forms) or with `predicted` and `filtered` (current form);
/// `two_pass` or `fused` names its cost.
/// `$innovation` maps the observer to its `Option` innovation; `float` or
/// `fixed` says whether it has scales.
macro_rules! observer {
    (float $ty:ident, $form:ident, $cost:ident, |$o:ident| $innovation:expr) => {
        observer!(
            @impl ['t, T: $crate::Real, const N: usize, const M: usize, const P: usize]
            $ty<'t, T, N, M, P>, T, $form, $cost, |$o| $innovation, float
        );
    };
    (fixed $ty:ident, $form:ident, $cost:ident, |$o:ident| $innovation:expr) => {
        observer!(
            @impl [
                't, Q: $crate::Fixed, const N: usize, const M: usize, const P: usize,
                K: $crate::Accumulation
            ]
            $ty<'t, Q, N, M, P, K>, Q, $form, $cost, |$o| $innovation, fixed
        );
    };
    (
        @impl [$($generics:tt)*] $ty:ty, $scalar:ident, $form:ident, $cost:ident,
        |$o:ident| $innovation:expr, $scales:ident
    ) => {
        impl<$($generics)*> $crate::Observer<N, M, P> for $ty {
            type Scalar = $scalar;

            #[inline(always)]
            fn step_masked(
                &mut self,
                u: &[$scalar; M],
                y: &[$scalar; P],
                valid: $crate::ChannelMask,
            ) -> $crate::Status {
                <$ty>::step_masked(self, u, y, valid)
            }

            #[inline(always)]
            fn predict(&mut self, u: &[$scalar; M]) -> $crate::Status {
                observer!(@predict $form, self, u, $scalar)
            }

            #[inline(always)]
            fn estimate(&self) -> &[$scalar; N] {
                observer!(@estimate $form, self)
            }

            #[inline(always)]
            fn innovation(&self) -> Option<&[$scalar; P]> {
                let $o = self;
                $innovation
            }

            #[inline(always)]
            fn gated(&self) -> bool {
                self.tables.gate.is_some()
            }

            fn macs(&self) -> usize {
                let gated = self.tables.gate.is_some();
                observer!(@macs $cost, gated)
            }

            #[inline(always)]
            fn scales(&self) -> Option<&$crate::Scales<N, M, P>> {
                observer!(@scales $scales, self)
            }

            fn set_state(&mut self, x: [$scalar; N]) {
                observer!(@set_state $form, self, x);
                self.misses = 0;
            }

            fn reset(&mut self) {
                observer!(@set_state $form, self, self.initial);
                self.r = [$scalar::ZERO; P];
                self.misses = 0;
            }
        }
    };
    (@predict one, $s:ident, $u:ident, $scalar:ident) => {
        <Self as $crate::Observer<N, M, P>>::step_masked(
            $s,
            $u,
            &[$scalar::ZERO; P],
            $crate::ChannelMask::NONE,
        )
    };
    (@predict current, $s:ident, $u:ident, $scalar:ident) => {
        <Self>::predict($s, $u)
    };
    (@macs two_pass, $gated:ident) => {
        $crate::observer::two_pass_macs(N, M, P, $gated)
    };
    (@macs fused, $gated:ident) => {
        $crate::observer::fused_macs(N, M, P, $gated)
    };
    (@scales float, $s:ident) => { None };
    (@scales fixed, $s:ident) => { Some(&$s.tables.scales) };
    (@estimate one, $s:ident) => { &$s.x };
    (@estimate current, $s:ident) => { &$s.predicted };
    (@set_state one, $s:ident, $x:expr) => { $s.x = $x };
    (@set_state current, $s:ident, $x:expr) => {{
        let x = $x;
        $s.predicted = x;
        $s.filtered = x;
        $s.pending = None;
    }};
}

/// N·N + N·M + 2·N·P + P·M, plus P·P + P with a gate: the predictor and
/// current forms.
pub(crate) const fn two_pass_macs(n: usize, m: usize, p: usize, gated: bool) -> usize {
    n * n + n * m + 2 * n * p + p * m + if gated { p * p + p } else { 0 }
}

/// N·(N + M + P), plus P·(N + M) + P·P + P with a gate: the fused form.
pub(crate) const fn fused_macs(n: usize, m: usize, p: usize, gated: bool) -> usize {
    n * (n + m + p) + if gated { p * (n + m) + p * p + p } else { 0 }
}
