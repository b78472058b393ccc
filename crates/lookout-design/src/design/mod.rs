//! The design pipeline: model → zero-order hold → observability → gain →
//! fused tables → checks.
//!
//! The result, [`Design`], holds everything the report, the JSON output and
//! the code generator print. All matrices are of the sampled system:
//!
//! * predictor form, gain L: x̂⁺ = Ad x̂ + Bd u + L (y − Cd x̂ − Dd u), so
//!   F = Ad − L Cd, G = Bd − L Dd, H = L;
//! * current form, gain K: x̂[k|k] = x̂[k|k−1] + K r, x̂[k+1|k] = Ad x̂[k|k] + Bd u,
//!   whose prediction obeys the same recursion with L = Ad K:
//!   F = Ad − Ad K Cd, G = Bd − Ad K Dd, H = Ad K;
//! * `gain_method = "hold"`: F, G, H are the zero-order hold of the
//!   continuous observer itself, and no innovation gain exists.
//!
//! The error poles are the eigenvalues of F (for the current form these are
//! also those of (I − K Cd) Ad, the filtered estimate's error matrix).
//!
//! With `[disturbances]` the plant is first augmented with its disturbance
//! states (in the plant's own domain, so the hold samples them exactly; see
//! `augment.rs`), every matrix above is that of the augmented system, and the
//! design is refused when a disturbance cannot be told apart from another
//! disturbance or from plant states (PBH at z = 1; see `separability.rs`).

mod augment;
mod error;
mod finite;
mod gain;
mod noise;
mod observer;
pub mod recovery;
mod separability;
mod warnings;

pub use error::DesignError;
pub use noise::steady_covariance;
pub use observer::{FusedMatrices, ObserverForm, ObserverTables, PlantMatrices, Sizes};
pub use warnings::Warning;

use crate::model::{Domain, Form, GainSource, Model};
use crate::numerics::{self, NumericsError, ObservabilityReport};
use nalgebra::{Complex, DMatrix};
use std::path::Path;

/// A finished observer design for one model.
#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    /// The model as read.
    pub model: Model,
    /// The model file name used in messages.
    pub origin: String,
    /// SHA-256 of the model file's bytes (FIPS 180-4), as 64 lower-case hex
    /// digits, the form `sha256sum` prints: it identifies the model a report
    /// or a generated table came from (see [`model_hash`]).
    pub model_hash: String,
    /// Sampled plant (with its disturbance states, if any: see [`Design::state_names`]).
    pub ad: DMatrix<f64>,
    /// Sampled input matrix.
    pub bd: DMatrix<f64>,
    /// Output matrix.
    pub cd: DMatrix<f64>,
    /// Feed-through matrix.
    pub dd: DMatrix<f64>,
    /// The innovation gain the runtime applies: L (predictor) or K (current);
    /// `None` for `gain_method = "hold"`.
    pub gain: Option<DMatrix<f64>>,
    /// Fused F.
    pub f: DMatrix<f64>,
    /// Fused G.
    pub g: DMatrix<f64>,
    /// Fused H.
    pub h: DMatrix<f64>,
    /// The z-plane poles the gain was designed for, when it was placed.
    pub target_poles: Option<Vec<Complex<f64>>>,
    /// Eigenvalues of F: the discrete error dynamics.
    pub error_poles: Vec<Complex<f64>>,
    /// Largest |error pole|.
    pub spectral_radius: f64,
    /// Eigenvalues of Ad.
    pub plant_poles: Vec<Complex<f64>>,
    /// Observability of (Ad, Cd).
    pub observability: ObservabilityReport,
    /// Steady-state Kalman results, for a Kalman design.
    pub kalman: Option<KalmanResult>,
    /// For `gain_method = "hold"`: how far the held observer is from an exact
    /// observer of the sampled plant.
    pub hold_mismatch: Option<HoldMismatch>,
    /// Innovation gate tables, when the model asks for gating.
    pub gate: Option<GateDesign>,
    /// Standard deviation of each output's estimate C x̂ per unit standard
    /// deviation of white noise on that output (above 1: the observer passes
    /// more measurement noise than the raw reading has). NaN where it could
    /// not be computed in f64 (a warning then says so).
    pub output_noise_gain: Vec<f64>,
    /// The fixed-point tables and their proofs, when the model has a
    /// `[fixed_point]` section.
    pub fixed_point: Option<crate::fixed_point::FixedDesign>,
    /// Estimated relative error (1-norm) of the zero-order hold's block
    /// exponential `[[Ad, Bd], [0, I]]` (see [`numerics::expm`](mod@crate::numerics::expm)); `None` when
    /// the plant is given in discrete time.
    pub hold_accuracy: Option<f64>,
    /// Wall-clock time of each design stage.
    pub stage_seconds: StageSeconds,
    /// Non-fatal findings.
    pub warnings: Vec<Warning>,
}

/// Wall-clock seconds spent in each stage of [`design_file`], so a slow
/// stage shows.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct StageSeconds {
    /// Zero-order hold of (A, B).
    pub hold: f64,
    /// Separability of disturbances and observability of (Ad, Cd).
    pub observability: f64,
    /// The gain (placement, Kalman, or held observer), including process noise.
    pub gain: f64,
    /// Eigenvalues of Ad and F, output noise gain, gate and warnings.
    pub checks: f64,
    /// Fixed-point tables and their proofs (0 without `[fixed_point]`).
    pub fixed_point: f64,
}

/// Seconds since `start`, restarting it.
fn lap(start: &mut std::time::Instant) -> f64 {
    let now = std::time::Instant::now();
    let dt = now.duration_since(*start).as_secs_f64();
    *start = now;
    dt
}

/// Steady-state Kalman filter quantities.
#[derive(Debug, Clone, PartialEq)]
pub struct KalmanResult {
    /// A-priori error covariance P (per sample).
    pub p: DMatrix<f64>,
    /// Innovation covariance S = Cd P Cdᵀ + R.
    pub innovation_covariance: DMatrix<f64>,
    /// Process noise covariance per sample, Qd, after discretisation.
    pub process_noise: DMatrix<f64>,
    /// Current-form gain K = P Cdᵀ S⁻¹.
    pub k: DMatrix<f64>,
    /// Relative residual of the Riccati equation.
    pub residual: f64,
}

/// The defect of a held continuous observer: with e = x − x̂,
/// e⁺ = F e + Ex x + Eu u, where an exact observer has Ex = 0 and Eu = 0.
#[derive(Debug, Clone, PartialEq)]
pub struct HoldMismatch {
    /// Ex = Ad − F − H Cd.
    pub state: DMatrix<f64>,
    /// Eu = Bd − G − H Dd.
    pub input: DMatrix<f64>,
}

/// Gate tables for the runtime's `Gate`.
#[derive(Debug, Clone, PartialEq)]
pub struct GateDesign {
    /// S⁻¹.
    pub s_inv: DMatrix<f64>,
    /// Limit on the normalised innovation squared with every channel.
    pub limit: f64,
    /// 1 / S_jj.
    pub channel_inv_variance: Vec<f64>,
    /// Limit on r_j² / S_jj when channels are missing.
    pub channel_limit: f64,
    /// g_k = λ_max(S_0⁻¹ S_k) after k = 1 … K consecutive misses (see
    /// [`recovery::table`]); the runtime's limits after k misses are the
    /// steady ones times g_k, and after K misses it re-acquires.
    pub widening: Vec<f64>,
    /// Corrections that undo one miss (see [`recovery::table`]).
    pub per_miss: u8,
}

impl GateDesign {
    /// The widened limits \[every channel, one channel\] after k = 1 … K
    /// consecutive misses: the steady limits times g_k.
    pub fn recovery_limits(&self) -> Vec<[f64; 2]> {
        self.widening
            .iter()
            .map(|g| [self.limit * g, self.channel_limit * g])
            .collect()
    }
}

impl Design {
    /// Number of estimated states: the plant's and any disturbance states.
    pub fn n(&self) -> usize {
        self.ad.nrows()
    }
    /// Name of every estimated state, in state order: the plant's
    /// `state_names` (or `x0`, `x1`, …), then the disturbance states.
    pub fn state_names(&self) -> Vec<String> {
        self.model.state_names()
    }
    /// Number of inputs.
    pub fn m(&self) -> usize {
        self.bd.ncols()
    }
    /// Number of outputs.
    pub fn p(&self) -> usize {
        self.cd.nrows()
    }
    /// The s-plane equivalent ln(z)/T of each error pole (`None` for z = 0,
    /// which has none).
    pub fn error_poles_s(&self) -> Vec<Option<Complex<f64>>> {
        let t = self.model.sample_period;
        self.error_poles
            .iter()
            .map(|z| (z.norm() > 0.0).then(|| z.ln() / t))
            .collect()
    }
}

/// Reads the model file at `path` and designs its observer.
pub fn design_file(path: &Path) -> Result<Design, DesignError> {
    let origin = path.file_name().map_or_else(
        || path.display().to_string(),
        |f| f.to_string_lossy().into_owned(),
    );
    let text =
        crate::emit::read_text_limited(path, crate::model::MAX_MODEL_BYTES).map_err(|e| {
            DesignError::Model(crate::model::ModelError::new(
                &origin,
                "",
                crate::model::ModelErrorKind::Io,
                format!("cannot read {}: {e}", path.display()),
            ))
        })?;
    design_text(&text, &origin)
}

/// Designs the observer of the model in `text`; `origin` names it in messages.
pub fn design_text(text: &str, origin: &str) -> Result<Design, DesignError> {
    let model = Model::from_toml_str(text, origin)?;
    design_model(model, origin, model_hash(text.as_bytes()))
}

fn design_model(model: Model, origin: &str, hash: String) -> Result<Design, DesignError> {
    let fail = |stage: &'static str| {
        move |source| DesignError::Numerics {
            origin: origin.to_string(),
            stage,
            source,
        }
    };
    let t = model.sample_period;
    let mut clock = std::time::Instant::now();
    let mut stage_seconds = StageSeconds::default();
    let sys = augment::Augmented::of(&model, origin)?;
    let n = sys.a.nrows();
    if n > crate::model::MAX_STATES {
        return Err(DesignError::Unsupported {
            origin: origin.to_string(),
            key: "plant.a",
            message: format!(
                "{n} estimated states (plant and disturbance states); at most {} are designed",
                crate::model::MAX_STATES
            ),
        });
    }
    let (ad, bd, hold_accuracy) = match model.plant.domain {
        Domain::Continuous => {
            let (ad, bd, acc) = numerics::zoh_with_estimate(&sys.a, &sys.b, t)
                .map_err(fail("zero-order hold of (A, B)"))?;
            (ad, bd, Some(acc))
        }
        Domain::Discrete => (sys.a.clone(), sys.b.clone(), None),
    };
    stage_seconds.hold = lap(&mut clock);
    let (cd, dd) = (sys.c.clone(), sys.d.clone());
    separability::check(origin, &sys, &ad, &cd)?;
    let mut early_warnings = Vec::new();
    let observability = match numerics::observability(&ad, &cd) {
        Ok(report) => report,
        // A Kalman design needs detectability only: a stable unobservable
        // mode is allowed (the Riccati solver refuses an unstable one).
        Err(NumericsError::Unobservable { eigenvalue, .. })
            if matches!(model.observer.gain_source, GainSource::Kalman(_))
                && eigenvalue.norm() < 1.0 =>
        {
            early_warnings.push(Warning::new(
                "observability",
                format!(
                    "mode {:.6} {:+.6}i cannot be seen from the outputs; it is stable, so the Kalman design goes on, but its estimation error only decays at the mode's own rate",
                    eigenvalue.re, eigenvalue.im
                ),
            ));
            numerics::observability::observability_staircase(&ad, &cd)
                .map_err(fail("observability of (Ad, Cd)"))?
        }
        Err(e) => return Err(fail("observability of (Ad, Cd)")(e)),
    };
    stage_seconds.observability = lap(&mut clock);
    let plant_poles = numerics::eigenvalues("Ad", &ad).map_err(fail("eigenvalues of Ad"))?;
    stage_seconds.checks = lap(&mut clock);

    let designed = gain::design(&model, &sys, origin, &ad, &bd, &cd, &dd)?;
    stage_seconds.gain = lap(&mut clock);
    let error_poles = numerics::eigenvalues("F", &designed.f).map_err(fail("eigenvalues of F"))?;
    let spectral_radius = error_poles.iter().map(|z| z.norm()).fold(0.0, f64::max);
    if spectral_radius >= 1.0 {
        return Err(DesignError::Unsupported {
            origin: origin.to_string(),
            key: "observer",
            message: format!(
                "the designed error dynamics are not stable: spectral radius of F is {spectral_radius:.6} (must be < 1)"
            ),
        });
    }
    let output_noise_gain = noise::output_noise_gain(&designed.f, &designed.h, &cd);
    let gate = match &model.observer.gate {
        None => None,
        Some(spec) => Some(gain::gate(
            origin,
            spec,
            designed.kalman.as_ref(),
            [&ad, &designed.f, &cd],
        )?),
    };

    let mut design = Design {
        origin: origin.to_string(),
        model_hash: hash,
        ad,
        bd,
        cd,
        dd,
        gain: designed.gain,
        f: designed.f,
        g: designed.g,
        h: designed.h,
        target_poles: designed.target_poles,
        error_poles,
        spectral_radius,
        plant_poles,
        observability,
        kalman: designed.kalman,
        hold_mismatch: designed.hold_mismatch,
        gate,
        output_noise_gain,
        fixed_point: None,
        hold_accuracy,
        stage_seconds,
        warnings: Vec::new(),
        model,
    };
    design.stage_seconds.checks += lap(&mut clock);
    // Before the fixed-point stage (which scales by these numbers) and again
    // at the end, over everything.
    finite::check(&design)?;
    if let Some(spec) = &design.model.fixed_point {
        let state_names = design.state_names();
        let tables = crate::fixed_point::FloatTables::of(&design, &state_names);
        let mut fixed =
            crate::fixed_point::design(&tables, spec).map_err(|e| DesignError::Unsupported {
                origin: origin.to_string(),
                key: e.key,
                message: e.message,
            })?;
        early_warnings.extend(
            fixed
                .warnings
                .iter()
                .map(|(k, m)| Warning::new(k.clone(), m.clone())),
        );
        if let Some(g) = &design.gate {
            let ty = crate::fixed_point::format_name(fixed.format);
            if let Err(e) = fixed.attach_gate(&g.into()) {
                return Err(DesignError::Unsupported {
                    origin: origin.to_string(),
                    key: "observer.kalman.gate_probability",
                    message: format!(
                        "the innovation gate (limit {:e} on rᵀS⁻¹r) cannot be stored in {ty} at the output scales ({e}); choose a gate probability (or threshold) whose limit is representable, e.g. 0.99–0.9999, or remove the gate",
                        g.limit
                    ),
                });
            }
        }
        design.fixed_point = Some(fixed);
    }
    design.stage_seconds.fixed_point = lap(&mut clock);
    early_warnings.extend(finite::subnormal_warnings(&design));
    design.warnings = early_warnings;
    design
        .warnings
        .extend(warnings::collect(&design, designed.warnings));
    if design.model.observer.form == Form::Current && design.observer().form == ObserverForm::Fused
    {
        // The hold method defines the fused recursion only.
        design.warnings.push(Warning::new(
            "observer.gain_method",
            "the held observer has no separate correction step; only fused tables are emitted",
        ));
    }
    design.stage_seconds.checks += lap(&mut clock);
    finite::check(&design)?;
    Ok(design)
}

/// The hash [`Design::model_hash`] holds: SHA-256 (NIST FIPS 180-4, by the
/// `sha2` crate) of `bytes`, as 64 lower-case hex digits.
pub fn model_hash(bytes: &[u8]) -> String {
    use sha2::Digest as _;
    use std::fmt::Write as _;
    sha2::Sha256::digest(bytes)
        .iter()
        .fold(String::with_capacity(64), |mut hex, b| {
            let _ = write!(hex, "{b:02x}");
            hex
        })
}
