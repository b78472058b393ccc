//! Host-side builders: Q tables from float tables (choosing every row
//! exponent by the row-sum rule of [`Fixed`]) and back. They use floats and
//! are never called by a step.
// Host-side helpers: the no-float rule of the fixed-point steps does not
// apply here (nothing in this file is reachable from a step).
#![allow(clippy::float_arithmetic)]

use super::convert::{
    Block, ConvertError, TableName, dequantise_block, exponent_sum, frac, pow2, quantise_block,
    row_exponents, wide_floor,
};
use super::format::{Fixed, Wide};
use super::tables::{
    FixedCurrentTables, FixedFusedTables, FixedGate, FixedOutputMap, FixedPredictorTables, Scales,
};
use crate::{CurrentTables, FusedTables, Gate, Matrix, Plant, PredictorTables, Recovery};

impl<Q: Fixed, const N: usize, const M: usize, const P: usize> FixedOutputMap<Q, N, M, P> {
    /// C and D in Q form, with one exponent per output row of [C D].
    pub fn from_float(
        c: &Matrix<f64, P, N>,
        d: &Matrix<f64, P, M>,
        scales: &Scales<N, M, P>,
    ) -> Result<Self, ConvertError> {
        let bc = Block {
            m: c,
            input: &scales.state,
            name: TableName::C,
        };
        let bd = Block {
            m: d,
            input: &scales.input,
            name: TableName::D,
        };
        let exp = row_exponents::<Q, P>(&[&bc, &bd], &scales.output)?;
        Ok(Self {
            c: quantise_block(&bc, &scales.output, &exp)?,
            d: quantise_block(&bd, &scales.output, &exp)?,
            exp,
        })
    }

    /// The float C and D these stand for, exactly.
    pub fn to_float(&self, scales: &Scales<N, M, P>) -> (Matrix<f64, P, N>, Matrix<f64, P, M>) {
        (
            dequantise_block(&self.c, &scales.state, &scales.output, &self.exp),
            dequantise_block(&self.d, &scales.input, &scales.output, &self.exp),
        )
    }
}

/// Upper-triangular W with WᵀW = `a` (Cholesky), `a` read from its upper
/// triangle. Terminates: three nested loops of P.
#[allow(clippy::indexing_slicing)] // i, j, k < P by the loop bounds
fn cholesky_upper<const P: usize>(a: &[[f64; P]; P]) -> Result<[[f64; P]; P], ConvertError> {
    let mut w = [[0.0; P]; P];
    for j in 0..P {
        let pivot = a[j][j] - (0..j).map(|k| w[k][j] * w[k][j]).sum::<f64>();
        if !(pivot > 0.0 && pivot.is_finite()) {
            return Err(ConvertError::NotPositiveDefinite { index: j, pivot });
        }
        let wjj = libm::sqrt(pivot);
        w[j][j] = wjj;
        for i in j.saturating_add(1)..P {
            w[j][i] = (a[j][i] - (0..j).map(|k| w[k][j] * w[k][i]).sum::<f64>()) / wjj;
        }
    }
    Ok(w)
}

impl<Q: Fixed, const P: usize> FixedGate<Q, P> {
    /// The gate in Q form for outputs with scale exponents `output`: W from
    /// the Cholesky factor of S⁻¹, z_exp the smallest exponent with both
    /// limits ≤ 2^(2·z_exp), and the limits rounded down to integers.
    pub fn from_float(gate: &Gate<f64, P>, output: &[i8; P]) -> Result<Self, ConvertError> {
        let bad = |index, value| ConvertError::BadGateValue {
            table: TableName::Limit,
            index,
            value,
        };
        let stages = gate
            .recovery
            .limits
            .iter()
            .take(usize::from(gate.recovery.stages));
        let widened = stages.clone().flat_map(|pair| pair.iter().copied());
        let mut largest = 0.0_f64;
        for (index, value) in [gate.limit, gate.channel_limit]
            .into_iter()
            .chain(widened)
            .enumerate()
        {
            if !(value.is_finite() && value >= 0.0) {
                return Err(bad(index, value));
            }
            largest = largest.max(value);
        }
        let z = (-31i8..=31)
            .find(|&g| largest <= pow2(i32::from(g).saturating_mul(2)))
            .ok_or(bad(0, largest))?;
        let f = frac::<Q>();
        let unit = exponent_sum(&[f, f], &[i32::from(z), i32::from(z)]);
        let s_inv = gate.s_inv.to_rows();
        let w = Matrix::from_rows(cholesky_upper(&s_inv)?);
        let z_scale = [z; P];
        let bw = Block {
            m: &w,
            input: output,
            name: TableName::SInv,
        };
        let w_exp = row_exponents::<Q, P>(&[&bw], &z_scale)?;
        let mut channel_w = [Q::ZERO; P];
        let mut channel_exp = [0i8; P];
        let pairs = channel_w.iter_mut().zip(channel_exp.iter_mut());
        for (index, ((q, e), (&v, &s))) in pairs
            .zip(gate.channel_inv_variance.iter().zip(output))
            .enumerate()
        {
            let table = TableName::ChannelInvVariance;
            if !(v.is_finite() && v >= 0.0) {
                return Err(ConvertError::BadGateValue {
                    table,
                    index,
                    value: v,
                });
            }
            let c = Matrix::from_cols([[libm::sqrt(v)]]);
            let block = Block {
                m: &c,
                input: &[s],
                name: table,
            };
            let exp = row_exponents::<Q, 1>(&[&block], &[z])?;
            let [[cq]] = *quantise_block::<Q, 1, 1>(&block, &[z], &exp)?.as_cols();
            let [ce] = exp;
            (*q, *e) = (cq, ce);
        }
        Ok(Self {
            w: quantise_block(&bw, &z_scale, &w_exp)?,
            w_exp,
            channel_w,
            channel_exp,
            z_exp: z,
            limit: wide_floor(gate.limit, unit).ok_or(bad(0, gate.limit))?,
            channel_limit: wide_floor(gate.channel_limit, unit)
                .ok_or(bad(1, gate.channel_limit))?,
            recovery: recovery_limits(&gate.recovery, <Q::Acc as Wide>::ZERO, |v| {
                wide_floor(v, unit).ok_or(bad(2, v))
            })?,
        })
    }

    /// The float gate this stands for: S⁻¹ = WᵀW (rounded once per entry in
    /// `f64`), the rest exact.
    pub fn to_float(&self, output: &[i8; P]) -> Gate<f64, P> {
        let z_scale = [self.z_exp; P];
        let w = dequantise_block(&self.w, output, &z_scale, &self.w_exp).to_rows();
        let mut s_inv = [[0.0; P]; P];
        for (i, row) in s_inv.iter_mut().enumerate() {
            for (j, s) in row.iter_mut().enumerate() {
                *s = w
                    .iter()
                    .map(|wk| wk.get(i).unwrap_or(&0.0) * wk.get(j).unwrap_or(&0.0))
                    .sum();
            }
        }
        let mut channel_inv_variance = [0.0; P];
        let channels = self
            .channel_w
            .iter()
            .zip(self.channel_exp.iter())
            .zip(output.iter());
        for (v, ((&q, &e), &s)) in channel_inv_variance.iter_mut().zip(channels) {
            let c = one_entry_value(q, e, self.z_exp, s);
            *v = c * c;
        }
        let f = frac::<Q>();
        let z = i32::from(self.z_exp);
        let unit = exponent_sum(&[z, z], &[f, f]);
        let value = |v: Q::Acc| libm::scalbn(v.to_i64() as f64, unit);
        Gate {
            s_inv: Matrix::from_rows(s_inv),
            limit: value(self.limit),
            channel_inv_variance,
            channel_limit: value(self.channel_limit),
            recovery: recovery_limits(&self.recovery, 0.0, |v| Ok::<_, ConvertError>(value(v)))
                .unwrap_or(Recovery::none(0.0)),
        }
    }
}

/// The recovery table with every used limit mapped by `f` (unused entries
/// zero).
fn recovery_limits<A: Copy, B: Copy, E>(
    from: &Recovery<A>,
    zero: B,
    f: impl Fn(A) -> Result<B, E>,
) -> Result<Recovery<B>, E> {
    let mut to = Recovery::none(zero);
    to.stages = from.stages;
    to.per_miss = from.per_miss;
    for (t, s) in to
        .limits
        .iter_mut()
        .zip(from.limits.iter())
        .take(usize::from(from.stages))
    {
        *t = [f(s[0])?, f(s[1])?];
    }
    Ok(to)
}

/// The float value of a one-entry table: q · 2^(e − F + s_out − s_in).
fn one_entry_value<Q: Fixed>(q: Q, e: i8, s_out: i8, s_in: i8) -> f64 {
    let [[v]] = *dequantise_block(&Matrix::from_cols([[q]]), &[s_in], &[s_out], &[e]).as_cols();
    v
}

fn gate_from<Q: Fixed, const P: usize>(
    gate: Option<&Gate<f64, P>>,
    output: &[i8; P],
) -> Result<Option<FixedGate<Q, P>>, ConvertError> {
    gate.map(|g| FixedGate::from_float(g, output)).transpose()
}

/// The three tables that add into the state rows — reading the state, the
/// inputs and the outputs (or innovation) — quantised with one exponent per
/// stacked row: [A B L] for the predictor, [F G H] for the fused form.
#[allow(clippy::type_complexity)] // the three blocks and their shared exponents
fn state_rows<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    x: (&Matrix<f64, N, N>, TableName),
    u: (&Matrix<f64, N, M>, TableName),
    y: (&Matrix<f64, N, P>, TableName),
    s: &Scales<N, M, P>,
) -> Result<(Matrix<Q, N, N>, Matrix<Q, N, M>, Matrix<Q, N, P>, [i8; N]), ConvertError> {
    let bx = Block {
        m: x.0,
        input: &s.state,
        name: x.1,
    };
    let bu = Block {
        m: u.0,
        input: &s.input,
        name: u.1,
    };
    let by = Block {
        m: y.0,
        input: &s.output,
        name: y.1,
    };
    let exp = row_exponents::<Q, N>(&[&bx, &bu, &by], &s.state)?;
    Ok((
        quantise_block(&bx, &s.state, &exp)?,
        quantise_block(&bu, &s.state, &exp)?,
        quantise_block(&by, &s.state, &exp)?,
        exp,
    ))
}

impl<Q: Fixed, const N: usize, const M: usize, const P: usize> FixedPredictorTables<Q, N, M, P> {
    /// Q tables for `tables` with the signal scales `scales`.
    pub fn from_float(
        tables: &PredictorTables<f64, N, M, P>,
        scales: Scales<N, M, P>,
    ) -> Result<Self, ConvertError> {
        let s = &scales;
        let p = &tables.plant;
        let (a, b, l, exp) = state_rows::<Q, N, M, P>(
            (&p.a, TableName::A),
            (&p.b, TableName::B),
            (&tables.l, TableName::L),
            s,
        )?;
        Ok(Self {
            a,
            b,
            l,
            exp,
            output: FixedOutputMap::from_float(&p.c, &p.d, s)?,
            gate: gate_from(tables.gate.as_ref(), &s.output)?,
            scales,
        })
    }

    /// The float tables these stand for (exact, the gate as in
    /// [`FixedGate::to_float`]).
    pub fn to_float(&self) -> PredictorTables<f64, N, M, P> {
        let s = &self.scales;
        let (c, d) = self.output.to_float(s);
        PredictorTables {
            plant: Plant {
                a: dequantise_block(&self.a, &s.state, &s.state, &self.exp),
                b: dequantise_block(&self.b, &s.input, &s.state, &self.exp),
                c,
                d,
            },
            l: dequantise_block(&self.l, &s.output, &s.state, &self.exp),
            gate: self.gate.as_ref().map(|g| g.to_float(&s.output)),
        }
    }
}

impl<Q: Fixed, const N: usize, const M: usize, const P: usize> FixedCurrentTables<Q, N, M, P> {
    /// Q tables for `tables` with the signal scales `scales`.
    pub fn from_float(
        tables: &CurrentTables<f64, N, M, P>,
        scales: Scales<N, M, P>,
    ) -> Result<Self, ConvertError> {
        let s = &scales;
        let p = &tables.plant;
        let ba = Block {
            m: &p.a,
            input: &s.state,
            name: TableName::A,
        };
        let bb = Block {
            m: &p.b,
            input: &s.input,
            name: TableName::B,
        };
        let bk = Block {
            m: &tables.k,
            input: &s.output,
            name: TableName::K,
        };
        let exp = row_exponents::<Q, N>(&[&ba, &bb], &s.state)?;
        let k_exp = row_exponents::<Q, N>(&[&bk], &s.state)?;
        Ok(Self {
            a: quantise_block(&ba, &s.state, &exp)?,
            b: quantise_block(&bb, &s.state, &exp)?,
            exp,
            k: quantise_block(&bk, &s.state, &k_exp)?,
            k_exp,
            output: FixedOutputMap::from_float(&p.c, &p.d, s)?,
            gate: gate_from(tables.gate.as_ref(), &s.output)?,
            scales,
        })
    }

    /// The float tables these stand for (exact, the gate as in
    /// [`FixedGate::to_float`]).
    pub fn to_float(&self) -> CurrentTables<f64, N, M, P> {
        let s = &self.scales;
        let (c, d) = self.output.to_float(s);
        CurrentTables {
            plant: Plant {
                a: dequantise_block(&self.a, &s.state, &s.state, &self.exp),
                b: dequantise_block(&self.b, &s.input, &s.state, &self.exp),
                c,
                d,
            },
            k: dequantise_block(&self.k, &s.output, &s.state, &self.k_exp),
            gate: self.gate.as_ref().map(|g| g.to_float(&s.output)),
        }
    }
}

impl<Q: Fixed, const N: usize, const M: usize, const P: usize> FixedFusedTables<Q, N, M, P> {
    /// Q tables for `tables` with the signal scales `scales`.
    pub fn from_float(
        tables: &FusedTables<f64, N, M, P>,
        scales: Scales<N, M, P>,
    ) -> Result<Self, ConvertError> {
        let s = &scales;
        let (f, g, h, exp) = state_rows::<Q, N, M, P>(
            (&tables.f, TableName::F),
            (&tables.g, TableName::G),
            (&tables.h, TableName::H),
            s,
        )?;
        Ok(Self {
            f,
            g,
            h,
            exp,
            output: FixedOutputMap::from_float(&tables.c, &tables.d, s)?,
            gate: gate_from(tables.gate.as_ref(), &s.output)?,
            scales,
        })
    }

    /// The float tables these stand for (exact, the gate as in
    /// [`FixedGate::to_float`]).
    pub fn to_float(&self) -> FusedTables<f64, N, M, P> {
        let s = &self.scales;
        let (c, d) = self.output.to_float(s);
        FusedTables {
            f: dequantise_block(&self.f, &s.state, &s.state, &self.exp),
            g: dequantise_block(&self.g, &s.input, &s.state, &self.exp),
            h: dequantise_block(&self.h, &s.output, &s.state, &self.exp),
            c,
            d,
            gate: self.gate.as_ref().map(|g| g.to_float(&s.output)),
        }
    }
}
