//! Model files: parsing and validation of the TOML model description.
//!
//! A model file names the plant, the sample period, how the observer gain is
//! obtained and, optionally, the fixed-point request. [`Model::from_toml_str`]
//! and [`Model::load`] either return a fully checked [`Model`] (matrix sizes
//! consistent, every number finite, poles stable, noise matrices definite) or
//! one [`ModelError`] naming the file, the key path and the problem on one
//! line. Non-fatal findings go to [`Model::warnings`].
//!
//! # Schema
//!
//! ```toml
//! name = "conveyor"          # Rust identifier after mapping '-' to '_'
//! sample_period = 0.001      # seconds, finite, > 0
//!
//! [plant]                    # continuous time unless domain = "discrete"
//! a = [[0.0, 1.0], [0.0, -8.0]]   # n x n, row-major (an array of rows)
//! b = [[0.0], [80.0]]             # n x m
//! c = [[1.0, 0.0]]                # p x n
//! # d = [[0.0]]                   # p x m, default zeros
//! # domain = "continuous"         # or "discrete": a, b, c, d already sampled
//! # state_names = ["angle", "speed"]      # identifiers, lengths n, m, p
//! # input_names = ["current"]
//! # output_names = ["encoder"]
//! # state_units = ["rad", "rad/s"]        # free text for reports, lengths n, m, p
//! # input_units = ["A"]
//! # output_units = ["rad"]
//!
//! [observer]
//! form = "predictor"         # or "current"
//! # exactly one gain source:
//! poles = [{ re = -60.0, im = 30.0 }]   # s-plane; {re, im} stands for its conjugate pair; z = exp(s T)
//! # discrete_poles = [0.94, 0.95]       # z-plane
//! # gain = [[120.0], [3600.0]]          # continuous-time L, n x p, designed elsewhere
//! # gain_method = "hold"                # with `gain` only: "hold" (default) or "pole-map"
//! # [observer.kalman]                   # steady-state Kalman gain
//! # process_noise = [[4.0e-6]]          # n x n, or q x q with noise_input (n x q)
//! # measurement_noise = [[2.0e-7]]      # p x p covariance per sample
//! # noise_input = [[0.0], [1587.3]]
//! # noise_domain = "continuous"         # or "discrete" (covariance per sample)
//! # gate_probability = 0.999            # innovation gate: chi-square quantile, p degrees of freedom
//! # gate_threshold = 10.83              # ... or the threshold itself (at most one of the two)
//!
//! # [fixed_point]
//! # format = "q31"             # or "q15"
//! # input_range = [5.0]        # max |u_i|, one per input
//! # output_range = [64.0]      # max |y_i|, one per output
//! # state_range = [64.0, 512.0]  # max |x_i| override, one per state
//! # margin_bits = 1            # headroom bits, non-negative integer, default 1
//! # stability_margin = 0.01    # allowed growth of the quantised error spectral radius
//!
//! # [[disturbances.input]]     # an unknown load, estimated as an extra state
//! # name = "load_torque"       # identifier, distinct from the state names
//! # column = [0.0, -1587.3]    # E, n entries; or input = 0 (adds to that input)
//! # shape = "constant"         # or "ramp" (adds the state `load_torque_rate`)
//! # noise = 1.0e-4             # driving-noise level, Kalman designs only
//! # unit = "N m"               # for reports; default the input's (output's) unit
//! # [[disturbances.output_bias]]
//! # name = "encoder_offset"
//! # output = 0
//! ```
//!
//! Beyond the core keys, the extensions are: the signal names and units in
//! `[plant]`; `gate_probability` / `gate_threshold` in `[observer]` (at most
//! one; the gate rejects a measurement whose normalised innovation
//! `νᵀ S⁻¹ ν` exceeds the threshold); `state_range`, `margin_bits` (default
//! [`DEFAULT_MARGIN_BITS`]) and `stability_margin` (default
//! [`DEFAULT_STABILITY_MARGIN`]: the fixed-point design is refused when the
//! spectral radius of its quantised error dynamics exceeds the exact one by
//! more than this, or reaches 1) in `[fixed_point]`.
//!
//! # Rules
//!
//! * Unknown keys are errors that list the allowed keys (typo protection).
//! * Integers are accepted wherever a number is expected; `inf` and `nan`
//!   are refused everywhere.
//! * A matrix is a non-empty array of equally long, non-empty rows.
//! * Pole lists have n poles, a `{ re, im }` entry counting as two; it is
//!   expanded to `re + |im| i, re − |im| i`. `im = 0` is refused (write a
//!   real number). s-plane poles need Re < 0, z-plane poles |z| < 1.
//! * `measurement_noise` must be symmetric positive definite,
//!   `process_noise` symmetric positive semidefinite: symmetric to within
//!   1e-9 × the largest entry, smallest eigenvalue above (or, for
//!   semidefinite, not below minus) 16 n ε × the largest eigenvalue
//!   magnitude. Both are stored as their symmetric part.
//! * A continuous `gain` or a continuous noise density needs a continuous plant.
//! * With `[disturbances]` the observer estimates n + n_d states (n_d
//!   disturbance states, see [`Disturbances`]): pole lists and a given `gain`
//!   are for all of them; `process_noise` stays the plant's, each
//!   disturbance bringing its own `noise`.
//!
//! # Layout
//!
//! One file per section (`plant`, `observer` with `poles` and `kalman`,
//! `fixed_point`, `disturbances`); a new top-level section is a new file read from
//! [`Model::from_toml_str`] and listed in `ROOT_KEYS`.

mod definite;
mod disturbances;
mod error;
mod fixed_point;
mod ident;
pub(crate) use ident::identifier_problem;
mod kalman;
mod observer;
mod plant;
mod poles;
mod reader;

use std::path::Path;

/// Largest model file read (bytes); a larger or endless file is refused.
pub const MAX_MODEL_BYTES: u64 = 32 << 20;

/// Most estimated states (the plant's and the disturbance states) a design
/// takes: the dense O(n³) numerics stay within seconds and a few hundred MiB
/// below it (400 states: 2–5 s and 90–212 MB in a release build, see the
/// README's "Large plants").
pub const MAX_STATES: usize = 500;

pub use disturbances::{Disturbances, Entry, InputDisturbance, OutputBias, Shape};
pub use error::{Location, ModelError, ModelErrorKind, ModelWarning};
pub use fixed_point::{
    DEFAULT_MARGIN_BITS, DEFAULT_STABILITY_MARGIN, FixedFormat, FixedPointSpec, ScaleSource,
};
pub use kalman::{KalmanSpec, NoiseDomain};
pub use observer::{Form, GainMethod, GainSource, Gate, ObserverSpec};
pub use plant::{Domain, Plant};

use reader::{Dim, Node, Source, Table};

/// Keys allowed at the top level of a model file.
const ROOT_KEYS: &[&str] = &[
    "name",
    "sample_period",
    "plant",
    "observer",
    "fixed_point",
    "disturbances",
];

/// A checked model file.
#[derive(Debug, Clone, PartialEq)]
pub struct Model {
    /// Identifier used in generated code (see [`Model::identifier`]).
    pub name: String,
    /// Sample period T in seconds, finite and > 0.
    pub sample_period: f64,
    /// The plant.
    pub plant: Plant,
    /// The observer request.
    pub observer: ObserverSpec,
    /// The fixed-point request, if any.
    pub fixed_point: Option<FixedPointSpec>,
    /// Disturbance states to estimate, if any.
    pub disturbances: Option<Disturbances>,
    /// Non-fatal findings, in file order.
    pub warnings: Vec<ModelWarning>,
}

impl Model {
    /// Parses and checks a model from TOML text; `origin` (usually the file
    /// name) prefixes every error message.
    pub fn from_toml_str(text: &str, origin: &str) -> Result<Model, ModelError> {
        let doc = toml::de::DeTable::parse(text).map_err(|e| syntax_error(origin, text, &e))?;
        let src = Source { origin, text };
        let root = Table::root(&src, &doc, ROOT_KEYS)?;
        let mut warnings = Vec::new();

        let name = read_name(&root.require("name", "the model's identifier")?)?;
        let sample_period =
            read_sample_period(&root.require("sample_period", "the sample period in seconds")?)?;
        let plant =
            plant::read(&root.require_table("plant", plant::KEYS, "the [plant] section")?)?;
        let observer_table =
            root.require_table("observer", observer::KEYS, "the [observer] section")?;
        let disturbances = root
            .table("disturbances", disturbances::KEYS)?
            .map(|table| {
                disturbances::read(&table, &plant, observer_table.has("kalman"), &mut warnings)
            })
            .transpose()?;
        let extra = disturbances.as_ref().map_or(0, Disturbances::state_count);
        let states = if extra == 0 {
            Dim {
                count: plant.n(),
                per: "state",
                symbol: "n",
                from: "plant.a",
            }
        } else {
            Dim {
                count: plant.n() + extra,
                per: "estimated state",
                symbol: "n + n_d",
                from: "plant.a and [disturbances]",
            }
        };
        let observer = observer::read(
            &observer_table,
            &plant,
            states,
            sample_period,
            &mut warnings,
        )?;
        let fixed_point = root
            .table("fixed_point", fixed_point::KEYS)?
            .map(|table| fixed_point::read(&table, &plant, &mut warnings))
            .transpose()?;

        Ok(Model {
            name,
            sample_period,
            plant,
            observer,
            fixed_point,
            disturbances,
            warnings,
        })
    }

    /// Reads and checks the model file at `path`; its file name is the origin
    /// in messages. A file that cannot be read gives a [`ModelErrorKind::Io`] error.
    pub fn load(path: &Path) -> Result<Model, ModelError> {
        let origin = path.file_name().map_or_else(
            || path.display().to_string(),
            |f| f.to_string_lossy().into_owned(),
        );
        let text =
            crate::emit::read_text_limited(path, crate::model::MAX_MODEL_BYTES).map_err(|e| {
                ModelError::new(
                    &origin,
                    "",
                    ModelErrorKind::Io,
                    format!("cannot read {}: {e}", path.display()),
                )
            })?;
        Model::from_toml_str(&text, &origin)
    }

    /// Names of every estimated state: the plant's `state_names` (or `x0`,
    /// `x1`, … when it has none), then the disturbance states.
    pub fn state_names(&self) -> Vec<String> {
        let mut names = self
            .plant
            .state_names
            .clone()
            .unwrap_or_else(|| (0..self.plant.n()).map(|i| format!("x{i}")).collect());
        if let Some(d) = &self.disturbances {
            names.extend(d.state_names());
        }
        names
    }

    /// Unit of every estimated state ("" where the model gives none): the
    /// plant's `state_units`, then the disturbance states' (see
    /// [`Disturbances::state_units`](disturbances::Disturbances::state_units)).
    pub fn state_units(&self) -> Vec<String> {
        let plant = self.plant.state_units.clone().unwrap_or_default();
        let mut units: Vec<String> = (0..self.plant.n())
            .map(|i| plant.get(i).cloned().unwrap_or_default())
            .collect();
        if let Some(d) = &self.disturbances {
            units.extend(d.state_units(&self.plant));
        }
        units
    }

    /// [`Model::name`] as a Rust identifier: '-' mapped to '_'.
    pub fn identifier(&self) -> String {
        self.name.replace('-', "_")
    }
}

fn syntax_error(origin: &str, text: &str, error: &toml::de::Error) -> ModelError {
    // toml's messages may span lines; keep ours to one.
    let message = error
        .message()
        .lines()
        .map(str::trim)
        .filter(|line| !line.is_empty())
        .collect::<Vec<_>>()
        .join("; ");
    let location = error.span().map(|s| Location::of_offset(text, s.start));
    ModelError::new(origin, "", ModelErrorKind::Syntax, message).at(location)
}

fn read_name(node: &Node<'_, '_>) -> Result<String, ModelError> {
    let name = node.string()?;
    match ident::identifier_problem(&name.replace('-', "_")) {
        None => Ok(name.to_string()),
        Some(problem) => Err(node.fail(
            ModelErrorKind::BadName,
            format!(
                "\"{name}\" is not usable as a Rust identifier after mapping '-' to '_': \
                 {problem} (use ASCII letters, digits, '_' and '-', starting with a letter)"
            ),
        )),
    }
}

fn read_sample_period(node: &Node<'_, '_>) -> Result<f64, ModelError> {
    let period = node.number()?;
    if period > 0.0 {
        Ok(period)
    } else {
        Err(node.fail(
            ModelErrorKind::OutOfRange,
            format!("{period} s is not a sample period; it must be > 0 (seconds)"),
        ))
    }
}
