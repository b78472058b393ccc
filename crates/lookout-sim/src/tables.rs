//! The design's tables in a number format, zero-padded to a size class:
//! the one place the simulator turns a [`Design`] into runtime tables.
//!
//! Float tables are the design's f64 matrices rounded to the format; Q
//! tables come from the runtime's host-side `from_float` at the design's
//! scales and are checked integer by integer against the ones the design
//! emits (a difference is an internal error). This module is kept apart so
//! that it can be swapped for the design crate's own builder of the tables
//! it emits.

use crate::SimError;
use crate::runtime::Format;
use lookout::{
    CurrentTables, Fixed, FixedCurrentTables, FixedFusedTables, FixedPredictorTables, FusedTables,
    Gate, Matrix, Plant, PredictorTables, Real, Recovery, Scales,
};
use lookout_design::Design;
use lookout_design::fixed_point::{ConvertError, QuantiseTables as _, QuantisedTable};
use lookout_design::model::{FixedFormat, Form};
use nalgebra::DMatrix;

/// The float type of a float observer.
pub trait Scalar: Real + Send + Sync {
    /// `v` rounded to this type (`None`: out of its range).
    fn of(v: f64) -> Option<Self>;
    /// Back to f64.
    fn to(self) -> f64;
}

impl Scalar for f64 {
    fn of(v: f64) -> Option<Self> {
        Some(v)
    }
    fn to(self) -> f64 {
        self
    }
}

impl Scalar for f32 {
    fn of(v: f64) -> Option<Self> {
        #[allow(clippy::cast_possible_truncation)] // rounding to f32 is the point
        let narrow = v as f32;
        (narrow.is_finite() || !v.is_finite()).then_some(narrow)
    }
    fn to(self) -> f64 {
        f64::from(self)
    }
}

/// `m` (r × c, r ≤ R, c ≤ C) zero-padded to R × C in type T.
fn padded<T: Scalar, const R: usize, const C: usize>(
    name: &str,
    m: &DMatrix<f64>,
) -> Result<Matrix<T, R, C>, SimError> {
    let zero = T::of(0.0).ok_or_else(|| SimError::Failure("zero".into()))?;
    let mut rows = [[zero; C]; R];
    for (i, row) in rows.iter_mut().enumerate().take(m.nrows()) {
        for (j, slot) in row.iter_mut().enumerate().take(m.ncols()) {
            let v = m.get((i, j)).copied().unwrap_or(0.0);
            *slot = T::of(v).ok_or_else(|| {
                SimError::BadInput(format!(
                    "table {name}: entry ({i}, {j}) = {v:e} does not fit the number format"
                ))
            })?;
        }
    }
    Ok(Matrix::from_rows(rows))
}

fn padded_vec<T: Scalar, const K: usize>(v: &[f64]) -> [T; K] {
    let mut out = [T::of(0.0).unwrap_or_else(T::nan); K];
    for (o, &x) in out.iter_mut().zip(v) {
        *o = T::of(x).unwrap_or_else(T::nan);
    }
    out
}

/// The design's float tables for its form, padded, in type T.
pub enum FloatTables<T, const N: usize, const M: usize, const P: usize> {
    /// Predictor form.
    Predictor(PredictorTables<T, N, M, P>),
    /// Current form.
    Current(CurrentTables<T, N, M, P>),
    /// Fused (held) form.
    Fused(FusedTables<T, N, M, P>),
}

/// The gate's widened limits in `T` (a limit beyond `T`'s range is
/// infinite: that stage accepts every finite reading).
fn recovery<T: Scalar>(g: &lookout_design::design::GateDesign) -> Recovery<T> {
    let of = |v: f64| T::of(v).unwrap_or_else(T::infinity);
    let mut r = Recovery::none(of(0.0));
    let pairs = g.recovery_limits();
    r.stages = u8::try_from(pairs.len()).unwrap_or(u8::MAX);
    r.per_miss = g.per_miss;
    for (slot, [a, b]) in r.limits.iter_mut().zip(pairs) {
        *slot = [of(a), of(b)];
    }
    r
}

/// The design's float tables, padded to N, M, P, in type T.
pub fn float_tables<T: Scalar, const N: usize, const M: usize, const P: usize>(
    d: &Design,
) -> Result<FloatTables<T, N, M, P>, SimError> {
    let gate = match &d.gate {
        None => None,
        Some(g) => Some(Gate {
            s_inv: padded("S⁻¹", &g.s_inv)?,
            limit: T::of(g.limit).unwrap_or_else(T::infinity),
            channel_inv_variance: padded_vec(&g.channel_inv_variance),
            channel_limit: T::of(g.channel_limit).unwrap_or_else(T::infinity),
            recovery: recovery(g),
        }),
    };
    let plant = || -> Result<Plant<T, N, M, P>, SimError> {
        Ok(Plant {
            a: padded("ad", &d.ad)?,
            b: padded("bd", &d.bd)?,
            c: padded("cd", &d.cd)?,
            d: padded("dd", &d.dd)?,
        })
    };
    Ok(match (&d.gain, d.model.observer.form) {
        (Some(l), Form::Predictor) => FloatTables::Predictor(PredictorTables {
            plant: plant()?,
            l: padded("l", l)?,
            gate,
        }),
        (Some(k), Form::Current) => FloatTables::Current(CurrentTables {
            plant: plant()?,
            k: padded("k", k)?,
            gate,
        }),
        (None, _) => FloatTables::Fused(FusedTables {
            f: padded("f", &d.f)?,
            g: padded("g", &d.g)?,
            h: padded("h", &d.h)?,
            c: padded("cd", &d.cd)?,
            d: padded("dd", &d.dd)?,
            gate,
        }),
    })
}

/// The design's Q tables for its form, padded, in format Q.
pub enum FixedTables<Q: Fixed, const N: usize, const M: usize, const P: usize> {
    /// Predictor form.
    Predictor(FixedPredictorTables<Q, N, M, P>),
    /// Current form.
    Current(FixedCurrentTables<Q, N, M, P>),
    /// Fused (held) form.
    Fused(FixedFusedTables<Q, N, M, P>),
}

fn pad_exponents<const K: usize>(e: &[i8]) -> [i8; K] {
    let mut out = [0; K];
    for (o, &v) in out.iter_mut().zip(e) {
        *o = v;
    }
    out
}

/// The design's Q tables in format Q for `format` (Q31 or Q15), padded to
/// N, M, P: built by the runtime's `from_float` at the design's scales, and
/// for the format the design was made for checked against its own.
pub fn fixed_tables<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    design: &Design,
    format: Format,
) -> Result<FixedTables<Q, N, M, P>, SimError> {
    let fixed = design
        .fixed_point
        .as_ref()
        .ok_or_else(|| SimError::Failure(format!("{}: no [fixed_point] section", format.name())))?;
    let scales = Scales::<N, M, P> {
        state: pad_exponents(&fixed.state_exponents),
        input: pad_exponents(&fixed.input_exponents),
        output: pad_exponents(&fixed.output_exponents),
    };
    let designed = match fixed.format {
        FixedFormat::Q31 => format == Format::Q31,
        FixedFormat::Q15 => format == Format::Q15,
    };
    let convert = |e: ConvertError| {
        SimError::BadInput(format!(
            "{}: {} tables cannot be built with the design's scales: {e:?}",
            design.origin,
            format.name()
        ))
    };
    let check = |list: &[QuantisedTable], state_rows: &[(&Vec<Vec<i64>>, &[i8])], c, d| {
        if designed {
            check_tables(list, state_rows, &[c, d])
        } else {
            Ok(())
        }
    };
    Ok(match float_tables::<f64, N, M, P>(design)? {
        FloatTables::Predictor(t) => {
            let q = FixedPredictorTables::<Q, N, M, P>::from_float(&t, scales).map_err(convert)?;
            let o = &q.output;
            check(
                &fixed.form_tables,
                &[
                    (&as_i64(&q.a), &q.exp),
                    (&as_i64(&q.b), &q.exp),
                    (&as_i64(&q.l), &q.exp),
                ],
                (&as_i64(&o.c), &o.exp),
                (&as_i64(&o.d), &o.exp),
            )?;
            FixedTables::Predictor(q)
        }
        FloatTables::Current(t) => {
            let q = FixedCurrentTables::<Q, N, M, P>::from_float(&t, scales).map_err(convert)?;
            let o = &q.output;
            check(
                &fixed.form_tables,
                &[
                    (&as_i64(&q.a), &q.exp),
                    (&as_i64(&q.b), &q.exp),
                    (&as_i64(&q.k), &q.k_exp),
                ],
                (&as_i64(&o.c), &o.exp),
                (&as_i64(&o.d), &o.exp),
            )?;
            FixedTables::Current(q)
        }
        FloatTables::Fused(t) => {
            let q = FixedFusedTables::<Q, N, M, P>::from_float(&t, scales).map_err(convert)?;
            let o = &q.output;
            check(
                &fixed.fused_tables,
                &[
                    (&as_i64(&q.f), &q.exp),
                    (&as_i64(&q.g), &q.exp),
                    (&as_i64(&q.h), &q.exp),
                ],
                (&as_i64(&o.c), &o.exp),
                (&as_i64(&o.d), &o.exp),
            )?;
            FixedTables::Fused(q)
        }
    })
}

/// The stored integers of a padded Q table, row-major.
fn as_i64<Q: Fixed, const R: usize, const C: usize>(m: &Matrix<Q, R, C>) -> Vec<Vec<i64>> {
    m.to_rows()
        .iter()
        .map(|row| row.iter().map(|q| q.to_i64()).collect())
        .collect()
}

/// Checks that the runtime's `from_float` made the integers and row
/// exponents the design emits (`tables` in the design's order: the three
/// state-row tables, then c and d).
fn check_tables(
    designed: &[QuantisedTable],
    state_rows: &[(&Vec<Vec<i64>>, &[i8])],
    output_rows: &[(&Vec<Vec<i64>>, &[i8])],
) -> Result<(), SimError> {
    let ours = state_rows.iter().chain(output_rows);
    if designed.len() != state_rows.len() + output_rows.len() {
        return Err(SimError::Failure(format!(
            "the design lists {} Q tables, the runtime builds {}",
            designed.len(),
            state_rows.len() + output_rows.len()
        )));
    }
    for (table, (ints, exps)) in designed.iter().zip(ours) {
        for i in 0..table.q.nrows() {
            let exp = exps.get(i).copied();
            if exp != table.exponents.get(i).copied() {
                return Err(SimError::Failure(format!(
                    "Q table {}: row {i} exponent {:?} from the runtime, {:?} from the design",
                    table.name,
                    exp,
                    table.exponents.get(i)
                )));
            }
            for j in 0..table.q.ncols() {
                let ours = ints.get(i).and_then(|r| r.get(j)).copied();
                let theirs = table.q.get((i, j)).copied();
                if ours != theirs {
                    return Err(SimError::Failure(format!(
                        "Q table {}: entry ({i}, {j}) is {ours:?} from the runtime's from_float, {theirs:?} in the design",
                        table.name
                    )));
                }
            }
        }
    }
    Ok(())
}
