//! Predicted deviation of each observer form, run in each number format,
//! from the exact observer (exact tables, exact arithmetic, same inputs).
//!
//! # The model
//!
//! Every form, while all channels are used, runs x̃⁺ = F̃ x̃ + G̃ ũ + H̃ ỹ + ρ\[k\]
//! where F̃, G̃, H̃ are built from the *stored* tables (predictor:
//! F̃ = Ã − L̃ C̃, G̃ = B̃ − L̃ D̃, H̃ = L̃; current: F̃ = Ã − Ã K̃ C̃,
//! G̃ = B̃ − Ã K̃ D̃, H̃ = Ã K̃; fused: as stored), ũ and ỹ are the inputs as
//! converted, and ρ\[k\] is the rounding of the step itself. Against the exact
//! x⁺ = F x + G u + H y the deviation d = x̃ − x obeys
//!
//! ```text
//! d⁺ = F̃ d + (ΔF x + ΔG u + ΔH y) + (G̃ δu + H̃ δy + ρ\[k\]),   ΔF = F̃ − F, …
//! ```
//!
//! so |d| is at most the ℓ1 impulse response of F̃ ([`bounds::peak`])
//! applied to |ΔF| X + |ΔG| U + |ΔH| Y (the *table* part: the rounded tables
//! are a perturbed observer) plus the same applied to the per-step rounding
//! (the *rounding* part), plus the initial conversion decayed through F̃.
//! X, U, Y are the signal scales 2^s (every signal stays below them unless
//! the runtime saturates, which it counts), so the bound holds for every run
//! without saturation. The table part's steady state for constant signals,
//! |(I − F̃)⁻¹| (|ΔF| X + |ΔG| U + |ΔH| Y), is reported as the bias.
//!
//! # Per-step rounding
//!
//! * Q15/Q31 (the runtime's rules, see `lookout::Fixed`): ½ LSB per stored
//!   value. Inputs and readings are converted with ½ LSB each; the predictor
//!   stores the innovation (½ LSB of the output, through |L̃|) and the state
//!   (½ LSB); the current form stores the innovation, x̂[k|k] (½ LSB) and the
//!   prediction (½ LSB), the first two through |Ã|; the fused form stores the
//!   state only.
//! * f32/f64: a dot product of k terms computed in floating point differs
//!   from the exact one by at most γ_k Σ|terms|, γ_k = k u/(1 − k u), u the
//!   unit roundoff (2⁻²⁴, 2⁻⁵³): N. J. Higham, *Accuracy and Stability of
//!   Numerical Algorithms*, 2nd ed., SIAM 2002, §3.1, eq. (3.5). Here
//!   k = n + m + 1 for the innovation y − (C x + D u), n + m + p for the
//!   predictor's and the fused state update, p + 1 and n + m for the current
//!   form's two updates; converting an input to f32 changes it by at most
//!   u |value|.
//!
//! The analysis concerns the prediction x̂[k|k−1] (the state every form
//! carries from step to step).

use super::bounds::{self, BoundError};
use super::scales::abs_times;
use nalgebra::{DMatrix, DVector};

/// An observer form the design can emit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FormKind {
    /// x̂⁺ = A x̂ + B u + L r.
    Predictor,
    /// x̂[k|k] = x̂ + K r, x̂⁺ = A x̂[k|k] + B u.
    Current,
    /// x̂⁺ = F x̂ + G u + H y.
    Fused,
}

impl FormKind {
    /// Lower-case name used in reports and JSON.
    pub fn name(self) -> &'static str {
        match self {
            FormKind::Predictor => "predictor",
            FormKind::Current => "current",
            FormKind::Fused => "fused",
        }
    }
}

/// A number format the runtime runs in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NumberKind {
    /// `f64`.
    F64,
    /// `f32`.
    F32,
    /// Q31.
    Q31,
    /// Q15.
    Q15,
}

impl NumberKind {
    /// Lower-case name used in reports and JSON.
    pub fn name(self) -> &'static str {
        match self {
            NumberKind::F64 => "f64",
            NumberKind::F32 => "f32",
            NumberKind::Q31 => "q31",
            NumberKind::Q15 => "q15",
        }
    }
    fn unit_roundoff(self) -> f64 {
        match self {
            NumberKind::F64 => f64::EPSILON / 2.0,
            NumberKind::F32 => f64::from(f32::EPSILON) / 2.0,
            NumberKind::Q31 | NumberKind::Q15 => 0.0,
        }
    }
    fn fraction_bits(self) -> Option<i32> {
        match self {
            NumberKind::Q31 => Some(31),
            NumberKind::Q15 => Some(15),
            _ => None,
        }
    }
}

/// The predicted deviation of one form run in one format.
#[derive(Debug, Clone, PartialEq)]
pub struct Deviation {
    /// The form.
    pub form: FormKind,
    /// The number format.
    pub format: NumberKind,
    /// Why this combination cannot run (tables that do not fit, or stored
    /// error dynamics that are not stable); the numbers below are then empty.
    pub refused: Option<String>,
    /// Spectral radius of the stored tables' error matrix F̃.
    pub spectral_radius: f64,
    /// Worst-case deviation caused by the rounded tables, per state.
    pub from_tables: Vec<f64>,
    /// Steady-state bias the rounded tables can cause, per state.
    pub bias: Vec<f64>,
    /// Worst-case deviation caused by per-step rounding, per state.
    pub from_rounding: Vec<f64>,
    /// The bound: tables plus rounding, per state.
    pub total: Vec<f64>,
}

/// The stored tables of one form, in the model's units.
pub(crate) enum Stored {
    /// A, B, L, C, D.
    Predictor([DMatrix<f64>; 5]),
    /// A, B, K, C, D.
    Current([DMatrix<f64>; 5]),
    /// F, G, H.
    Fused([DMatrix<f64>; 3]),
}

impl Stored {
    /// F̃, G̃, H̃ of the stored tables.
    fn fused(&self) -> (DMatrix<f64>, DMatrix<f64>, DMatrix<f64>) {
        match self {
            Stored::Predictor([a, b, l, c, d]) => (a - l * c, b - l * d, l.clone()),
            Stored::Current([a, b, k, c, d]) => {
                let ak = a * k;
                (a - &ak * c, b - &ak * d, ak)
            }
            Stored::Fused([f, g, h]) => (f.clone(), g.clone(), h.clone()),
        }
    }

    /// F̃, the stored tables' error matrix.
    pub(crate) fn error_matrix(&self) -> DMatrix<f64> {
        self.fused().0
    }

    fn kind(&self) -> FormKind {
        match self {
            Stored::Predictor(_) => FormKind::Predictor,
            Stored::Current(_) => FormKind::Current,
            Stored::Fused(_) => FormKind::Fused,
        }
    }

    /// Every table rounded to f32 (or kept, for f64).
    pub(crate) fn rounded(&self, format: NumberKind) -> Stored {
        let r = |m: &DMatrix<f64>| match format {
            NumberKind::F32 => m.map(|v| f64::from(v as f32)),
            _ => m.clone(),
        };
        match self {
            Stored::Predictor(t) => Stored::Predictor(t.each_ref().map(r)),
            Stored::Current(t) => Stored::Current(t.each_ref().map(r)),
            Stored::Fused(t) => Stored::Fused(t.each_ref().map(r)),
        }
    }
}

/// Magnitudes of the signals: every state, input, output and innovation
/// below its scale 2^s.
pub(crate) struct Signals {
    pub x: Vec<f64>,
    pub u: Vec<f64>,
    pub y: Vec<f64>,
}

impl Signals {
    pub(crate) fn of_exponents(sx: &[i8], su: &[i8], sy: &[i8]) -> Self {
        let scale = |s: &[i8]| s.iter().map(|&e| 2f64.powi(i32::from(e))).collect();
        Self {
            x: scale(sx),
            u: scale(su),
            y: scale(sy),
        }
    }
}

fn add(a: &[f64], b: &[f64]) -> Vec<f64> {
    a.iter().zip(b).map(|(x, y)| x + y).collect()
}

fn gamma(k: usize, u: f64) -> f64 {
    let ku = k as f64 * u;
    ku / (1.0 - ku)
}

/// Per-step rounding ρ (per state, with input conversion) and the initial
/// conversion, for `stored` run in `format`.
fn rounding(stored: &Stored, format: NumberKind, s: &Signals) -> (Vec<f64>, Vec<f64>) {
    let (_, g, h) = stored.fused();
    let (n, m, p) = (s.x.len(), s.u.len(), s.y.len());
    let (du, dy, x0, own): (Vec<f64>, Vec<f64>, Vec<f64>, Vec<f64>) =
        if let Some(frac) = format.fraction_bits() {
            let half = |v: &[f64]| v.iter().map(|x| 0.5 * x * 2f64.powi(-frac)).collect();
            let (hx, hu, hy): (Vec<f64>, Vec<f64>, Vec<f64>) = (half(&s.x), half(&s.u), half(&s.y));
            let own = match stored {
                Stored::Predictor([_, _, l, _, _]) => add(&hx, &abs_times(l, &hy)),
                Stored::Current([a, _, k, _, _]) => {
                    add(&hx, &abs_times(a, &add(&hx, &abs_times(k, &hy))))
                }
                Stored::Fused(_) => hx.clone(),
            };
            (hu, hy, hx, own)
        } else {
            let u = format.unit_roundoff();
            let rel = |v: &[f64]| v.iter().map(|x| u * x).collect::<Vec<f64>>();
            let own = match stored {
                Stored::Predictor([a, b, l, c, d]) => {
                    let dr: Vec<f64> = add(&s.y, &add(&abs_times(c, &s.x), &abs_times(d, &s.u)))
                        .iter()
                        .map(|v| gamma(n + m + 1, u) * v)
                        .collect();
                    let terms = add(
                        &abs_times(a, &s.x),
                        &add(&abs_times(b, &s.u), &abs_times(l, &s.y)),
                    );
                    let step: Vec<f64> = terms.iter().map(|v| gamma(n + m + p, u) * v).collect();
                    add(&step, &abs_times(l, &dr))
                }
                Stored::Current([a, b, k, c, d]) => {
                    let dr: Vec<f64> = add(&s.y, &add(&abs_times(c, &s.x), &abs_times(d, &s.u)))
                        .iter()
                        .map(|v| gamma(n + m + 1, u) * v)
                        .collect();
                    let xf = add(&s.x, &abs_times(k, &s.y));
                    let dxf: Vec<f64> = add(
                        &xf.iter().map(|v| gamma(p + 1, u) * v).collect::<Vec<f64>>(),
                        &abs_times(k, &dr),
                    );
                    let terms = add(&abs_times(a, &xf), &abs_times(b, &s.u));
                    let step: Vec<f64> = terms.iter().map(|v| gamma(n + m, u) * v).collect();
                    add(&step, &abs_times(a, &dxf))
                }
                Stored::Fused([f, g, h]) => {
                    let terms = add(
                        &abs_times(f, &s.x),
                        &add(&abs_times(g, &s.u), &abs_times(h, &s.y)),
                    );
                    terms.iter().map(|v| gamma(n + m + p, u) * v).collect()
                }
            };
            (rel(&s.u), rel(&s.y), rel(&s.x), own)
        };
    let drive = add(&own, &add(&abs_times(&g, &du), &abs_times(&h, &dy)));
    (drive, x0)
}

fn refused(form: FormKind, format: NumberKind, why: String) -> Deviation {
    Deviation {
        form,
        format,
        refused: Some(why),
        spectral_radius: f64::NAN,
        from_tables: Vec::new(),
        bias: Vec::new(),
        from_rounding: Vec::new(),
        total: Vec::new(),
    }
}

fn bound_error(e: BoundError) -> String {
    match e {
        BoundError::NoContraction { .. } => "its stored error dynamics do not decay".into(),
        BoundError::NotFinite => "its deviation bound overflows".into(),
    }
}

/// The deviation of `stored` run in `format` from the exact fused
/// recursion (`exact` = F, G, H).
pub(crate) fn predict(
    exact: (&DMatrix<f64>, &DMatrix<f64>, &DMatrix<f64>),
    stored: &Stored,
    format: NumberKind,
    s: &Signals,
) -> Deviation {
    let form = stored.kind();
    let (ft, gt, ht) = stored.fused();
    let n = ft.nrows();
    let rho = crate::numerics::spectral_radius("stored error matrix", &ft).unwrap_or(f64::NAN);
    if rho.is_nan() || rho >= 1.0 {
        return refused(
            form,
            format,
            format!("its stored error dynamics are not stable (spectral radius {rho:.9})"),
        );
    }
    let (df, dg, dh) = (&ft - exact.0, &gt - exact.1, &ht - exact.2);
    let table_drive = add(
        &abs_times(&df, &s.x),
        &add(&abs_times(&dg, &s.u), &abs_times(&dh, &s.y)),
    );
    let (step, x0) = rounding(stored, format, s);
    let identity = DMatrix::identity(n, n);
    let tables = bounds::peak(
        &ft,
        &identity,
        &DVector::from_vec(table_drive.clone()),
        &DVector::zeros(n),
    );
    let rounding = bounds::peak(
        &ft,
        &identity,
        &DVector::from_vec(step),
        &DVector::from_vec(x0),
    );
    let (tables, rounding) = match (tables, rounding) {
        (Ok(t), Ok(r)) => (t.peak, r.peak),
        (Err(e), _) | (_, Err(e)) => return refused(form, format, bound_error(e)),
    };
    let bias = (&identity - &ft)
        .try_inverse()
        .map_or_else(|| tables.clone(), |inv| abs_times(&inv, &table_drive));
    Deviation {
        form,
        format,
        refused: None,
        spectral_radius: rho,
        total: add(&tables, &rounding),
        from_tables: tables,
        bias,
        from_rounding: rounding,
    }
}
