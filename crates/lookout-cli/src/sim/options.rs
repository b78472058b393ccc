//! The `simulate` options, checked: every bad value is refused here with a
//! message naming the option (exit code 2), before anything is simulated.

use crate::cli::SimArgs;
use lookout_sim::signal::InputSignal;
use lookout_sim::{InputDisturbance, RunConfig};

/// The checked options of `lookout simulate`: the settings of each run and
/// how many runs to make.
#[derive(Debug, Clone)]
pub struct SimOptions {
    /// The settings every run shares (its seed is that of the first run).
    pub run: RunConfig,
    /// Monte Carlo runs (`None`: one run).
    pub sweep: Option<usize>,
}

impl std::ops::Deref for SimOptions {
    type Target = RunConfig;
    fn deref(&self) -> &RunConfig {
        &self.run
    }
}

use crate::error::CliError;

fn bad(message: String) -> CliError {
    CliError::BadInput(message)
}

fn rate(name: &str, value: f64) -> Result<f64, CliError> {
    if (0.0..=1.0).contains(&value) {
        Ok(value)
    } else {
        Err(bad(format!(
            "--{name}: must be a probability in [0, 1], got {value}"
        )))
    }
}

fn non_negative(name: &str, value: Option<f64>) -> Result<Option<f64>, CliError> {
    match value {
        Some(v) if !(v.is_finite() && v >= 0.0) => Err(bad(format!(
            "--{name}: must be a finite number ≥ 0, got {v}"
        ))),
        other => Ok(other),
    }
}

/// Comma-separated finite numbers, one per state (or one for all).
fn per_state(name: &str, text: &str, n: usize) -> Result<Vec<f64>, CliError> {
    let values = text
        .split(',')
        .map(|s| {
            s.trim()
                .parse::<f64>()
                .ok()
                .filter(|v| v.is_finite())
                .ok_or_else(|| bad(format!("--{name}: `{}` is not a finite number", s.trim())))
        })
        .collect::<Result<Vec<f64>, CliError>>()?;
    match values.len() {
        1 => Ok(vec![values.first().copied().unwrap_or(0.0); n]),
        k if k == n => Ok(values),
        k => Err(bad(format!(
            "--{name}: expected 1 value or {n} (one per estimated state), found {k}"
        ))),
    }
}

impl SimOptions {
    /// Checks `args` for a model with `n` estimated states, `m` inputs and
    /// sample period `t`.
    pub fn from_args(args: &SimArgs, n: usize, m: usize) -> Result<Self, CliError> {
        let input = InputSignal::parse(&args.input, m)?;
        let steps = match (args.steps, input.rows()) {
            (Some(s), _) if s <= 0 => {
                return Err(bad(format!("--steps: must be a whole number > 0, got {s}")));
            }
            (Some(s), Some(rows)) if s as u64 > rows as u64 => {
                return Err(bad(format!(
                    "--steps {s}: the input file has only {rows} rows (one per step)"
                )));
            }
            (Some(s), _) => usize::try_from(s)
                .map_err(|_| bad(format!("--steps: {s} is too many for this machine")))?,
            (None, Some(rows)) => rows,
            (None, None) => 2000,
        };
        let initial_error = match &args.initial_error {
            Some(text) => per_state("initial-error", text, n)?,
            // Without one, every state starts one unit off, so that a bare
            // run shows the error dying out (zero would show nothing but
            // rounding, measured against a zero-width band).
            None => vec![1.0; n],
        };
        let tolerance = match &args.tolerance {
            Some(text) => {
                let t = per_state("tolerance", text, n)?;
                if let Some(v) = t.iter().find(|v| **v <= 0.0) {
                    return Err(bad(format!("--tolerance: must be > 0, got {v}")));
                }
                Some(t)
            }
            None => None,
        };
        let mismatch = non_negative("mismatch", args.mismatch)?;
        if let Some(v) = mismatch.filter(|v| *v > 1.0) {
            return Err(bad(format!(
                "--mismatch: must be at most 1 (each entry off by up to 100 %), got {v}"
            )));
        }
        let sweep = match args.sweep {
            Some(s) if s <= 0 => {
                return Err(bad(format!("--sweep: must be a whole number > 0, got {s}")));
            }
            Some(s) if s as u64 > super::sweep::MAX_SWEEP as u64 => {
                return Err(bad(format!(
                    "--sweep: at most {} runs, got {s}",
                    super::sweep::MAX_SWEEP
                )));
            }
            Some(s) => {
                Some(usize::try_from(s).map_err(|_| bad(format!("--sweep: {s} is too many")))?)
            }
            None => None,
        };
        let disturbance = match &args.disturbance {
            Some(text) => Some(parse_disturbance(text, m)?),
            None => None,
        };
        let outlier_size = args.outlier_size;
        if !outlier_size.is_finite() {
            return Err(bad(format!(
                "--outlier-size: must be a finite number, got {outlier_size}"
            )));
        }
        let run = RunConfig {
            steps,
            seed: args.seed,
            initial_error,
            input,
            process_noise: non_negative("process-noise", args.process_noise)?,
            measurement_noise: non_negative("measurement-noise", args.measurement_noise)?,
            // A sweep without a stated size perturbs by 5 % (an invented
            // default, large enough to matter for most drives' parameters).
            mismatch: mismatch.unwrap_or(if sweep.is_some() { 0.05 } else { 0.0 }),
            disturbance,
            dropout_rate: rate("dropout-rate", args.dropout_rate)?,
            outlier_rate: rate("outlier-rate", args.outlier_rate)?,
            outlier_size,
            tolerance,
        };
        Ok(Self { run, sweep })
    }
}

/// `INPUT:SIZE[@STEP]`.
fn parse_disturbance(text: &str, m: usize) -> Result<InputDisturbance, CliError> {
    let bad = |why: String| {
        bad(format!(
            "--disturbance {text}: {why} (expected INPUT:SIZE[@STEP])"
        ))
    };
    let (input, rest) = text
        .split_once(':')
        .ok_or_else(|| bad("no `:` after the input index".into()))?;
    let input: usize = input
        .trim()
        .parse()
        .map_err(|_| bad(format!("input `{input}` is not an index")))?;
    if input >= m {
        return Err(bad(format!("input {input} does not exist (m = {m})")));
    }
    let (size, start) = match rest.split_once('@') {
        Some((s, k)) => (
            s,
            k.trim()
                .parse::<usize>()
                .map_err(|_| bad(format!("start `{k}` is not a whole number ≥ 0")))?,
        ),
        None => (rest, 0),
    };
    let size = size
        .trim()
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
        .ok_or_else(|| bad(format!("size `{size}` is not a finite number")))?;
    Ok(InputDisturbance { input, size, start })
}
