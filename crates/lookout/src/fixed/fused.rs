//! The fixed-point fused observer: one accumulated pass over [F G H].

use super::arith::{Accumulation, Exact, Kernels, Saturating, Saturations};
use super::format::{Fixed, Wide};
use super::headroom::Proven;
use super::measurement::{initial_status, predicted_outputs};
use super::tables::FixedFusedTables;
use crate::{ChannelMask, Outcome, Status};
use core::marker::PhantomData;

/// Discrete observer on fused tables, x̂\[k+1\] = round(F x̂\[k\] + G u\[k\] +
/// H y\[k\]), in Q15 or Q31, integer only.
///
/// Behaves as [`FusedObserver`](crate::FusedObserver) (see
/// [`FusedTables`](crate::FusedTables) for F, G, H of both forms; the
/// format is documented on [`Fixed`]): a missing channel j is replaced by
/// its prediction ŷ_j = round(C_j x̂ + D_j u), stored saturating (N + M more
/// multiply-adds); with a gate the innovation y − ŷ is formed and stored
/// saturating, and a gated or empty measurement is replaced by its
/// prediction on every channel. With every channel present and no gate the
/// step is N·N + N·M + N·P multiply-adds and exactly one rounding per state.
///
/// Error against exact arithmetic on the same Q values: ½ LSB per state
/// when every channel is used, plus ½ Σ_j |H̄_ij| LSB over stood-in
/// channels j (H̄ normalised); with ‖F̄‖∞ = ρ < 1 the deviation stays below
/// that bound / (1 − ρ).
///
/// `K` says how products are added: built with [`new`](Self::new) on any
/// tables, saturating; built with [`proven`](Self::proven) on tables that
/// carry the proof of headroom ([`Proven`]), plainly, with the same results.
#[derive(Clone, Debug)]
pub struct FixedFusedObserver<
    't,
    Q: Fixed,
    const N: usize,
    const M: usize,
    const P: usize,
    K: Accumulation = Saturating,
> {
    tables: &'t FixedFusedTables<Q, N, M, P>,
    x: [Q; N],
    initial: [Q; N],
    r: [Q; P],
    kernel: PhantomData<K>,
    /// Consecutive samples without a correction (the gate's recovery stage).
    misses: u16,
}

constructors!(
    FixedFusedObserver,
    FixedFusedTables,
    /// An observer on `tables` starting from the estimate `x0`; every
    /// product is added saturating.
);

impl<'t, Q: Fixed, const N: usize, const M: usize, const P: usize, K: Accumulation>
    FixedFusedObserver<'t, Q, N, M, P, K>
{
    const fn with_kernel(tables: &'t FixedFusedTables<Q, N, M, P>, x0: [Q; N]) -> Self {
        const { assert!(P <= 32, "an observer has at most 32 outputs") };
        Self {
            tables,
            x: x0,
            initial: x0,
            r: [Q::ZERO; P],
            kernel: PhantomData,
            misses: 0,
        }
    }

    /// One step with every channel of `y` offered.
    pub fn step(&mut self, u: &[Q; M], y: &[Q; P]) -> Status {
        self.step_masked(u, y, ChannelMask::all(P))
    }

    /// One step using only the channels in `valid`.
    pub fn step_masked(&mut self, u: &[Q; M], y: &[Q; P], valid: ChannelMask) -> Status {
        let t = self.tables;
        let mut sat = Saturations::default();
        let (present, mut status) = initial_status::<P>(valid);
        status.outcome = Outcome::Corrected;
        status.used = present;
        let mut acc = [<Q::Acc as Wide>::ZERO; N];
        K::mul_acc(&t.f, &self.x, &mut acc);
        K::mul_acc(&t.g, u, &mut acc);
        if t.gate.is_none() && present == ChannelMask::all(P) {
            // The common case, apart: the readings reach the multiply-adds
            // as words loaded in place, which the compiler turns into
            // `smlal`, rather than through a merge with stand-ins.
            K::mul_acc(&t.h, y, &mut acc);
        } else {
            let y_used = self.stand_in(u, y, present, &mut status, &mut sat);
            K::mul_acc(&t.h, &y_used, &mut acc);
        }
        self.x = sat.store_rows::<K, Q, N>(&acc, &t.exp);
        status.saturations = sat.0;
        status
    }

    /// The readings the step uses: `y` on the present channels, each
    /// missing one (all of them when the gate rejects) replaced by its
    /// prediction; forms the innovation when there is a gate.
    fn stand_in(
        &mut self,
        u: &[Q; M],
        y: &[Q; P],
        present: ChannelMask,
        status: &mut Status,
        sat: &mut Saturations,
    ) -> [Q; P] {
        let t = self.tables;
        let mut y_used = *y;
        if let Some(gate) = &t.gate {
            let predicted = predicted_outputs::<K, Q, N, M, P>(&t.output, &self.x, u);
            let mut r = [Q::ZERO; P];
            for (j, (rj, (&yj, &pj))) in
                r.iter_mut().zip(y.iter().zip(predicted.iter())).enumerate()
            {
                if present.contains(j) {
                    *rj = sat.store(yj.widen().sat_sub(pj));
                }
            }
            status.outcome = if present.is_empty() {
                Outcome::PredictedOnly
            } else {
                gate.judge(&r, present, self.misses).outcome()
            };
            self.misses = gate.recovery.count_after(self.misses, status.outcome);
            let rejected = !status.corrected();
            if rejected {
                status.used = ChannelMask::NONE;
                r = [Q::ZERO; P];
            }
            for (j, (yu, &pj)) in y_used.iter_mut().zip(predicted.iter()).enumerate() {
                if rejected || !present.contains(j) {
                    *yu = sat.store(pj);
                }
            }
            self.r = r;
        } else if present != ChannelMask::all(P) {
            if present.is_empty() {
                status.outcome = Outcome::PredictedOnly;
            }
            let out = &t.output;
            for (j, (yu, &e)) in y_used.iter_mut().zip(out.exp.iter()).enumerate() {
                if !present.contains(j) {
                    let acc = K::row_acc(&out.c, j, &self.x).sat_add(K::row_acc(&out.d, j, u));
                    *yu = sat.store(K::round::<Q>(acc, e));
                }
            }
        }
        y_used
    }

    /// One step without a measurement: every channel stands in by its
    /// prediction, so x̂ ← A x̂ + B u up to rounding.
    pub fn predict(&mut self, u: &[Q; M]) -> Status {
        self.step_masked(u, &[Q::ZERO; P], ChannelMask::NONE)
    }

    /// The estimate x̂\[k\].
    pub const fn estimate(&self) -> &[Q; N] {
        &self.x
    }

    /// The innovation of the last step, when the tables have a gate (the
    /// step only forms it then); `None` otherwise.
    pub fn innovation(&self) -> Option<&[Q; P]> {
        self.tables.gate.as_ref().map(|_| &self.r)
    }

    /// Replaces the estimate.
    pub fn set_state(&mut self, x: [Q; N]) {
        self.x = x;
        self.misses = 0;
    }

    /// Returns to the estimate given to [`new`](Self::new) and clears the
    /// innovation.
    pub fn reset(&mut self) {
        self.x = self.initial;
        self.r = [Q::ZERO; P];
        self.misses = 0;
    }

    /// The tables the observer runs on.
    pub const fn tables(&self) -> &'t FixedFusedTables<Q, N, M, P> {
        self.tables
    }
}
