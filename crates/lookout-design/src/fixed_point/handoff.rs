//! The const-size side of the quantiser: the runtime's Q tables
//! (`lookout::FixedPredictorTables`, …) from its float tables, and back,
//! for host code that builds tables at run time (tests, benchmarks,
//! `lookout simulate`). Every integer comes from the design's one
//! quantiser ([`quantise`](super::quantise)), so these tables equal the
//! emitted ones integer for integer.

use super::gate::{self, FloatGate, QuantisedGate};
use super::quantise::{Block, ConvertError, QuantisedTable, stacked};
use lookout::{
    CurrentTables, Fixed, FixedCurrentTables, FixedFusedTables, FixedGate, FixedOutputMap,
    FixedPredictorTables, FusedTables, GATE_STAGES, Gate, Matrix, Plant, PredictorTables, Recovery,
    Scales, TableName, Wide,
};
use nalgebra::DMatrix;

/// Q tables of the runtime built from float tables by the design's
/// quantiser, and the float tables they stand for.
///
/// ```
/// use lookout::{FixedFusedTables, FusedTables, Matrix, Q31, Scales};
/// use lookout_design::fixed_point::QuantiseTables as _;
/// let float = FusedTables {
///     f: Matrix::from_rows([[0.5]]),
///     g: Matrix::from_rows([[0.25]]),
///     h: Matrix::from_rows([[0.25]]),
///     c: Matrix::from_rows([[1.0]]),
///     d: Matrix::from_rows([[0.0]]),
///     gate: None,
/// };
/// let scales = Scales { state: [0], input: [0], output: [0] };
/// let q = FixedFusedTables::<Q31, 1, 1, 1>::from_float(&float, scales).unwrap();
/// assert_eq!(q.exp, [0]); // Σ|τ| = 1 ≤ 2⁰
/// assert_eq!(q.to_float(), float); // every entry is a short binary fraction
/// ```
pub trait QuantiseTables<const N: usize, const M: usize, const P: usize>: Sized {
    /// The float tables of the same form.
    type Float;
    /// Q tables for `float` at the signal scales `scales`.
    fn from_float(float: &Self::Float, scales: Scales<N, M, P>) -> Result<Self, ConvertError>;
    /// The float tables these stand for: exact, except S⁻¹ of a gate,
    /// rebuilt as WᵀW (rounded once per entry in `f64`).
    fn to_float(&self) -> Self::Float;
}

/// A const-size matrix as a run-time one.
pub(crate) fn dynamic<const R: usize, const C: usize>(m: &Matrix<f64, R, C>) -> DMatrix<f64> {
    DMatrix::from_fn(R, C, |i, j| m.get(i, j).unwrap_or(0.0))
}

/// The integers of `t` as a const-size Q matrix (zero outside `t`).
pub(crate) fn q_matrix<Q: Fixed, const R: usize, const C: usize>(
    q: &DMatrix<i64>,
) -> Matrix<Q, R, C> {
    let at = |i: usize, j: usize| q.get((i, j)).copied().unwrap_or(0);
    Matrix::from_rows(core::array::from_fn(|i| {
        core::array::from_fn(|j| Q::from_i64_saturating(at(i, j)))
    }))
}

/// The first `R` exponents (zero beyond `v`).
pub(crate) fn exps<const R: usize>(v: &[i8]) -> [i8; R] {
    core::array::from_fn(|i| v.get(i).copied().unwrap_or(0))
}

/// The float table a Q block stands for: q_ij · 2^(e_i − F) · 2^(s_i − s_j),
/// exact.
fn dequantise<Q: Fixed, const R: usize, const C: usize>(
    m: &Matrix<Q, R, C>,
    input: &[i8; C],
    output: &[i8; R],
    exp: &[i8; R],
) -> Matrix<f64, R, C> {
    let rows = m.to_rows();
    Matrix::from_rows(core::array::from_fn(|i| {
        core::array::from_fn(|j| {
            let q = rows[i][j];
            q.to_real(exp[i]) * 2f64.powi(i32::from(output[i]) - i32::from(input[j]))
        })
    }))
}

/// The stacked blocks `(table, name, input scales)` quantised into the rows
/// whose scales are `output`.
fn quantise_rows<Q: Fixed>(
    blocks: &[(DMatrix<f64>, TableName, &[i8])],
    output: &[i8],
) -> Result<Vec<QuantisedTable>, ConvertError> {
    let blocks: Vec<Block<'_>> = blocks
        .iter()
        .map(|(m, name, input)| Block::new(*name, m, input))
        .collect();
    stacked::<Q>(&blocks, output)
}

/// The `i`-th table of `tables` as a const-size Q matrix.
fn nth<Q: Fixed, const R: usize, const C: usize>(
    tables: &[QuantisedTable],
    i: usize,
) -> Matrix<Q, R, C> {
    tables
        .get(i)
        .map_or(Matrix::from_cols([[Q::ZERO; R]; C]), |t| q_matrix(&t.q))
}

/// Row exponents of the first table of `tables`.
fn first_exps<const R: usize>(tables: &[QuantisedTable]) -> [i8; R] {
    exps(tables.first().map_or(&[][..], |t| &t.exponents))
}

fn output_map<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    c: &Matrix<f64, P, N>,
    d: &Matrix<f64, P, M>,
    s: &Scales<N, M, P>,
) -> Result<FixedOutputMap<Q, N, M, P>, ConvertError> {
    let t = quantise_rows::<Q>(
        &[
            (dynamic(c), TableName::C, &s.state),
            (dynamic(d), TableName::D, &s.input),
        ],
        &s.output,
    )?;
    Ok(FixedOutputMap {
        c: nth(&t, 0),
        d: nth(&t, 1),
        exp: first_exps(&t),
    })
}

fn output_float<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    o: &FixedOutputMap<Q, N, M, P>,
    s: &Scales<N, M, P>,
) -> (Matrix<f64, P, N>, Matrix<f64, P, M>) {
    (
        dequantise(&o.c, &s.state, &s.output, &o.exp),
        dequantise(&o.d, &s.input, &s.output, &o.exp),
    )
}

/// The float gate of the runtime at run-time size.
fn float_gate<const P: usize>(g: &Gate<f64, P>) -> FloatGate {
    FloatGate {
        s_inv: dynamic(&g.s_inv),
        limit: g.limit,
        channel_inv_variance: g.channel_inv_variance.to_vec(),
        channel_limit: g.channel_limit,
        recovery: g
            .recovery
            .limits
            .iter()
            .take(usize::from(g.recovery.stages))
            .copied()
            .collect(),
        per_miss: g.recovery.per_miss,
    }
}

/// A quantised gate as the runtime's `FixedGate` (zero beyond its size).
pub(crate) fn fixed_gate<Q: Fixed, const P: usize>(
    g: &QuantisedGate,
) -> Result<FixedGate<Q, P>, ConvertError> {
    let acc = <Q::Acc as Wide>::from_i64_saturating;
    let mut recovery = Recovery::none(<Q::Acc as Wide>::ZERO);
    if g.recovery.len() > GATE_STAGES {
        return Err(ConvertError::Shape {
            table: TableName::Limit,
        });
    }
    recovery.stages = u8::try_from(g.recovery.len()).unwrap_or(0);
    recovery.per_miss = g.per_miss;
    for (slot, &[a, b]) in recovery.limits.iter_mut().zip(&g.recovery) {
        *slot = [acc(a), acc(b)];
    }
    Ok(FixedGate {
        w: q_matrix(&g.w),
        w_exp: exps(&g.w_exp),
        channel_w: core::array::from_fn(|j| {
            Q::from_i64_saturating(g.channel_w.get(j).copied().unwrap_or(0))
        }),
        channel_exp: exps(&g.channel_exp),
        z_exp: g.z_exp,
        limit: acc(g.limit),
        channel_limit: acc(g.channel_limit),
        recovery,
    })
}

fn gate_of<Q: Fixed, const P: usize>(
    g: Option<&Gate<f64, P>>,
    output: &[i8; P],
) -> Result<Option<FixedGate<Q, P>>, ConvertError> {
    g.map(|g| fixed_gate(&gate::quantise::<Q>(&float_gate(g), output)?))
        .transpose()
}

/// The float gate a Q gate stands for: S⁻¹ = WᵀW, the rest exact.
fn gate_float<Q: Fixed, const P: usize>(g: &FixedGate<Q, P>, output: &[i8; P]) -> Gate<f64, P> {
    let w = dequantise(&g.w, output, &[g.z_exp; P], &g.w_exp).to_rows();
    let s_inv =
        core::array::from_fn(|i| core::array::from_fn(|j| w.iter().map(|wk| wk[i] * wk[j]).sum()));
    let frac = i32::try_from(Q::FRAC).unwrap_or(31);
    let channel_inv_variance = core::array::from_fn(|j| {
        let scale = i32::from(g.z_exp) - i32::from(output[j]);
        let c = g.channel_w[j].to_real(g.channel_exp[j]) * 2f64.powi(scale);
        c * c
    });
    let unit = 2f64.powi(2 * i32::from(g.z_exp) - 2 * frac);
    let value = |v: Q::Acc| v.to_i64() as f64 * unit;
    let mut recovery = Recovery::none(0.0);
    recovery.stages = g.recovery.stages;
    recovery.per_miss = g.recovery.per_miss;
    let used = usize::from(g.recovery.stages);
    for (t, s) in recovery
        .limits
        .iter_mut()
        .zip(&g.recovery.limits)
        .take(used)
    {
        *t = [value(s[0]), value(s[1])];
    }
    Gate {
        s_inv: Matrix::from_rows(s_inv),
        limit: value(g.limit),
        channel_inv_variance,
        channel_limit: value(g.channel_limit),
        recovery,
    }
}

/// The three tables adding into the state rows, quantised with one exponent
/// per stacked row: [A B L] for the predictor, [F G H] for the fused form.
type StateRows<Q, const N: usize, const M: usize, const P: usize> =
    (Matrix<Q, N, N>, Matrix<Q, N, M>, Matrix<Q, N, P>, [i8; N]);

fn state_rows<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    x: (&Matrix<f64, N, N>, TableName),
    u: (&Matrix<f64, N, M>, TableName),
    y: (&Matrix<f64, N, P>, TableName),
    s: &Scales<N, M, P>,
) -> Result<StateRows<Q, N, M, P>, ConvertError> {
    let t = quantise_rows::<Q>(
        &[
            (dynamic(x.0), x.1, &s.state),
            (dynamic(u.0), u.1, &s.input),
            (dynamic(y.0), y.1, &s.output),
        ],
        &s.state,
    )?;
    Ok((nth(&t, 0), nth(&t, 1), nth(&t, 2), first_exps(&t)))
}

impl<Q: Fixed, const N: usize, const M: usize, const P: usize> QuantiseTables<N, M, P>
    for FixedPredictorTables<Q, N, M, P>
{
    type Float = PredictorTables<f64, N, M, P>;

    fn from_float(t: &Self::Float, scales: Scales<N, M, P>) -> Result<Self, ConvertError> {
        let p = &t.plant;
        let (a, b, l, exp) = state_rows(
            (&p.a, TableName::A),
            (&p.b, TableName::B),
            (&t.l, TableName::L),
            &scales,
        )?;
        Ok(Self {
            a,
            b,
            l,
            exp,
            output: output_map(&p.c, &p.d, &scales)?,
            gate: gate_of(t.gate.as_ref(), &scales.output)?,
            scales,
        })
    }

    fn to_float(&self) -> Self::Float {
        let s = &self.scales;
        let (c, d) = output_float(&self.output, s);
        PredictorTables {
            plant: Plant {
                a: dequantise(&self.a, &s.state, &s.state, &self.exp),
                b: dequantise(&self.b, &s.input, &s.state, &self.exp),
                c,
                d,
            },
            l: dequantise(&self.l, &s.output, &s.state, &self.exp),
            gate: self.gate.as_ref().map(|g| gate_float(g, &s.output)),
        }
    }
}

impl<Q: Fixed, const N: usize, const M: usize, const P: usize> QuantiseTables<N, M, P>
    for FixedCurrentTables<Q, N, M, P>
{
    type Float = CurrentTables<f64, N, M, P>;

    fn from_float(t: &Self::Float, scales: Scales<N, M, P>) -> Result<Self, ConvertError> {
        let (p, s) = (&t.plant, &scales);
        let ab = quantise_rows::<Q>(
            &[
                (dynamic(&p.a), TableName::A, &s.state),
                (dynamic(&p.b), TableName::B, &s.input),
            ],
            &s.state,
        )?;
        let k = quantise_rows::<Q>(&[(dynamic(&t.k), TableName::K, &s.output)], &s.state)?;
        Ok(Self {
            a: nth(&ab, 0),
            b: nth(&ab, 1),
            exp: first_exps(&ab),
            k: nth(&k, 0),
            k_exp: first_exps(&k),
            output: output_map(&p.c, &p.d, s)?,
            gate: gate_of(t.gate.as_ref(), &s.output)?,
            scales,
        })
    }

    fn to_float(&self) -> Self::Float {
        let s = &self.scales;
        let (c, d) = output_float(&self.output, s);
        CurrentTables {
            plant: Plant {
                a: dequantise(&self.a, &s.state, &s.state, &self.exp),
                b: dequantise(&self.b, &s.input, &s.state, &self.exp),
                c,
                d,
            },
            k: dequantise(&self.k, &s.output, &s.state, &self.k_exp),
            gate: self.gate.as_ref().map(|g| gate_float(g, &s.output)),
        }
    }
}

impl<Q: Fixed, const N: usize, const M: usize, const P: usize> QuantiseTables<N, M, P>
    for FixedFusedTables<Q, N, M, P>
{
    type Float = FusedTables<f64, N, M, P>;

    fn from_float(t: &Self::Float, scales: Scales<N, M, P>) -> Result<Self, ConvertError> {
        let (f, g, h, exp) = state_rows(
            (&t.f, TableName::F),
            (&t.g, TableName::G),
            (&t.h, TableName::H),
            &scales,
        )?;
        Ok(Self {
            f,
            g,
            h,
            exp,
            output: output_map(&t.c, &t.d, &scales)?,
            gate: gate_of(t.gate.as_ref(), &scales.output)?,
            scales,
        })
    }

    fn to_float(&self) -> Self::Float {
        let s = &self.scales;
        let (c, d) = output_float(&self.output, s);
        FusedTables {
            f: dequantise(&self.f, &s.state, &s.state, &self.exp),
            g: dequantise(&self.g, &s.input, &s.state, &self.exp),
            h: dequantise(&self.h, &s.output, &s.state, &self.exp),
            c,
            d,
            gate: self.gate.as_ref().map(|g| gate_float(g, &s.output)),
        }
    }
}
