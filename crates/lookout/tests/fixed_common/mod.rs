//! Shared pieces of the fixed-point tests: a seeded generator, random
//! systems in normalised coordinates, and conversions between normalised
//! and physical tables written independently of the runtime's converter.
#![allow(dead_code)]
// Index loops read like the formulas they implement.
#![allow(clippy::needless_range_loop)]

use lookout::Fixed;

pub type Rows<const R: usize, const C: usize> = [[f64; C]; R];

/// xorshift64* (Vigna 2016): a small seeded generator, so the long input
/// sequences cost nothing to generate and every run sees the same ones.
pub struct Xorshift(u64);

impl Xorshift {
    pub fn new(seed: u64) -> Self {
        Self(seed | 1)
    }
    pub fn next_u64(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_f491_4f6c_dd1d)
    }
    /// Uniform in [lo, hi).
    pub fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
        let unit = (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
        lo + (hi - lo) * unit
    }
    /// Uniform integer in [−bound, bound].
    pub fn int(&mut self, bound: i64) -> i64 {
        let span = (2 * bound + 1) as u64;
        (self.next_u64() % span) as i64 - bound
    }
    pub fn rows<const R: usize, const C: usize>(&mut self, bound: f64) -> Rows<R, C> {
        let mut out = [[0.0; C]; R];
        for row in out.iter_mut() {
            for x in row.iter_mut() {
                *x = self.uniform(-bound, bound);
            }
        }
        out
    }
    pub fn exponents<const K: usize>(&mut self, lo: i64, hi: i64) -> [i8; K] {
        let mut out = [0i8; K];
        for e in out.iter_mut() {
            *e = (lo + (self.next_u64() % (hi - lo + 1) as u64) as i64) as i8;
        }
        out
    }
    /// A Q vector with entries uniform in ±amplitude of full scale.
    pub fn q_vec<Q: Fixed, const K: usize>(&mut self, amplitude: f64) -> [Q; K] {
        let bound = (amplitude * (1u64 << Q::FRAC) as f64) as i64;
        let mut out = [Q::default(); K];
        for q in out.iter_mut() {
            *q = Q::from_i64_saturating(self.int(bound));
        }
        out
    }
}

pub fn mat_mul<const R: usize, const K: usize, const C: usize>(
    a: &Rows<R, K>,
    b: &Rows<K, C>,
) -> Rows<R, C> {
    let mut out = [[0.0; C]; R];
    for i in 0..R {
        for j in 0..C {
            out[i][j] = (0..K).map(|k| a[i][k] * b[k][j]).sum();
        }
    }
    out
}

pub fn add<const R: usize, const C: usize>(
    a: &Rows<R, C>,
    b: &Rows<R, C>,
    sign: f64,
) -> Rows<R, C> {
    let mut out = *a;
    for i in 0..R {
        for j in 0..C {
            out[i][j] += sign * b[i][j];
        }
    }
    out
}

pub fn identity<const N: usize>() -> Rows<N, N> {
    let mut out = [[0.0; N]; N];
    for (i, row) in out.iter_mut().enumerate() {
        row[i] = 1.0;
    }
    out
}

/// The induced ∞-norm (largest absolute row sum).
pub fn norm<const R: usize, const C: usize>(a: &Rows<R, C>) -> f64 {
    a.iter()
        .map(|row| row.iter().map(|x| x.abs()).sum::<f64>())
        .fold(0.0, f64::max)
}

/// `a` scaled so that its ∞-norm is `target`.
pub fn with_norm<const R: usize, const C: usize>(a: &Rows<R, C>, target: f64) -> Rows<R, C> {
    let n = norm(a).max(1e-300);
    let mut out = *a;
    for row in out.iter_mut() {
        for x in row.iter_mut() {
            *x *= target / n;
        }
    }
    out
}

/// A normalised table τ in physical units: t_ij = τ_ij · 2^(s_i − s_j).
pub fn physical<const R: usize, const C: usize>(
    tau: &Rows<R, C>,
    s_in: &[i8; C],
    s_out: &[i8; R],
) -> Rows<R, C> {
    let mut out = *tau;
    for i in 0..R {
        for j in 0..C {
            out[i][j] = tau[i][j] * 2f64.powi(i32::from(s_out[i]) - i32::from(s_in[j]));
        }
    }
    out
}

/// A physical table normalised: τ_ij = t_ij · 2^(s_j − s_i).
pub fn normalised<const R: usize, const C: usize>(
    t: &Rows<R, C>,
    s_in: &[i8; C],
    s_out: &[i8; R],
) -> Rows<R, C> {
    let mut out = *t;
    for i in 0..R {
        for j in 0..C {
            out[i][j] = t[i][j] * 2f64.powi(i32::from(s_in[j]) - i32::from(s_out[i]));
        }
    }
    out
}

/// The physical value of a Q word at scale exponent `s`.
pub fn value<Q: Fixed>(q: Q, s: i8) -> f64 {
    q.to_i64() as f64 * 2f64.powi(i32::from(s) - Q::FRAC as i32)
}

/// Physical values of a Q vector.
pub fn values<Q: Fixed, const K: usize>(q: &[Q; K], s: &[i8; K]) -> [f64; K] {
    let mut out = [0.0; K];
    for k in 0..K {
        out[k] = value(q[k], s[k]);
    }
    out
}

/// max_i |q_i − x_i| in LSB of each element's scale.
pub fn lsb_error<Q: Fixed, const K: usize>(q: &[Q; K], x: &[f64; K], s: &[i8; K]) -> f64 {
    (0..K)
        .map(|i| (q[i].to_i64() as f64 - x[i] * 2f64.powi(Q::FRAC as i32 - i32::from(s[i]))).abs())
        .fold(0.0, f64::max)
}

/// Proptest settings: fixed seed, no persistence files (as the float tests).
pub fn fixed_seed(cases: u32) -> proptest::test_runner::Config {
    proptest::test_runner::Config {
        cases,
        rng_seed: proptest::test_runner::RngSeed::Fixed(0xf1ce_d5ee),
        failure_persistence: None,
        ..proptest::test_runner::Config::default()
    }
}
