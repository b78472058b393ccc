//! The gain sources of a model: placed poles, a continuous gain, or a
//! steady-state Kalman design; and the gate tables.

use super::augment::Augmented;
use super::{DesignError, GateDesign, HoldMismatch, KalmanResult};
use crate::model::{Domain, Form, GainMethod, GainSource, Gate, Model};
use crate::numerics::{self, NumericsError, NumericsWarning};
use nalgebra::{Complex, DMatrix};

/// What a gain source gives the pipeline.
pub(super) struct Designed {
    pub gain: Option<DMatrix<f64>>,
    pub f: DMatrix<f64>,
    pub g: DMatrix<f64>,
    pub h: DMatrix<f64>,
    pub target_poles: Option<Vec<Complex<f64>>>,
    pub kalman: Option<KalmanResult>,
    pub hold_mismatch: Option<HoldMismatch>,
    pub warnings: Vec<NumericsWarning>,
}

struct Sampled<'a> {
    ad: &'a DMatrix<f64>,
    bd: &'a DMatrix<f64>,
    cd: &'a DMatrix<f64>,
    dd: &'a DMatrix<f64>,
}

fn numerics_error<'o>(
    origin: &'o str,
    stage: &'static str,
) -> impl Fn(NumericsError) -> DesignError + 'o {
    move |source| DesignError::Numerics {
        origin: origin.to_string(),
        stage,
        source,
    }
}

fn unsupported(origin: &str, key: &'static str, message: impl Into<String>) -> DesignError {
    DesignError::Unsupported {
        origin: origin.to_string(),
        key,
        message: message.into(),
    }
}

/// The gain for `sys` (the plant, or the plant with its disturbance states)
/// sampled as `ad`, `bd`, `cd`, `dd`.
pub(super) fn design(
    model: &Model,
    sys: &Augmented,
    origin: &str,
    ad: &DMatrix<f64>,
    bd: &DMatrix<f64>,
    cd: &DMatrix<f64>,
    dd: &DMatrix<f64>,
) -> Result<Designed, DesignError> {
    let t = model.sample_period;
    let form = model.observer.form;
    let sampled = Sampled { ad, bd, cd, dd };
    match &model.observer.gain_source {
        GainSource::Poles(s) => {
            let z: Vec<_> = s.iter().map(|s| (s * t).exp()).collect();
            placed(origin, form, &sampled, z)
        }
        GainSource::DiscretePoles(z) => placed(origin, form, &sampled, z.clone()),
        GainSource::Gain { l, method } => {
            if model.plant.domain == Domain::Discrete {
                return Err(unsupported(
                    origin,
                    "observer.gain",
                    "a continuous-time gain needs a continuous plant; with plant.domain = \"discrete\" give discrete_poles instead",
                ));
            }
            if l.shape() != (sys.a.nrows(), sys.c.nrows()) {
                return Err(unsupported(
                    origin,
                    "observer.gain",
                    format!(
                        "the gain is {} × {} but the observer estimates {} states from {} outputs",
                        l.nrows(),
                        l.ncols(),
                        sys.a.nrows(),
                        sys.c.nrows()
                    ),
                ));
            }
            let a_lc = &sys.a - l * &sys.c;
            match method {
                GainMethod::PoleMap => {
                    let s = numerics::eigenvalues("A − L C", &a_lc)
                        .map_err(numerics_error(origin, "eigenvalues of A − L C"))?;
                    if let Some(bad) = s.iter().find(|s| s.re >= 0.0) {
                        return Err(unsupported(
                            origin,
                            "observer.gain",
                            format!(
                                "the continuous observer A − L C is not stable: eigenvalue {:.6} {:+.6}i has a non-negative real part",
                                bad.re, bad.im
                            ),
                        ));
                    }
                    placed(
                        origin,
                        form,
                        &sampled,
                        s.iter().map(|s| (s * t).exp()).collect(),
                    )
                }
                GainMethod::Hold => held(origin, model, sys, &sampled, l, &a_lc),
            }
        }
        GainSource::Kalman(spec) => {
            let qd = super::noise::process_noise_per_sample(origin, model, sys, spec)?;
            let kg = numerics::solve_filter_dare(ad, cd, &qd, &spec.measurement_noise).map_err(
                numerics_error(origin, "steady-state Kalman gain (filter Riccati equation)"),
            )?;
            let (f, g, h) = fused(&sampled, &kg.l);
            Ok(Designed {
                gain: Some(match form {
                    Form::Predictor => kg.l.clone(),
                    Form::Current => kg.k.clone(),
                }),
                f,
                g,
                h,
                target_poles: None,
                kalman: Some(KalmanResult {
                    p: kg.p,
                    innovation_covariance: kg.s,
                    process_noise: qd,
                    k: kg.k,
                    residual: kg.residual,
                }),
                hold_mismatch: None,
                warnings: kg.warnings,
            })
        }
    }
}

/// Places eig(F) at `z`: F = Ad − L Cd for the predictor, and for the current
/// form F = Ad − (Ad K) Cd, so K = Ad⁻¹ L.
fn placed(
    origin: &str,
    form: Form,
    s: &Sampled<'_>,
    z: Vec<Complex<f64>>,
) -> Result<Designed, DesignError> {
    let placement = numerics::place_observer_poles(s.ad, s.cd, &z)
        .map_err(numerics_error(origin, "pole placement"))?;
    let l = placement.gain;
    let gain = match form {
        Form::Predictor => l.clone(),
        Form::Current => s.ad.clone().lu().solve(&l).ok_or_else(|| {
            unsupported(
                origin,
                "observer.form",
                "the current form needs an invertible Ad (K = Ad⁻¹ L), and this Ad is singular; use form = \"predictor\"",
            )
        })?,
    };
    let (f, g, h) = fused(s, &l);
    Ok(Designed {
        gain: Some(gain),
        f,
        g,
        h,
        target_poles: Some(z),
        kalman: None,
        hold_mismatch: None,
        warnings: placement.warnings,
    })
}

/// F = Ad − L Cd, G = Bd − L Dd, H = L for a predictor-equivalent gain L.
fn fused(s: &Sampled<'_>, l: &DMatrix<f64>) -> (DMatrix<f64>, DMatrix<f64>, DMatrix<f64>) {
    (s.ad - l * s.cd, s.bd - l * s.dd, l.clone())
}

/// Zero-order hold of the continuous observer ẋ̂ = (A − L C) x̂ + (B − L D) u + L y.
fn held(
    origin: &str,
    model: &Model,
    sys: &Augmented,
    s: &Sampled<'_>,
    l: &DMatrix<f64>,
    a_lc: &DMatrix<f64>,
) -> Result<Designed, DesignError> {
    let (m, p) = (sys.b.ncols(), sys.c.nrows());
    let mut inputs = DMatrix::zeros(sys.a.nrows(), m + p);
    inputs.columns_mut(0, m).copy_from(&(&sys.b - l * &sys.d));
    inputs.columns_mut(m, p).copy_from(l);
    let (f, gh) = numerics::zoh(a_lc, &inputs, model.sample_period).map_err(numerics_error(
        origin,
        "zero-order hold of the continuous observer",
    ))?;
    let g = gh.columns(0, m).into_owned();
    let h = gh.columns(m, p).into_owned();
    let hold_mismatch = Some(HoldMismatch {
        state: s.ad - &f - &h * s.cd,
        input: s.bd - &g - &h * s.dd,
    });
    Ok(Designed {
        gain: None,
        f,
        g,
        h,
        target_poles: None,
        kalman: None,
        hold_mismatch,
        warnings: Vec::new(),
    })
}

/// Gate tables from the innovation covariance S of a Kalman design.
pub(super) fn gate(
    origin: &str,
    spec: &Gate,
    kalman: Option<&KalmanResult>,
    [ad, f, cd]: [&DMatrix<f64>; 3],
) -> Result<GateDesign, DesignError> {
    let Some(kalman) = kalman else {
        return Err(unsupported(
            origin,
            "observer.gate_probability",
            "gating needs the innovation covariance, which only a Kalman design ([observer.kalman]) provides",
        ));
    };
    let s = &kalman.innovation_covariance;
    let p = s.nrows();
    let s_inv = s.clone().try_inverse().ok_or_else(|| {
        unsupported(
            origin,
            "observer.kalman.measurement_noise",
            "the innovation covariance is singular",
        )
    })?;
    let dof = u32::try_from(p).unwrap_or(u32::MAX);
    let (limit, channel_limit) = match *spec {
        Gate::Probability(prob) => (
            lookout::chi_square_limit(dof, prob),
            lookout::chi_square_limit(1, prob),
        ),
        Gate::Threshold(limit) => {
            // The per-channel test keeps the same false-alarm probability.
            let prob = probability_of_limit(dof, limit);
            (
                Some(limit),
                prob.and_then(|prob| lookout::chi_square_limit(1, prob)),
            )
        }
    };
    let (Some(limit), Some(channel_limit)) = (limit, channel_limit) else {
        return Err(unsupported(
            origin,
            "observer.gate_probability",
            "the gate probability must lie strictly between 0 and 1",
        ));
    };
    let steady = super::recovery::Steady {
        ad,
        f,
        cd,
        qd: &kalman.process_noise,
        p0: &kalman.p,
        s0: s,
    };
    // E[ν | ν > limit] / p = P(χ²_{p+2} > limit) / P(χ²_p > limit).
    let tail = |d: u32| probability_of_limit(d, limit).map(|q| 1.0 - q);
    let tail_mean = match (tail(dof.saturating_add(2)), tail(dof)) {
        (Some(wide), Some(narrow)) if narrow > 0.0 => wide / narrow,
        // Far in the tail: E[ν | ν > c] ≈ c + 2 (common practice).
        _ => (limit + 2.0) / f64::from(dof),
    };
    let (widening, per_miss) = super::recovery::table(&steady, tail_mean)
        .map_err(numerics_error(origin, "gate recovery table"))?;
    Ok(GateDesign {
        widening,
        per_miss,
        channel_inv_variance: s.diagonal().iter().map(|v| 1.0 / v).collect(),
        s_inv,
        limit,
        channel_limit,
    })
}

/// The probability P(χ²_dof ≤ limit), by bisection on the quantile.
pub(super) fn probability_of_limit(dof: u32, limit: f64) -> Option<f64> {
    let (mut lo, mut hi) = (0.0_f64, 1.0_f64);
    for _ in 0..80 {
        let mid = 0.5 * (lo + hi);
        match lookout::chi_square_limit(dof, mid) {
            Some(q) if q < limit => lo = mid,
            Some(_) => hi = mid,
            None => return None,
        }
    }
    let prob = 0.5 * (lo + hi);
    (prob > 0.0 && prob < 1.0).then_some(prob)
}
