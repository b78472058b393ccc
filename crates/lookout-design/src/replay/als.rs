//! Process and measurement noise covariances from the innovations of a
//! replayed observer: the autocovariance least-squares (ALS) method of
//! Odelson, Rajamani and Rawlings, "A new autocovariance least-squares
//! method for estimating noise covariances", Automatica 42(2), 2006.
//!
//! Model x⁺ = Ad x + Bd u + w (w of covariance Qd, linear in the model's Q:
//! see [`super::noise_map`](fn@super::noise_map)), y = Cd x + Dd u + v (v of covariance R), run
//! through the predictor gain L (L = Ad K for the current form). The
//! prediction error ε = x − x̂ obeys ε⁺ = Ā ε + w − L v with Ā = Ad − L Cd,
//! and the innovation is e = Cd ε + v. In steady state, with
//! P = Ā P Āᵀ + Qd + L R Lᵀ:
//!
//! C_0 = Cd P Cdᵀ + R,   C_j = Cd Ā^j P Cdᵀ − Cd Ā^{j−1} L R  (j ≥ 1).
//!
//! Every C_j is linear in the entries θ of Q and R, so stacking the entries of
//! C_0..C_{L−1} gives 𝒜 θ = b, with b the sample autocovariances. The
//! estimate is unique exactly when 𝒜 has full column rank (Odelson et al.
//! 2006, Lemma 4); when it has not, an entry θ_i is still fixed by the data
//! when the unit vector e_i lies in the row space of 𝒜 (it has no component
//! in 𝒜's null space). Undetermined entries are reported as such.
//!
//! Positive semidefiniteness: the least-squares solution of the determined
//! entries is formed first (SVD, minimum norm); then Q and R, when all of
//! their entries are determined, are each replaced by the nearest positive
//! semidefinite matrix in the Frobenius norm (negative eigenvalues set to
//! zero: Higham, "Computing a nearest symmetric positive semidefinite
//! matrix", Linear Algebra Appl. 103, 1988, from memory). This projection is
//! not the semidefinite-constrained solve of Odelson et al.; it is exact when
//! the unconstrained estimate is already semidefinite, and the report says
//! when it clipped.

use super::innovation::Innovations;
use super::noise_map::{NoiseMap, symmetric_basis};
use super::whiteness::autocovariances;
use nalgebra::DMatrix;

/// Steady-state data of the fit.
#[derive(Debug, Clone, PartialEq)]
pub struct AlsProblem<'a> {
    /// Sampled Ad (n × n).
    pub ad: &'a DMatrix<f64>,
    /// Cd (p × n).
    pub cd: &'a DMatrix<f64>,
    /// Predictor gain L (n × p).
    pub l: &'a DMatrix<f64>,
    /// Qd per entry of Q.
    pub noise: &'a NoiseMap,
    /// Lags used: C_0..C_{lags−1}.
    pub lags: usize,
}

/// Whether an entry is fixed by the data.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Determined {
    /// The least-squares value of the entry.
    Value(f64),
    /// The data do not determine it.
    No,
}

/// The fit.
#[derive(Debug, Clone, PartialEq)]
pub struct AlsEstimate {
    /// Q entries (i ≤ j) with their values.
    pub q_entries: Vec<((usize, usize), Determined)>,
    /// R entries (i ≤ j) with their values.
    pub r_entries: Vec<((usize, usize), Determined)>,
    /// Q after projection onto the semidefinite cone, when every entry is
    /// determined.
    pub q: Option<DMatrix<f64>>,
    /// R likewise.
    pub r: Option<DMatrix<f64>>,
    /// Whether a projection changed Q or R (an eigenvalue was negative).
    pub clipped: bool,
    /// Column rank of 𝒜 and its number of columns.
    pub rank: (usize, usize),
    /// σ_max/σ_min of 𝒜 over its nonzero singular values (the columns are
    /// not scaled): how much the sampling error of the autocovariances can
    /// be amplified in the entries.
    pub condition: f64,
    /// Samples behind Ĉ_0.
    pub samples: usize,
}

/// Sum Āᵏ W Āᵏᵀ by doubling (Smith's iteration): at most 64 doublings,
/// stopping when the added term is below ε of the sum. `None` when Ā is not
/// stable enough for the sum to settle or it overflows.
fn lyapunov(a: &DMatrix<f64>, w: &DMatrix<f64>) -> Option<DMatrix<f64>> {
    let mut p = w.clone();
    let mut ak = a.clone();
    for _ in 0..64 {
        let step = &ak * &p * ak.transpose();
        p += &step;
        if !p.iter().all(|v| v.is_finite()) {
            return None;
        }
        if step.norm() <= f64::EPSILON * p.norm() {
            return Some(p);
        }
        ak = &ak * &ak;
    }
    None
}

/// C_0..C_{lags−1} implied by Qd and R.
fn implied(pb: &AlsProblem<'_>, qd: &DMatrix<f64>, r: &DMatrix<f64>) -> Option<Vec<DMatrix<f64>>> {
    let abar = pb.ad - pb.l * pb.cd;
    let p = lyapunov(&abar, &(qd + pb.l * r * pb.l.transpose()))?;
    let mut out = vec![pb.cd * &p * pb.cd.transpose() + r];
    let mut power = DMatrix::identity(abar.nrows(), abar.nrows());
    for _ in 1..pb.lags {
        let lr = pb.cd * &power * pb.l * r;
        power = &abar * &power;
        out.push(pb.cd * &power * &p * pb.cd.transpose() - lr);
    }
    Some(out)
}

/// The modelled autocovariances C_0..C_{lags−1} for given Qd and R (for
/// checks against closed forms and the report).
pub fn modelled_autocovariances(
    pb: &AlsProblem<'_>,
    qd: &DMatrix<f64>,
    r: &DMatrix<f64>,
) -> Option<Vec<DMatrix<f64>>> {
    implied(pb, qd, r)
}

fn stacked(c: &[DMatrix<f64>]) -> Vec<f64> {
    c.iter().flat_map(|m| m.iter().copied()).collect()
}

/// Fits Q and R to the innovations `e` (which should start after the
/// observer's transient). `None` when fewer than `lags` pairs exist, the
/// error dynamics are not stable, or the decomposition fails.
pub fn estimate_noise(pb: &AlsProblem<'_>, e: &Innovations) -> Option<AlsEstimate> {
    let p = pb.cd.nrows();
    let n = pb.ad.nrows();
    if pb.lags == 0 || e.p != p {
        return None;
    }
    let (c, pairs) = autocovariances(e, pb.lags - 1);
    if pairs.contains(&0) {
        return None;
    }
    let b = nalgebra::DVector::from_vec(stacked(&c));
    let r_basis = symmetric_basis(p);
    let mut columns = Vec::new();
    for qd in &pb.noise.per_sample {
        columns.push(stacked(&implied(pb, qd, &DMatrix::zeros(p, p))?));
    }
    for (_, r) in &r_basis {
        columns.push(stacked(&implied(pb, &DMatrix::zeros(n, n), r)?));
    }
    let cols = columns.len();
    let a = DMatrix::from_fn(b.len(), cols, |i, j| columns[j][i]);
    let svd = a.clone().try_svd(true, true, f64::EPSILON, 1000)?;
    let largest = svd.singular_values.max();
    // Rank tolerance: max(rows, cols) · ε · σ_max (common practice).
    let tol = b.len().max(cols) as f64 * f64::EPSILON * largest;
    let rank = svd.singular_values.iter().filter(|&&s| s > tol).count();
    let smallest = svd
        .singular_values
        .iter()
        .copied()
        .filter(|&s| s > tol)
        .fold(f64::INFINITY, f64::min);
    let condition = largest / smallest;
    let theta = svd.solve(&b, tol).ok()?;
    let v_t = svd.v_t.as_ref()?;
    // Rows of Vᵀ beyond the rank span the null space (sorted singular values
    // are not guaranteed, so select by value).
    let null: Vec<usize> = (0..svd.singular_values.len())
        .filter(|&i| svd.singular_values[i] <= tol)
        .collect();
    let nq = pb.noise.per_sample.len();
    let determined = |i: usize| -> Determined {
        let leak: f64 = null
            .iter()
            .map(|&k| v_t[(k, i)].powi(2))
            .sum::<f64>()
            .sqrt();
        // Component in the null space above 1e-6: not fixed by the data.
        if leak > 1e-6 {
            Determined::No
        } else {
            Determined::Value(theta[i])
        }
    };
    let q_entries: Vec<_> = pb
        .noise
        .entries
        .iter()
        .enumerate()
        .map(|(i, &e)| (e, determined(i)))
        .collect();
    let r_entries: Vec<_> = r_basis
        .iter()
        .enumerate()
        .map(|(i, (e, _))| (*e, determined(nq + i)))
        .collect();
    let (q, qc) = assemble(pb.noise.q, &q_entries);
    let (r, rc) = assemble(p, &r_entries);
    Some(AlsEstimate {
        q_entries,
        r_entries,
        q,
        r,
        clipped: qc || rc,
        rank: (rank, cols),
        condition,
        samples: pairs.first().copied().unwrap_or(0),
    })
}

/// The symmetric matrix of fully determined entries, projected onto the
/// semidefinite cone, and whether the projection changed it.
fn assemble(k: usize, entries: &[((usize, usize), Determined)]) -> (Option<DMatrix<f64>>, bool) {
    let mut m = DMatrix::zeros(k, k);
    for &((i, j), d) in entries {
        let Determined::Value(v) = d else {
            return (None, false);
        };
        m[(i, j)] = v;
        m[(j, i)] = v;
    }
    match nearest_semidefinite(&m) {
        Some((psd, changed)) => (Some(psd), changed),
        None => (None, false),
    }
}

/// Nearest symmetric positive semidefinite matrix (Frobenius norm):
/// negative eigenvalues set to zero.
pub fn nearest_semidefinite(m: &DMatrix<f64>) -> Option<(DMatrix<f64>, bool)> {
    let k = m.nrows();
    let eig = m
        .clone()
        .try_symmetric_eigen(f64::EPSILON, 100 * k.max(1))?;
    if eig.eigenvalues.iter().all(|&l| l >= 0.0) {
        return Some((m.clone(), false));
    }
    let clipped = DMatrix::from_diagonal(&eig.eigenvalues.map(|l| l.max(0.0)));
    let out = &eig.eigenvectors * clipped * eig.eigenvectors.transpose();
    Some(((&out + out.transpose()) * 0.5, true))
}
