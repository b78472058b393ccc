//! The linear map from the entries of the process noise Q (as the model file
//! writes it: through `noise_input` G, as a continuous density or per sample)
//! to its covariance per sample Qd on the observer's states.
//!
//! Qd is linear in Q both ways the model can state it (G Q Gᵀ per sample;
//! Van Loan's integral ∫ e^{As} G Q Gᵀ e^{Aᵀs} ds for a density), so the map
//! is tabulated once per basis matrix of the symmetric Q and the fit of
//! [`super::als`] stays a linear least-squares problem.

use crate::Design;
use crate::model::{GainSource, NoiseDomain};
use crate::numerics;
use nalgebra::DMatrix;

/// Qd per basis matrix of the symmetric q × q process noise.
#[derive(Debug, Clone, PartialEq)]
pub struct NoiseMap {
    /// Size q of Q.
    pub q: usize,
    /// (i, j) with i ≤ j for each basis matrix E_ij + E_ji (E_ii on the
    /// diagonal), row by row.
    pub entries: Vec<(usize, usize)>,
    /// Qd of each basis matrix (n × n).
    pub per_sample: Vec<DMatrix<f64>>,
    /// How Q is to be read (the model's `noise_domain`; per sample without
    /// an `[observer.kalman]` section, with G the identity).
    pub domain: NoiseDomain,
}

/// The entries (i, j), i ≤ j, of a symmetric k × k matrix, row by row, and
/// the basis matrix of each.
pub fn symmetric_basis(k: usize) -> Vec<((usize, usize), DMatrix<f64>)> {
    let mut out = Vec::new();
    for i in 0..k {
        for j in i..k {
            let mut e = DMatrix::zeros(k, k);
            e[(i, j)] = 1.0;
            e[(j, i)] = 1.0;
            out.push(((i, j), e));
        }
    }
    out
}

/// The map of `design`, or why it cannot be made: the fit covers the plant's
/// own states only, so a model with `[disturbances]` (whose states have noise
/// of their own) is not covered.
pub fn noise_map(design: &Design) -> Result<NoiseMap, String> {
    if design.n() != design.model.plant.n() {
        return Err("the model has [disturbances]: fitting their noise is not covered".into());
    }
    let n = design.n();
    let (g, domain) = match &design.model.observer.gain_source {
        GainSource::Kalman(spec) => (
            spec.noise_input
                .clone()
                .unwrap_or_else(|| DMatrix::identity(n, n)),
            spec.noise_domain,
        ),
        _ => (DMatrix::identity(n, n), NoiseDomain::Discrete),
    };
    let q = g.ncols();
    let mut entries = Vec::new();
    let mut per_sample = Vec::new();
    for (entry, e) in symmetric_basis(q) {
        let qd = match domain {
            NoiseDomain::Discrete => &g * &e * g.transpose(),
            NoiseDomain::Continuous => numerics::van_loan_process_noise(
                &design.model.plant.a,
                &g,
                &e,
                design.model.sample_period,
            )
            .map_err(|err| format!("process noise per sample (Van Loan): {err}"))?,
        };
        entries.push(entry);
        per_sample.push(qd);
    }
    Ok(NoiseMap {
        q,
        entries,
        per_sample,
        domain,
    })
}
