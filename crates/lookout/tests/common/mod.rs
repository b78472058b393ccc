//! Plain reference arithmetic for the runtime tests: dense row-major f64
//! matrices, written independently of the runtime's kernels.
#![allow(dead_code)]

pub type Rows<const R: usize, const C: usize> = [[f64; C]; R];

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

pub fn mat_vec<const R: usize, const C: usize>(a: &Rows<R, C>, v: &[f64; C]) -> [f64; R] {
    let mut out = [0.0; R];
    for i in 0..R {
        out[i] = (0..C).map(|k| a[i][k] * v[k]).sum();
    }
    out
}

pub fn sub<const R: usize, const C: usize>(a: &Rows<R, C>, b: &Rows<R, C>) -> Rows<R, C> {
    let mut out = *a;
    for i in 0..R {
        for j in 0..C {
            out[i][j] -= b[i][j];
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

pub fn vec_sub<const N: usize>(a: &[f64; N], b: &[f64; N]) -> [f64; N] {
    let mut out = *a;
    for i in 0..N {
        out[i] -= b[i];
    }
    out
}

pub fn vec_add<const N: usize>(a: &[f64; N], b: &[f64; N]) -> [f64; N] {
    let mut out = *a;
    for i in 0..N {
        out[i] += b[i];
    }
    out
}

pub fn norm_inf<const N: usize>(v: &[f64; N]) -> f64 {
    v.iter().fold(0.0, |m, x| m.max(x.abs()))
}

/// The induced ∞-norm (largest absolute row sum).
pub fn mat_norm_inf<const R: usize, const C: usize>(a: &Rows<R, C>) -> f64 {
    a.iter()
        .map(|row| row.iter().map(|x| x.abs()).sum::<f64>())
        .fold(0.0, f64::max)
}

/// The true plant x⁺ = A x + B u, y = C x + D u.
pub struct TruePlant<const N: usize, const M: usize, const P: usize> {
    pub a: Rows<N, N>,
    pub b: Rows<N, M>,
    pub c: Rows<P, N>,
    pub d: Rows<P, M>,
    pub x: [f64; N],
}

impl<const N: usize, const M: usize, const P: usize> TruePlant<N, M, P> {
    pub fn output(&self, u: &[f64; M]) -> [f64; P] {
        vec_add(&mat_vec(&self.c, &self.x), &mat_vec(&self.d, u))
    }
    pub fn advance(&mut self, u: &[f64; M]) {
        self.x = vec_add(&mat_vec(&self.a, &self.x), &mat_vec(&self.b, u));
    }
}

/// Proptest settings shared by the runtime's property tests: a fixed seed so
/// every run checks the same cases, and no failure-persistence files.
pub fn fixed_seed(cases: u32) -> proptest::test_runner::Config {
    proptest::test_runner::Config {
        cases,
        rng_seed: proptest::test_runner::RngSeed::Fixed(0x1005_0b5e),
        failure_persistence: None,
        ..proptest::test_runner::Config::default()
    }
}
