//! Whether the disturbance states of an augmented model can be told apart
//! from each other and from the plant states.
//!
//! Every disturbance state of the sampled augmented model has the eigenvalue
//! z = 1 exactly, so a disturbance that cannot be seen shows up in the null
//! space of the PBH (Popov–Belevitch–Hautus) matrix `[I − Ad; s·Cd]` at
//! λ = 1 (s = ‖Ad‖_F / ‖Cd‖_F, the scaling of the general PBH test). The test
//! is run at λ = 1 itself rather than at computed eigenvalues because the
//! chains a disturbance forms (load → speed → angle, ramp → value) are Jordan
//! blocks whose computed eigenvalues can stray from 1 by ε^{1/k}.
//!
//! A null vector v of that matrix is an initial state that the outputs never
//! reveal: the states with a visible share of v are the ones that cannot be
//! told apart, and the message names them.

use super::DesignError;
use super::augment::Augmented;
use crate::numerics::observability::PBH_TOLERANCE;
use nalgebra::{DMatrix, SVD};

/// Iteration cap of the singular value decomposition (as in the numerics module).
const SVD_MAX_ITER: usize = 10_000;

/// Share `|v_i| / max |v|` of a null vector above which state i counts as
/// involved: components that are zero in exact arithmetic come out near ε
/// times the null vector's conditioning, far below this.
const INVOLVED: f64 = 1.0e-6;

/// Refuses `sys` (sampled as `ad`, `cd`) when a disturbance state lies in an
/// unobservable direction at z = 1; the error names the disturbances and the
/// plant states it cannot be told apart from, and gives the direction.
pub(super) fn check(
    origin: &str,
    sys: &Augmented,
    ad: &DMatrix<f64>,
    cd: &DMatrix<f64>,
) -> Result<(), DesignError> {
    if !sys.has_disturbances() {
        return Ok(());
    }
    let n = ad.nrows();
    let p = cd.nrows();
    let (an, cn) = (ad.norm(), cd.norm());
    let scale = if an > 0.0 && cn > 0.0 { an / cn } else { 1.0 };
    let mut m = DMatrix::zeros(n + p, n);
    m.view_mut((0, 0), (n, n))
        .copy_from(&(DMatrix::identity(n, n) - ad));
    m.view_mut((n, 0), (p, n)).copy_from(&(cd * scale));
    let fail = |source| DesignError::Numerics {
        origin: origin.to_string(),
        stage: "separability of the disturbance states (PBH at z = 1)",
        source,
    };
    crate::numerics::checks::finite("[I − Ad; Cd]", &m).map_err(fail)?;
    // Scaled by a power of two (exact) so nothing overflows inside the
    // decomposition; unordered, because nalgebra's sort panics on a NaN.
    let unit = crate::numerics::checks::power_of_two_near(m.amax().max(f64::MIN_POSITIVE));
    let svd = SVD::try_new_unordered(m / unit, false, true, f64::EPSILON, SVD_MAX_ITER)
        .filter(|svd| svd.singular_values.iter().all(|s| s.is_finite()))
        .ok_or_else(|| {
            fail(crate::numerics::NumericsError::NoConvergence {
                routine: "singular value decomposition",
                matrix: "[I − Ad; Cd]",
                index: 0,
                iterations: SVD_MAX_ITER,
                estimate: f64::NAN,
            })
        })?;
    let top = svd.singular_values.iter().copied().fold(0.0, f64::max);
    let Some(v_t) = svd.v_t.as_ref() else {
        return Ok(());
    };
    for (i, sigma) in svd.singular_values.iter().enumerate() {
        let margin = if top > 0.0 { sigma / top } else { 0.0 };
        if margin > PBH_TOLERANCE {
            continue;
        }
        let v: Vec<f64> = v_t.row(i).iter().copied().collect();
        let biggest = v.iter().map(|x| x.abs()).fold(0.0, f64::max);
        let involved: Vec<usize> = (0..n)
            .filter(|&j| v.get(j).is_some_and(|x| x.abs() > INVOLVED * biggest))
            .collect();
        if involved.iter().any(|&j| j >= sys.plant_states) {
            return Err(DesignError::Unsupported {
                origin: origin.to_string(),
                key: "disturbances",
                message: message(sys, &involved, &v, biggest, margin),
            });
        }
    }
    Ok(())
}

fn message(sys: &Augmented, involved: &[usize], v: &[f64], biggest: f64, margin: f64) -> String {
    let mut disturbances: Vec<&str> = Vec::new();
    let mut plant: Vec<&str> = Vec::new();
    for &j in involved {
        let Some(label) = sys.labels.get(j) else {
            continue;
        };
        let list = if j >= sys.plant_states {
            &mut disturbances
        } else {
            &mut plant
        };
        // A ramp's two states carry one label; name it once.
        if !list.contains(&label.as_str()) {
            list.push(label);
        }
    }
    let (first, others) = match disturbances.split_first() {
        Some((first, rest)) => (*first, rest.to_vec()),
        None => ("a disturbance state", Vec::new()),
    };
    let apart_from: Vec<&str> = others.iter().chain(plant.iter()).copied().collect();
    let verdict = if apart_from.is_empty() {
        format!("{first} cannot be seen in the outputs at all")
    } else {
        format!(
            "{first} cannot be told apart from {}",
            apart_from.join(" and ")
        )
    };
    let direction: Vec<String> = involved
        .iter()
        .map(|&j| {
            let name = sys.names.get(j).map_or("?", String::as_str);
            let share = v.get(j).copied().unwrap_or(f64::NAN) / biggest;
            format!("{name} {share:+.4}")
        })
        .collect();
    format!(
        "{verdict}: the augmented model has an unobservable mode at z = 1 \
         (PBH relative smallest singular value {margin:.3e} <= {PBH_TOLERANCE:e}); \
         changing the states along ({}) leaves every output unchanged; \
         drop one of them, move it to another channel, or measure another output",
        direction.join(", ")
    )
}
