//! The last stage of the pipeline: every number of a design must be finite.
//!
//! Finite model entries can still overflow or underflow inside the design
//! (d = 1.7e308 makes G = −inf; a = 5e-324 in current form divides by it).
//! Rather than guard every formula, the finished [`Design`] is checked once,
//! here, and refused naming the first matrix with an infinite or NaN entry,
//! so that no report, JSON object or generated table ever carries one.
//!
//! Two values may be infinite or NaN by definition and are not refused: the
//! observability matrix's condition number (infinite when its smallest
//! singular value is zero in f64) and a noise gain that could not be summed
//! (NaN, with a warning saying so).

use super::{Design, DesignError};
use crate::numerics::NumericsError;
use nalgebra::{Complex, DMatrix};

/// Refuses `d` if any number it reports, prints or emits is not finite.
pub(super) fn check(d: &Design) -> Result<(), DesignError> {
    first_non_finite(d).map_or(Ok(()), |source| {
        Err(DesignError::Numerics {
            origin: d.origin.clone(),
            stage: "the designed numbers overflow or underflow f64 (rescale the model's units)",
            source,
        })
    })
}

fn first_non_finite(d: &Design) -> Option<NumericsError> {
    let mut s = Scan(None);
    s.matrix("Ad", &d.ad);
    s.matrix("Bd", &d.bd);
    s.matrix("Cd", &d.cd);
    s.matrix("Dd", &d.dd);
    if let Some(gain) = &d.gain {
        s.matrix("gain (L or K)", gain);
    }
    s.matrix("F", &d.f);
    s.matrix("G", &d.g);
    s.matrix("H", &d.h);
    s.complex("target poles", d.target_poles.as_deref().unwrap_or(&[]));
    s.complex("error poles (eigenvalues of F)", &d.error_poles);
    let s_poles: Vec<Complex<f64>> = d.error_poles_s().into_iter().flatten().collect();
    s.complex("error poles in the s-plane, ln(z)/T", &s_poles);
    s.values("spectral radius of F", &[d.spectral_radius]);
    s.complex("plant poles (eigenvalues of Ad)", &d.plant_poles);
    let obs = &d.observability;
    s.values("pivots of the observability staircase", &obs.pivots);
    s.values(
        "rank tolerance of the observability test",
        &[obs.rank_tolerance],
    );
    if let Some(k) = &d.kalman {
        s.matrix("Kalman P", &k.p);
        s.matrix("Kalman S", &k.innovation_covariance);
        s.matrix("Kalman Qd", &k.process_noise);
        s.matrix("Kalman K", &k.k);
    }
    if let Some(m) = &d.hold_mismatch {
        s.matrix("hold mismatch Ex", &m.state);
        s.matrix("hold mismatch Eu", &m.input);
    }
    if let Some(g) = &d.gate {
        s.matrix("gate S⁻¹", &g.s_inv);
        s.values("gate limit", &[g.limit, g.channel_limit]);
        s.values("gate 1/S_jj", &g.channel_inv_variance);
    }
    if let Some(fx) = &d.fixed_point {
        s.values("fixed-point state bounds", &fx.state_bounds);
        s.values("fixed-point innovation bounds", &fx.innovation_bounds);
        s.values("fixed-point peak proof", &fx.proof.peak);
        s.complex("quantised error poles", &fx.error_poles);
        s.values(
            "quantised spectral radius",
            &[fx.spectral_radius, fx.fused_spectral_radius],
        );
        s.values("largest table rounding error", &[fx.max_table_error]);
        for t in fx.form_tables.iter().chain(&fx.fused_tables) {
            s.matrix(t.name, &t.dequantised);
        }
    }
    s.0
}

/// The first non-finite value met, as a `NonFinite` error.
struct Scan(Option<NumericsError>);

impl Scan {
    fn matrix(&mut self, matrix: &'static str, m: &DMatrix<f64>) {
        if self.0.is_none() {
            self.0 = crate::numerics::checks::finite(matrix, m).err();
        }
    }

    fn values(&mut self, matrix: &'static str, v: &[f64]) {
        if self.0.is_some() {
            return;
        }
        if let Some((i, &value)) = v.iter().enumerate().find(|(_, x)| !x.is_finite()) {
            self.0 = Some(NumericsError::NonFinite {
                matrix,
                row: i,
                col: 0,
                value,
            });
        }
    }

    fn complex(&mut self, matrix: &'static str, v: &[Complex<f64>]) {
        if self.0.is_some() {
            return;
        }
        if let Some((i, z)) = v
            .iter()
            .enumerate()
            .find(|(_, z)| !(z.re.is_finite() && z.im.is_finite()))
        {
            let value = if z.re.is_finite() { z.im } else { z.re };
            self.0 = Some(NumericsError::NonFinite {
                matrix,
                row: i,
                col: 0,
                value,
            });
        }
    }
}

/// Warnings for the emitted float tables whose non-zero entries are
/// subnormal in f64, or subnormal or flushed to zero in f32: such a table
/// loses relative precision (or the entry entirely) and is usually the sign
/// of a sample period or unit far too small (T = 5e-324 makes Bd subnormal).
///
/// An entry smaller than the unit roundoff times the largest entry of its
/// row is left out: losing it changes that row's products by less than the
/// rounding of the row's largest term already does (with states of
/// comparable magnitude), so it is no sign of a wrong model. The far corners
/// of a sampled chain (a 30-mass heat rod has Ad entries of 1e-40 beside
/// diagonals near 1) are that case.
pub(super) fn subnormal_warnings(d: &Design) -> Vec<super::Warning> {
    let mut tables: Vec<(&str, &DMatrix<f64>)> = vec![
        ("Ad", &d.ad),
        ("Bd", &d.bd),
        ("Cd", &d.cd),
        ("Dd", &d.dd),
        ("F", &d.f),
        ("G", &d.g),
        ("H", &d.h),
    ];
    if let Some(gain) = &d.gain {
        tables.push(("gain", gain));
    }
    let mut out = Vec::new();
    for (name, m) in tables {
        let tiny = |limit: f64, unit_roundoff: f64| lost_entry(m, limit, unit_roundoff);
        if let Some(v) = tiny(f64::MIN_POSITIVE, f64::EPSILON / 2.0) {
            out.push(super::Warning::new(
                "tables",
                format!(
                    "{name} has the subnormal entry {v:e} (below the smallest normal f64, {:e}): it has lost precision and f32 tables flush it to zero; check the sample period and the model's units",
                    f64::MIN_POSITIVE
                ),
            ));
        } else if let Some(v) = tiny(f64::from(f32::MIN_POSITIVE), f64::from(f32::EPSILON) / 2.0) {
            out.push(super::Warning::new(
                "tables",
                format!(
                    "{name} has the entry {v:e}, subnormal or zero in f32 (smallest normal f32 {:e}): emit f64 tables or rescale the model's units",
                    f32::MIN_POSITIVE
                ),
            ));
        }
    }
    out
}

/// The first non-zero entry of `m` below `limit` in magnitude that is not
/// negligible in its row (at least `unit_roundoff` times the row's largest
/// magnitude).
fn lost_entry(m: &DMatrix<f64>, limit: f64, unit_roundoff: f64) -> Option<f64> {
    m.row_iter().find_map(|row| {
        let largest = row.iter().fold(0.0_f64, |a, v| a.max(v.abs()));
        row.iter()
            .copied()
            .find(|v| *v != 0.0 && v.abs() < limit && v.abs() >= unit_roundoff * largest)
    })
}
