//! The hand-off to the runtime for host code that wants a design's tables
//! at run time (a simulator, tests, a host-side controller): the runtime's
//! `const`-size tables, float or Q, built from [`Design::observer`] and, for
//! Q tables, from the design's one quantiser, so they equal the emitted
//! tables entry for entry and integer for integer.
//!
//! The sizes `N`, `M`, `P` may exceed the design's n, m, p: the extra
//! states, inputs and outputs are padded with zero rows and columns (and
//! scale exponent 0). A padded table runs the design exactly: the extra
//! states start at zero and stay there (their rows of every table are
//! zero), the extra inputs and outputs are multiplied by zero columns, and
//! for Q tables the row exponents do not change (zero entries add nothing
//! to a row sum).

use crate::design::{Design, GateDesign, ObserverForm};
use crate::fixed_point::handoff::{exps, fixed_gate, q_matrix};
use crate::fixed_point::{QForm, QTables};
use crate::model::FixedFormat;
use lookout::{
    CurrentTables, Fixed, FixedCurrentTables, FixedFusedTables, FixedOutputMap,
    FixedPredictorTables, FusedTables, GATE_STAGES, Gate, Matrix, Plant, PredictorTables, Real,
    Recovery, Scales,
};
use nalgebra::DMatrix;
use std::fmt;

/// Why the runtime's tables could not be built from a design.
#[derive(Debug, Clone, PartialEq)]
pub enum HandoffError {
    /// The design runs another form than the one asked for.
    Form {
        /// The form asked for.
        wanted: &'static str,
        /// The design's form.
        design: &'static str,
    },
    /// A table is larger than the const size asked for.
    Size {
        /// The table.
        table: &'static str,
        /// Its rows and columns in the design.
        design: (usize, usize),
        /// The rows and columns asked for.
        asked: (usize, usize),
    },
    /// An entry does not fit the scalar (f32 overflow).
    Scalar {
        /// The table.
        table: &'static str,
    },
    /// No Q tables in this format: the reason.
    Fixed(String),
}

impl fmt::Display for HandoffError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Self::Form { wanted, design } => write!(
                f,
                "{wanted} tables asked for, but the design runs the {design} form"
            ),
            Self::Size {
                table,
                design,
                asked,
            } => write!(
                f,
                "table {table} is {}×{} in the design, larger than the {}×{} asked for",
                design.0, design.1, asked.0, asked.1
            ),
            Self::Scalar { table } => {
                write!(f, "an entry of table {table} does not fit the scalar")
            }
            Self::Fixed(why) => write!(f, "no Q tables: {why}"),
        }
    }
}

impl std::error::Error for HandoffError {}

fn form_name(form: &ObserverForm<'_>) -> &'static str {
    match form {
        ObserverForm::Predictor { .. } => "predictor",
        ObserverForm::Current { .. } => "current",
        ObserverForm::Fused => "fused (held)",
    }
}

fn fits(
    table: &'static str,
    shape: (usize, usize),
    r: usize,
    c: usize,
) -> Result<(), HandoffError> {
    if shape.0 > r || shape.1 > c {
        return Err(HandoffError::Size {
            table,
            design: shape,
            asked: (r, c),
        });
    }
    Ok(())
}

fn scalar<T: Real>(table: &'static str, v: f64) -> Result<T, HandoffError> {
    T::from(v)
        .filter(|t: &T| t.is_finite())
        .ok_or(HandoffError::Scalar { table })
}

/// `m` as a const-size float matrix, zero-padded.
fn padded<T: Real, const R: usize, const C: usize>(
    table: &'static str,
    m: &DMatrix<f64>,
) -> Result<Matrix<T, R, C>, HandoffError> {
    fits(table, m.shape(), R, C)?;
    let mut rows = [[T::zero(); C]; R];
    for (i, row) in rows.iter_mut().enumerate().take(m.nrows()) {
        for (j, v) in row.iter_mut().enumerate().take(m.ncols()) {
            *v = scalar(table, m[(i, j)])?;
        }
    }
    Ok(Matrix::from_rows(rows))
}

fn padded_list<T: Real, const K: usize>(
    table: &'static str,
    v: &[f64],
) -> Result<[T; K], HandoffError> {
    fits(table, (v.len(), 1), K, 1)?;
    let mut out = [T::zero(); K];
    for (o, &x) in out.iter_mut().zip(v) {
        *o = scalar(table, x)?;
    }
    Ok(out)
}

fn gate<T: Real, const P: usize>(
    g: Option<&GateDesign>,
) -> Result<Option<Gate<T, P>>, HandoffError> {
    let Some(g) = g else { return Ok(None) };
    let widened = g.recovery_limits();
    fits("recovery", (widened.len(), 1), GATE_STAGES, 1)?;
    let mut recovery = Recovery::none(T::zero());
    recovery.stages = u8::try_from(widened.len()).unwrap_or(0);
    recovery.per_miss = g.per_miss;
    for (slot, &[a, b]) in recovery.limits.iter_mut().zip(&widened) {
        *slot = [scalar("recovery", a)?, scalar("recovery", b)?];
    }
    Ok(Some(Gate {
        s_inv: padded("s_inv", &g.s_inv)?,
        limit: scalar("limit", g.limit)?,
        channel_inv_variance: padded_list("channel_inv_variance", &g.channel_inv_variance)?,
        channel_limit: scalar("channel_limit", g.channel_limit)?,
        recovery,
    }))
}

fn plant<T: Real, const N: usize, const M: usize, const P: usize>(
    d: &Design,
) -> Result<Plant<T, N, M, P>, HandoffError> {
    let p = d.observer().plant;
    Ok(Plant {
        a: padded("a", p.a)?,
        b: padded("b", p.b)?,
        c: padded("c", p.c)?,
        d: padded("d", p.d)?,
    })
}

/// The design's predictor tables in `T` (f32 or f64), zero-padded to
/// `N`, `M`, `P`; refused for another form.
pub fn predictor_tables<T: Real, const N: usize, const M: usize, const P: usize>(
    d: &Design,
) -> Result<PredictorTables<T, N, M, P>, HandoffError> {
    let o = d.observer();
    let ObserverForm::Predictor { l } = o.form else {
        return Err(HandoffError::Form {
            wanted: "predictor",
            design: form_name(&o.form),
        });
    };
    Ok(PredictorTables {
        plant: plant(d)?,
        l: padded("l", l)?,
        gate: gate(o.gate)?,
    })
}

/// The design's current-form tables in `T`, zero-padded; refused for
/// another form.
pub fn current_tables<T: Real, const N: usize, const M: usize, const P: usize>(
    d: &Design,
) -> Result<CurrentTables<T, N, M, P>, HandoffError> {
    let o = d.observer();
    let ObserverForm::Current { k } = o.form else {
        return Err(HandoffError::Form {
            wanted: "current",
            design: form_name(&o.form),
        });
    };
    Ok(CurrentTables {
        plant: plant(d)?,
        k: padded("k", k)?,
        gate: gate(o.gate)?,
    })
}

/// The design's fused tables in `T`, zero-padded (every design has them).
pub fn fused_tables<T: Real, const N: usize, const M: usize, const P: usize>(
    d: &Design,
) -> Result<FusedTables<T, N, M, P>, HandoffError> {
    let o = d.observer();
    Ok(FusedTables {
        f: padded("f", o.fused.f)?,
        g: padded("g", o.fused.g)?,
        h: padded("h", o.fused.h)?,
        c: padded("c", o.plant.c)?,
        d: padded("d", o.plant.d)?,
        gate: gate(o.gate)?,
    })
}

/// The design's Q tables in the format of `Q` (the design's own, or the
/// other format at the same scales).
fn q_tables<Q: Fixed>(d: &Design) -> Result<&QTables, HandoffError> {
    let format = if Q::FRAC == 15 {
        FixedFormat::Q15
    } else {
        FixedFormat::Q31
    };
    let fx = d
        .observer()
        .fixed
        .ok_or_else(|| HandoffError::Fixed("the model has no [fixed_point] section".to_string()))?;
    fx.tables_in(format).map_err(HandoffError::Fixed)
}

/// The integers `q` as a const-size Q matrix, zero-padded.
fn fixed_matrix<Q: Fixed, const R: usize, const C: usize>(
    table: &'static str,
    q: &DMatrix<i64>,
) -> Result<Matrix<Q, R, C>, HandoffError> {
    fits(table, q.shape(), R, C)?;
    Ok(q_matrix(q))
}

/// Exponents, zero-padded.
fn padded_exps<const R: usize>(table: &'static str, v: &[i8]) -> Result<[i8; R], HandoffError> {
    fits(table, (v.len(), 1), R, 1)?;
    Ok(exps(v))
}

fn q_parts<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    q: &QTables,
) -> Result<(Scales<N, M, P>, FixedOutputMap<Q, N, M, P>), HandoffError> {
    let s = &q.scales;
    let [c, dd] = &q.output;
    Ok((
        Scales {
            state: padded_exps("state scales", &s.state)?,
            input: padded_exps("input scales", &s.input)?,
            output: padded_exps("output scales", &s.output)?,
        },
        FixedOutputMap {
            c: fixed_matrix("c", &c.q)?,
            d: fixed_matrix("d", &dd.q)?,
            exp: padded_exps("c", &c.exponents)?,
        },
    ))
}

fn q_gate<Q: Fixed, const P: usize>(
    q: &QTables,
) -> Result<Option<lookout::FixedGate<Q, P>>, HandoffError> {
    let Some(g) = &q.gate else { return Ok(None) };
    fits("s_inv", g.w.shape(), P, P)?;
    fixed_gate::<Q, P>(g)
        .map(Some)
        .map_err(|e| HandoffError::Fixed(e.to_string()))
}

/// The design's predictor tables in `Q` (Q15 or Q31), zero-padded.
pub fn fixed_predictor_tables<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    d: &Design,
) -> Result<FixedPredictorTables<Q, N, M, P>, HandoffError> {
    let q = q_tables::<Q>(d)?;
    let QForm::Predictor { a, b, l } = &q.form else {
        return Err(HandoffError::Form {
            wanted: "predictor",
            design: form_name(&d.observer().form),
        });
    };
    let (scales, output) = q_parts(q)?;
    Ok(FixedPredictorTables {
        scales,
        a: fixed_matrix("a", &a.q)?,
        b: fixed_matrix("b", &b.q)?,
        l: fixed_matrix("l", &l.q)?,
        exp: padded_exps("a", &a.exponents)?,
        output,
        gate: q_gate(q)?,
    })
}

/// The design's current-form tables in `Q`, zero-padded.
pub fn fixed_current_tables<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    d: &Design,
) -> Result<FixedCurrentTables<Q, N, M, P>, HandoffError> {
    let q = q_tables::<Q>(d)?;
    let QForm::Current { a, b, k } = &q.form else {
        return Err(HandoffError::Form {
            wanted: "current",
            design: form_name(&d.observer().form),
        });
    };
    let (scales, output) = q_parts(q)?;
    Ok(FixedCurrentTables {
        scales,
        a: fixed_matrix("a", &a.q)?,
        b: fixed_matrix("b", &b.q)?,
        exp: padded_exps("a", &a.exponents)?,
        k: fixed_matrix("k", &k.q)?,
        k_exp: padded_exps("k", &k.exponents)?,
        output,
        gate: q_gate(q)?,
    })
}

/// The design's fused tables in `Q`, zero-padded.
pub fn fixed_fused_tables<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    d: &Design,
) -> Result<FixedFusedTables<Q, N, M, P>, HandoffError> {
    let q = q_tables::<Q>(d)?;
    let [f, g, h] = &q.fused;
    let (scales, output) = q_parts(q)?;
    Ok(FixedFusedTables {
        scales,
        f: fixed_matrix("f", &f.q)?,
        g: fixed_matrix("g", &g.q)?,
        h: fixed_matrix("h", &h.q)?,
        exp: padded_exps("f", &f.exponents)?,
        output,
        gate: q_gate(q)?,
    })
}
