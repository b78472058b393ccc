//! The `[observer.kalman]` section: noise descriptions for a steady-state
//! Kalman gain.

use nalgebra::DMatrix;

use super::definite::{Need, check_definite};
use super::error::{ModelError, ModelErrorKind, ModelWarning};
use super::plant::{Domain, Plant};
use super::reader::{Dim, Table};

/// Keys allowed in `[observer.kalman]`.
pub(crate) const KEYS: &[&str] = &[
    "process_noise",
    "measurement_noise",
    "noise_input",
    "noise_domain",
];

/// How `process_noise` is to be read.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum NoiseDomain {
    /// Spectral density of continuous white noise `w(t)` in `ẋ = A x + B u + G w`
    /// (units: state-derivative units² · s); the design discretises it.
    #[default]
    Continuous,
    /// Covariance per sample of `w[k]` in `x[k+1] = A x[k] + B u[k] + G w[k]`.
    Discrete,
}

/// Noise description for a steady-state Kalman gain.
#[derive(Debug, Clone, PartialEq)]
pub struct KalmanSpec {
    /// Process noise Q, q × q (q = n without `noise_input`), symmetric positive
    /// semidefinite; stored as its symmetric part.
    pub process_noise: DMatrix<f64>,
    /// Measurement noise covariance R per sample, p × p, symmetric positive
    /// definite; stored as its symmetric part.
    pub measurement_noise: DMatrix<f64>,
    /// Noise input matrix G, n × q; `None` means the identity (q = n).
    pub noise_input: Option<DMatrix<f64>>,
    /// How `process_noise` is to be read.
    pub noise_domain: NoiseDomain,
}

/// Reads and checks `[observer.kalman]` for `plant`.
pub(crate) fn read(
    table: &Table<'_, '_>,
    plant: &Plant,
    warnings: &mut Vec<ModelWarning>,
) -> Result<KalmanSpec, ModelError> {
    let per_state = Dim {
        count: plant.n(),
        per: "state",
        symbol: "n",
        from: "plant.a",
    };
    let per_output = Dim {
        count: plant.p(),
        per: "output",
        symbol: "p",
        from: "plant.c",
    };

    let noise_input = match table.get("noise_input") {
        Some(node) => {
            let g = node.matrix()?;
            node.check_shape(&g, Some(per_state), None)?;
            Some(g)
        }
        None => None,
    };
    let noise_count = noise_input.as_ref().map_or(plant.n(), DMatrix::ncols);
    let per_noise = match noise_input {
        Some(_) => Dim {
            count: noise_count,
            per: "noise input",
            symbol: "q",
            from: "observer.kalman.noise_input",
        },
        None => per_state,
    };

    let q_node = table.require(
        "process_noise",
        "the process noise matrix, n x n, or q x q with noise_input",
    )?;
    let q = q_node.matrix_of(per_noise, per_noise)?;
    let process_noise = check_definite(&q_node, &q, Need::SemiDefinite)?;
    if process_noise.iter().all(|v| *v == 0.0) {
        warnings.push(ModelWarning {
            path: q_node.path().to_string(),
            message: "process noise is zero: the steady-state Kalman gain is zero \
                      and the observer ignores the measurements"
                .to_string(),
        });
    }

    let r_node = table.require(
        "measurement_noise",
        "the p x p measurement noise covariance per sample",
    )?;
    let r = r_node.matrix_of(per_output, per_output)?;
    let measurement_noise = check_definite(&r_node, &r, Need::Definite)?;

    let noise_domain = match table.get("noise_domain") {
        Some(node) => {
            let domain = node.choice(&[
                ("continuous", NoiseDomain::Continuous),
                ("discrete", NoiseDomain::Discrete),
            ])?;
            if domain == NoiseDomain::Continuous && plant.domain == Domain::Discrete {
                return Err(continuous_noise_on_discrete_plant(table));
            }
            domain
        }
        None if plant.domain == Domain::Discrete => {
            return Err(continuous_noise_on_discrete_plant(table));
        }
        None => NoiseDomain::default(),
    };

    Ok(KalmanSpec {
        process_noise,
        measurement_noise,
        noise_input,
        noise_domain,
    })
}

fn continuous_noise_on_discrete_plant(table: &Table<'_, '_>) -> ModelError {
    table.fail_at(
        "noise_domain",
        ModelErrorKind::Conflict,
        "a continuous noise density needs the continuous plant to be discretised, \
         but plant.domain = \"discrete\"; give noise_domain = \"discrete\" \
         and process_noise as a covariance per sample",
    )
}
