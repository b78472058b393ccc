//! Invented demo tables for the benchmark sizes (not a real plant): a
//! contracting chain of coupled states, so that a run of millions of steps
//! with constant inputs settles on a fixed point and never overflows,
//! saturates or reaches subnormal numbers.
//!
//! A has 0.7 on the diagonal and ±0.1 beside it (‖A‖∞ ≤ 0.9); every gain
//! entry is 0.015 and |C| has row sums 1.25, so ‖L C‖∞ ≤ 0.075 and both
//! observer forms contract in the ∞-norm for P ≤ 4.

use lookout::{
    CurrentTables, Fixed, FixedCurrentTables, FixedFusedTables, FixedPredictorTables, FusedTables,
    Matrix, Plant, PredictorTables, Scales,
};
use lookout_design::fixed_point::{ConvertError, QuantiseTables as _};

/// The f64 tables of one size and the operating point the benchmarks step at.
#[derive(Clone, Debug)]
pub struct Scenario<const N: usize, const M: usize, const P: usize> {
    /// Predictor (Luenberger) tables, gain L.
    pub predictor: PredictorTables<f64, N, M, P>,
    /// Current-form tables, gain K.
    pub current: CurrentTables<f64, N, M, P>,
    /// Fused tables of the predictor design: F = A − L C, G = B − L D, H = L.
    pub fused: FusedTables<f64, N, M, P>,
    /// A state near the fixed point of the constant inputs below.
    pub x0: [f64; N],
    /// The input every step is given.
    pub u: [f64; M],
    /// The reading every step is given.
    pub y: [f64; P],
    /// Power-of-two scales that hold x0, u, y and the predicted readings
    /// with a factor of two to spare.
    pub scales: Scales<N, M, P>,
}

fn rows<const R: usize, const C: usize>(f: impl Fn(usize, usize) -> f64) -> Matrix<f64, R, C> {
    let mut m = [[0.0; C]; R];
    for (i, row) in m.iter_mut().enumerate() {
        for (j, v) in row.iter_mut().enumerate() {
            *v = f(i, j);
        }
    }
    Matrix::from_rows(m)
}

fn get<const R: usize, const C: usize>(m: &Matrix<f64, R, C>, i: usize, j: usize) -> f64 {
    m.get(i, j).unwrap_or(0.0)
}

/// `a · v` in f64, row by row.
fn mul<const R: usize, const C: usize>(a: &Matrix<f64, R, C>, v: &[f64; C]) -> [f64; R] {
    let mut out = [0.0; R];
    for (i, o) in out.iter_mut().enumerate() {
        *o = v.iter().enumerate().map(|(j, &vj)| get(a, i, j) * vj).sum();
    }
    out
}

/// The smallest exponent s ≥ 0 with 2·|v| < 2^s.
fn exponent(v: f64) -> i8 {
    let mut s = 0i8;
    while 2.0 * v.abs() >= f64::powi(2.0, i32::from(s)) && s < 30 {
        s += 1;
    }
    s
}

impl<const N: usize, const M: usize, const P: usize> Scenario<N, M, P> {
    /// The scenario of size (N, M, P), P ≤ N.
    pub fn new() -> Self {
        let a = rows::<N, N>(|i, j| match i.abs_diff(j) {
            0 => 0.7,
            1 if j > i => 0.1,
            1 => -0.1,
            _ => 0.0,
        });
        let b = rows::<N, M>(|i, k| 0.05 * (1 + (i + 2 * k) % 3) as f64);
        let c = rows::<P, N>(|j, i| {
            let at = j * N / P;
            if i == at {
                1.0
            } else if i == (at + 1) % N {
                0.25
            } else {
                0.0
            }
        });
        let d = rows::<P, M>(|_, _| 0.01);
        let gain = rows::<N, P>(|_, _| 0.015);
        let plant = Plant { a, b, c, d };
        let f = rows::<N, N>(|i, j| {
            get(&a, i, j)
                - (0..P)
                    .map(|l| get(&gain, i, l) * get(&c, l, j))
                    .sum::<f64>()
        });
        let g = rows::<N, M>(|i, k| {
            get(&b, i, k)
                - (0..P)
                    .map(|l| get(&gain, i, l) * get(&d, l, k))
                    .sum::<f64>()
        });
        let u: [f64; M] = core::array::from_fn(|k| [0.3, -0.2, 0.1][k % 3]);
        let y: [f64; P] = core::array::from_fn(|j| [0.5, -0.4, 0.3, 0.2][j % 4]);
        // Settle on the fixed point: x ← F x + G u + H y contracts (see the
        // module doc), 600 steps shrink the start error by 0.975^600 < 1e-6.
        let mut x0 = [0.0; N];
        for _ in 0..600 {
            let (fx, gu, hy) = (mul(&f, &x0), mul(&g, &u), mul(&gain, &y));
            x0 = core::array::from_fn(|i| fx[i] + gu[i] + hy[i]);
        }
        let (cx, du) = (mul(&c, &x0), mul(&d, &u));
        let scales = Scales {
            state: x0.map(exponent),
            input: u.map(exponent),
            output: core::array::from_fn(|j| exponent(y[j].abs().max((cx[j] + du[j]).abs()))),
        };
        Self {
            predictor: PredictorTables {
                plant,
                l: gain,
                gate: None,
            },
            current: CurrentTables {
                plant,
                k: gain,
                gate: None,
            },
            fused: FusedTables {
                f,
                g,
                h: gain,
                c,
                d,
                gate: None,
            },
            x0,
            u,
            y,
            scales,
        }
    }

    /// The Q tables of the three forms, from `from_float`.
    pub fn fixed<Q: Fixed>(
        &self,
    ) -> (
        FixedPredictorTables<Q, N, M, P>,
        FixedCurrentTables<Q, N, M, P>,
        FixedFusedTables<Q, N, M, P>,
    ) {
        let s = self.scales;
        let check = |what: &str, e: ConvertError| -> ! {
            eprintln!("scenario ({N},{M},{P}): {what} tables do not convert: {e}");
            std::process::exit(1)
        };
        (
            FixedPredictorTables::from_float(&self.predictor, s)
                .unwrap_or_else(|e| check("predictor", e)),
            FixedCurrentTables::from_float(&self.current, s)
                .unwrap_or_else(|e| check("current", e)),
            FixedFusedTables::from_float(&self.fused, s).unwrap_or_else(|e| check("fused", e)),
        )
    }
}

/// Multiply-adds of one predictor or current-form step: N² + NM + 2NP + PM.
pub const fn macs_full(n: usize, m: usize, p: usize) -> usize {
    n * n + n * m + 2 * n * p + p * m
}

/// Multiply-adds of one fused step: N² + NM + NP.
pub const fn macs_fused(n: usize, m: usize, p: usize) -> usize {
    n * n + n * m + n * p
}
