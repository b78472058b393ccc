//! The constant tables of the fixed-point observers: integer entries plus
//! the exponents that say what they mean (see [`Fixed`] for the format).
//!
//! Like the float tables they are plain data for `const` or `static` items;
//! lookout-design's quantiser builds them on the host and chooses every row
//! exponent.

use super::format::Fixed;
use crate::{Matrix, Recovery};

/// The power-of-two scale exponent of every signal: |v| < 2^s in the
/// signal's unit. The steps do not read these (the table entries already
/// fold them in); they say how to convert to and from Q values.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct Scales<const N: usize, const M: usize, const P: usize> {
    /// One exponent per state.
    pub state: [i8; N],
    /// One exponent per input.
    pub input: [i8; M],
    /// One exponent per output; the innovation r_j shares the exponent of
    /// output j.
    pub output: [i8; P],
}

/// The output map ŷ = C x + D u in Q form: C and D share one exponent per
/// output row.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct FixedOutputMap<Q, const N: usize, const M: usize, const P: usize> {
    /// C, P × N, normalised and stored with the row exponents `exp`.
    pub c: Matrix<Q, P, N>,
    /// D, P × M, normalised and stored with the row exponents `exp`.
    pub d: Matrix<Q, P, M>,
    /// Row exponents of [C D].
    pub exp: [i8; P],
}

/// The innovation gate in Q form: the same test as [`Gate`](crate::Gate),
/// on whitened innovations.
///
/// With every channel present, ν = rᵀ S⁻¹ r is computed as ‖W r‖², where W
/// (upper triangular, from the Cholesky factorisation S⁻¹ = WᵀW) whitens
/// the innovation: z = W r, ν = Σ z_j². A sum of squares is monotone under
/// saturation, so a saturated ν is still above any representable limit and
/// the decision cannot flip. With channels missing, channel j is tested on
/// its own as z_j = r_j / √S_jj, z_j² ≤ `channel_limit`.
///
/// z is dimensionless with scale exponent `z_exp` (|z| < 2^z_exp is the
/// range that matters: beyond it the measurement is rejected anyway); W is
/// stored like any table mapping outputs to z. The limits are wide integers
/// in units of 2^(2·z_exp − 2F): ν ≤ limit · 2^(2·z_exp − 2F).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct FixedGate<Q: Fixed, const P: usize> {
    /// W, P × P with WᵀW = S⁻¹, normalised (from the outputs to z) and
    /// stored with the row exponents `w_exp`.
    pub w: Matrix<Q, P, P>,
    /// Row exponents of W.
    pub w_exp: [i8; P],
    /// 1 / √S_jj per channel, normalised and stored with `channel_exp`.
    pub channel_w: [Q; P],
    /// Exponent of each `channel_w` entry.
    pub channel_exp: [i8; P],
    /// Scale exponent of z.
    pub z_exp: i8,
    /// Largest accepted ν with every channel used, in units of
    /// 2^(2·z_exp − 2F).
    pub limit: Q::Acc,
    /// Largest accepted z_j² when some channels are missing, same units.
    pub channel_limit: Q::Acc,
    /// The widened limits after consecutive misses, same units (the rule
    /// of [`Recovery`]; `z_exp` is chosen so that the widest fits).
    pub recovery: Recovery<Q::Acc>,
}

/// Tables of the fixed-point predictor observer (see
/// [`FixedPredictorObserver`](crate::FixedPredictorObserver)).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct FixedPredictorTables<Q: Fixed, const N: usize, const M: usize, const P: usize> {
    /// The signal scales the entries were normalised with.
    pub scales: Scales<N, M, P>,
    /// A, N × N, sharing the row exponents `exp`.
    pub a: Matrix<Q, N, N>,
    /// B, N × M, sharing the row exponents `exp`.
    pub b: Matrix<Q, N, M>,
    /// L, N × P (innovation to state), sharing the row exponents `exp`.
    pub l: Matrix<Q, N, P>,
    /// Row exponents of [A B L].
    pub exp: [i8; N],
    /// C and D.
    pub output: FixedOutputMap<Q, N, M, P>,
    /// Optional innovation gate.
    pub gate: Option<FixedGate<Q, P>>,
}

/// Tables of the fixed-point current-form observer (see
/// [`FixedCurrentObserver`](crate::FixedCurrentObserver)).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct FixedCurrentTables<Q: Fixed, const N: usize, const M: usize, const P: usize> {
    /// The signal scales the entries were normalised with.
    pub scales: Scales<N, M, P>,
    /// A, N × N, sharing the row exponents `exp`.
    pub a: Matrix<Q, N, N>,
    /// B, N × M, sharing the row exponents `exp`.
    pub b: Matrix<Q, N, M>,
    /// Row exponents of [A B].
    pub exp: [i8; N],
    /// K, N × P (innovation to state), with the row exponents `k_exp`.
    pub k: Matrix<Q, N, P>,
    /// Row exponents of K.
    pub k_exp: [i8; N],
    /// C and D.
    pub output: FixedOutputMap<Q, N, M, P>,
    /// Optional innovation gate.
    pub gate: Option<FixedGate<Q, P>>,
}

/// Tables of the fixed-point fused observer (see
/// [`FixedFusedObserver`](crate::FixedFusedObserver)); F, G, H as in
/// [`FusedTables`](crate::FusedTables).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct FixedFusedTables<Q: Fixed, const N: usize, const M: usize, const P: usize> {
    /// The signal scales the entries were normalised with.
    pub scales: Scales<N, M, P>,
    /// F, N × N, sharing the row exponents `exp`.
    pub f: Matrix<Q, N, N>,
    /// G, N × M, sharing the row exponents `exp`.
    pub g: Matrix<Q, N, M>,
    /// H, N × P (measurement to state), sharing the row exponents `exp`.
    pub h: Matrix<Q, N, P>,
    /// Row exponents of [F G H].
    pub exp: [i8; N],
    /// C and D, for stand-in readings and the gate.
    pub output: FixedOutputMap<Q, N, M, P>,
    /// Optional innovation gate.
    pub gate: Option<FixedGate<Q, P>>,
}
