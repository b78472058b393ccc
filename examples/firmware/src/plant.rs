//! The "true" plant the observers watch: the sampled model in f64, started
//! from a state the observers are not told, driven by a square wave.

use lookout::{Matrix, Plant};

/// y = M v in f64.
fn mul<const R: usize, const C: usize>(m: &Matrix<f64, R, C>, v: &[f64; C]) -> [f64; R] {
    let mut out = [0.0; R];
    for (col, &vj) in m.as_cols().iter().zip(v.iter()) {
        for (o, &mij) in out.iter_mut().zip(col.iter()) {
            *o += mij * vj;
        }
    }
    out
}

fn add<const R: usize>(a: [f64; R], b: [f64; R]) -> [f64; R] {
    let mut out = a;
    for (o, bi) in out.iter_mut().zip(b) {
        *o += bi;
    }
    out
}

/// A sampled plant x⁺ = A x + B u, y = C x + D u and its state.
pub struct Simulated<'t, const N: usize, const M: usize, const P: usize> {
    plant: &'t Plant<f64, N, M, P>,
    /// The true state x\[k\].
    pub x: [f64; N],
}

impl<'t, const N: usize, const M: usize, const P: usize> Simulated<'t, N, M, P> {
    /// The plant `plant` in state `x0`.
    pub fn new(plant: &'t Plant<f64, N, M, P>, x0: [f64; N]) -> Self {
        Self { plant, x: x0 }
    }

    /// y\[k\] = C x\[k\] + D u\[k\].
    pub fn output(&self, u: &[f64; M]) -> [f64; P] {
        add(mul(&self.plant.c, &self.x), mul(&self.plant.d, u))
    }

    /// x\[k+1\] = A x\[k\] + B u\[k\].
    pub fn advance(&mut self, u: &[f64; M]) {
        self.x = add(mul(&self.plant.a, &self.x), mul(&self.plant.b, u));
    }
}

/// The drive signal at step k: every input at +`amplitude` for 250 steps,
/// then at −`amplitude` for 250, and so on (invented).
pub fn square_wave<const M: usize>(k: u32, amplitude: f64) -> [f64; M] {
    let v = if (k / 250).is_multiple_of(2) {
        amplitude
    } else {
        -amplitude
    };
    [v; M]
}
