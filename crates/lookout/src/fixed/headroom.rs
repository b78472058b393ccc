//! Tables proven to obey the accumulator headroom rule, checked when they
//! are built: in `const` evaluation for generated tables, at run time for
//! tables built on the target.

use super::format::{Fixed, Q15, Q31};
use super::tables::{FixedCurrentTables, FixedFusedTables, FixedOutputMap, FixedPredictorTables};
use crate::Matrix;
use core::marker::PhantomData;

/// Fixed-point tables that carry the proof that no dot product of a step
/// can leave its wide accumulator, whatever the Q inputs: for every row of
/// every stacked table a step accumulates ([A B L], [F G H], [A B], K and
/// [C D]), the sum of the absolute entries is at most 2^(F+1) − 1.
///
/// Why that suffices: every Q input has |v| ≤ 2ᶠ, so each partial sum is at
/// most (2^(F+1) − 1) · 2ᶠ = 2^(2F+1) − 2ᶠ in magnitude, inside the
/// accumulator (i32 for Q15, i64 for Q31). Tables built by lookout-design's
/// quantiser satisfy it with room to spare: their row exponents
/// make Σ_j |q_ij| ≤ 2ᶠ + n/2 (see [`Fixed`]). The innovation gate's own
/// sums are not covered; it keeps its saturating arithmetic.
///
/// Only [`prove`](FixedFusedTables::prove) (a `const fn`, for generated
/// tables: a table that breaks the rule fails to compile) and
/// [`check`](FixedFusedTables::check) (for tables built at run time) make
/// one. An observer built on it with `proven` adds its products plainly
/// ([`Exact`](crate::Exact)), with results identical bit for bit to the
/// saturating observer's on the same tables.
///
/// ```
/// use lookout::{
///     FixedFusedObserver, FixedFusedTables, FixedOutputMap, Matrix, Observer, Proven, Q15, Scales,
/// };
/// const ONE: Q15 = Q15(0x4000);
/// static TABLES: Proven<FixedFusedTables<Q15, 1, 1, 1>> = match (FixedFusedTables {
///     scales: Scales { state: [0], input: [0], output: [0] },
///     f: Matrix::from_rows([[ONE]]),
///     g: Matrix::from_rows([[ONE]]),
///     h: Matrix::from_rows([[ONE]]),
///     exp: [1],
///     output: FixedOutputMap { c: Matrix::from_rows([[ONE]]), d: Matrix::ZERO, exp: [0] },
///     gate: None,
/// })
/// .prove()
/// {
///     Some(t) => t,
///     None => panic!("TABLES: a row breaks the accumulator headroom rule"),
/// };
/// // Entries 2¹⁴ with the row exponent 1 stand for 1: x⁺ = x + u + y.
/// let mut observer = FixedFusedObserver::proven(&TABLES, [Q15(0)]);
/// observer.step(&[Q15(100)], &[Q15(200)]);
/// assert_eq!(observer.estimate(), &[Q15(300)]);
/// ```
///
/// A generated table whose [F G H] row sums to more than 2^(F+1) − 1 does
/// not compile (the `const` evaluation of the static fails):
///
/// ```compile_fail,E0080
/// use lookout::{FixedFusedTables, FixedOutputMap, Matrix, Proven, Q15, Scales};
/// const BIG: Q15 = Q15(i16::MAX);
/// static TABLES: Proven<FixedFusedTables<Q15, 1, 1, 1>> = match (FixedFusedTables {
///     scales: Scales { state: [0], input: [0], output: [0] },
///     f: Matrix::from_rows([[BIG]]),
///     g: Matrix::from_rows([[BIG]]),
///     h: Matrix::from_rows([[BIG]]),
///     exp: [1],
///     output: FixedOutputMap { c: Matrix::from_rows([[BIG]]), d: Matrix::ZERO, exp: [0] },
///     gate: None,
/// })
/// .prove()
/// {
///     Some(t) => t,
///     None => panic!("TABLES: a row breaks the accumulator headroom rule"),
/// };
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct Proven<T>(T);

impl<T> Proven<T> {
    /// The tables.
    pub const fn tables(&self) -> &T {
        &self.0
    }

    /// The tables, giving up the proof.
    pub fn into_tables(self) -> T {
        self.0
    }
}

impl<T> core::ops::Deref for Proven<T> {
    type Target = T;
    fn deref(&self) -> &T {
        &self.0
    }
}

/// Which table a row belongs to (in a [`HeadroomError`], and in
/// lookout-design's quantiser errors).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum TableName {
    /// A.
    A,
    /// B.
    B,
    /// C.
    C,
    /// D.
    D,
    /// L, the predictor gain.
    L,
    /// K, the current-form gain.
    K,
    /// F of the fused tables.
    F,
    /// G of the fused tables.
    G,
    /// H of the fused tables.
    H,
    /// S⁻¹ of the gate.
    SInv,
    /// The gate's per-channel 1/S_jj.
    ChannelInvVariance,
    /// The gate's limits.
    Limit,
}

/// A row that breaks the accumulator headroom rule (see [`Proven`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct HeadroomError {
    /// The first table of the stacked row (A for [A B L], F for [F G H],
    /// K, C for [C D]).
    pub table: TableName,
    /// The row.
    pub row: usize,
    /// Σ_j |q_ij| over the stacked row, in LSB.
    pub sum: u64,
    /// The largest allowed sum, 2^(F+1) − 1.
    pub limit: u64,
}

impl core::fmt::Display for HeadroomError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        write!(
            f,
            "row {} of the tables starting with {:?} has an absolute sum of {} LSB, above {}: \
             a dot product could overflow the accumulator",
            self.row, self.table, self.sum, self.limit
        )
    }
}

/// Per-row absolute sums of one stacked table of `Q` words, in `const`
/// evaluation.
struct RowSums<Q, const R: usize>([u64; R], PhantomData<Q>);

impl<Q, const R: usize> RowSums<Q, R> {
    const fn new() -> Self {
        Self([0; R], PhantomData)
    }

    /// Whether every row sum is at most `limit`.
    #[allow(clippy::indexing_slicing)] // i < R by the loop bound; const fn cannot iterate
    const fn within(&self, limit: u64) -> bool {
        let mut i = 0;
        while i < R {
            if self.0[i] > limit {
                return false;
            }
            i = i.wrapping_add(1);
        }
        true
    }
}

/// Implements the `const` row sums and the three tables' `prove` for one
/// word type (a `const fn` cannot call the [`Fixed`] trait's methods).
macro_rules! prove {
    ($q:ident, $limit:literal) => {
        impl<const R: usize> RowSums<$q, R> {
            #[allow(clippy::indexing_slicing)] // i < R and j < C by the loop bounds; const fn cannot iterate
            const fn add<const C: usize>(mut self, m: &Matrix<$q, R, C>) -> Self {
                let cols = m.as_cols();
                let mut j = 0;
                while j < C {
                    let mut i = 0;
                    while i < R {
                        let q = cols[j][i].0.unsigned_abs() as u64;
                        self.0[i] = self.0[i].saturating_add(q);
                        i = i.wrapping_add(1);
                    }
                    j = j.wrapping_add(1);
                }
                self
            }
        }

        impl $q {
            /// Whether the [C D] rows leave the headroom.
            const fn output_within<const N: usize, const M: usize, const P: usize>(
                out: &FixedOutputMap<$q, N, M, P>,
            ) -> bool {
                RowSums::<$q, P>::new()
                    .add(&out.c)
                    .add(&out.d)
                    .within($limit)
            }
        }

        impl<const N: usize, const M: usize, const P: usize> FixedPredictorTables<$q, N, M, P> {
            /// The tables with the proof of headroom (see [`Proven`]), or
            /// `None` when a row of [A B L] or [C D] breaks it; a `const
            /// fn`, for generated tables. [`check`](Self::check) says which.
            pub const fn prove(self) -> Option<Proven<Self>> {
                let rows = RowSums::<$q, N>::new()
                    .add(&self.a)
                    .add(&self.b)
                    .add(&self.l);
                if rows.within($limit) && $q::output_within(&self.output) {
                    Some(Proven(self))
                } else {
                    None
                }
            }
        }

        impl<const N: usize, const M: usize, const P: usize> FixedCurrentTables<$q, N, M, P> {
            /// The tables with the proof of headroom (see [`Proven`]), or
            /// `None` when a row of [A B], K or [C D] breaks it; a `const
            /// fn`, for generated tables. [`check`](Self::check) says which.
            pub const fn prove(self) -> Option<Proven<Self>> {
                let rows = RowSums::<$q, N>::new().add(&self.a).add(&self.b);
                let gain = RowSums::<$q, N>::new().add(&self.k);
                if rows.within($limit) && gain.within($limit) && $q::output_within(&self.output) {
                    Some(Proven(self))
                } else {
                    None
                }
            }
        }

        impl<const N: usize, const M: usize, const P: usize> FixedFusedTables<$q, N, M, P> {
            /// The tables with the proof of headroom (see [`Proven`]), or
            /// `None` when a row of [F G H] or [C D] breaks it; a `const
            /// fn`, for generated tables. [`check`](Self::check) says which.
            pub const fn prove(self) -> Option<Proven<Self>> {
                let rows = RowSums::<$q, N>::new()
                    .add(&self.f)
                    .add(&self.g)
                    .add(&self.h);
                if rows.within($limit) && $q::output_within(&self.output) {
                    Some(Proven(self))
                } else {
                    None
                }
            }
        }
    };
}

prove!(Q15, 0xFFFF);
prove!(Q31, 0xFFFF_FFFF);

/// 2^(F+1) − 1 for the format `Q` (the `const` twins above spell it out).
fn limit<Q: Fixed>() -> u64 {
    u64::MAX.wrapping_shr(63_u32.saturating_sub(Q::FRAC))
}

/// The first row of the stacked tables `parts` (each R × its own width)
/// whose absolute sum is above the limit, reported as `table`.
fn first_over<Q: Fixed, const R: usize>(
    parts: &[&dyn Fn(usize) -> u64],
    table: TableName,
) -> Result<(), HeadroomError> {
    for row in 0..R {
        let sum = parts
            .iter()
            .fold(0u64, |s, part| s.saturating_add(part(row)));
        if sum > limit::<Q>() {
            return Err(HeadroomError {
                table,
                row,
                sum,
                limit: limit::<Q>(),
            });
        }
    }
    Ok(())
}

/// Σ_j |m_ij| of row `i` of `m`, in LSB.
fn abs_row<Q: Fixed, const R: usize, const C: usize>(m: &Matrix<Q, R, C>, i: usize) -> u64 {
    m.as_cols()
        .iter()
        .filter_map(|col| col.get(i))
        .fold(0u64, |s, q| s.saturating_add(q.to_i64().unsigned_abs()))
}

fn output_rows<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    out: &FixedOutputMap<Q, N, M, P>,
) -> Result<(), HeadroomError> {
    first_over::<Q, P>(
        &[&|i| abs_row(&out.c, i), &|i| abs_row(&out.d, i)],
        TableName::C,
    )
}

impl<Q: Fixed, const N: usize, const M: usize, const P: usize> FixedPredictorTables<Q, N, M, P> {
    /// The tables with the proof of headroom (see [`Proven`]), or the first
    /// row of [A B L] or [C D] that breaks it: for tables built at run time.
    pub fn check(self) -> Result<Proven<Self>, HeadroomError> {
        let (a, b, l) = (&self.a, &self.b, &self.l);
        first_over::<Q, N>(
            &[&|i| abs_row(a, i), &|i| abs_row(b, i), &|i| abs_row(l, i)],
            TableName::A,
        )?;
        output_rows(&self.output)?;
        Ok(Proven(self))
    }
}

impl<Q: Fixed, const N: usize, const M: usize, const P: usize> FixedCurrentTables<Q, N, M, P> {
    /// The tables with the proof of headroom (see [`Proven`]), or the first
    /// row of [A B], K or [C D] that breaks it: for tables built at run time.
    pub fn check(self) -> Result<Proven<Self>, HeadroomError> {
        let (a, b, k) = (&self.a, &self.b, &self.k);
        first_over::<Q, N>(&[&|i| abs_row(a, i), &|i| abs_row(b, i)], TableName::A)?;
        first_over::<Q, N>(&[&|i| abs_row(k, i)], TableName::K)?;
        output_rows(&self.output)?;
        Ok(Proven(self))
    }
}

impl<Q: Fixed, const N: usize, const M: usize, const P: usize> FixedFusedTables<Q, N, M, P> {
    /// The tables with the proof of headroom (see [`Proven`]), or the first
    /// row of [F G H] or [C D] that breaks it: for tables built at run time.
    pub fn check(self) -> Result<Proven<Self>, HeadroomError> {
        let (f, g, h) = (&self.f, &self.g, &self.h);
        first_over::<Q, N>(
            &[&|i| abs_row(f, i), &|i| abs_row(g, i), &|i| abs_row(h, i)],
            TableName::F,
        )?;
        output_rows(&self.output)?;
        Ok(Proven(self))
    }
}
