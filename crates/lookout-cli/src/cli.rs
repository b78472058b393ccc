//! Command-line arguments.

use clap::{Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

/// Design state observers for microcontrollers: check a plant model, choose
/// the gain, and write the tables the `lookout` runtime runs on.
#[derive(Debug, Parser)]
#[command(
    name = "lookout",
    version,
    after_help = "Exit codes: 0 success, 2 bad input, 1 other failure."
)]
pub struct Args {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Design the observer of a model file and print the report.
    Design {
        /// The model file (TOML).
        model: PathBuf,
        /// Print one JSON object instead of the readable report.
        #[arg(long)]
        json: bool,
    },
    /// Write the observer tables as Rust source for the runtime.
    Emit {
        /// The model file (TOML).
        model: PathBuf,
        /// Where to write the Rust source (default: standard output). Written
        /// whole or not at all.
        #[arg(short, long)]
        output: Option<PathBuf>,
        /// Float type of the tables.
        #[arg(long, value_enum, default_value_t = ScalarArg::F32)]
        scalar: ScalarArg,
    },
    /// Run the observer in every number format against a simulated plant
    /// (optionally perturbed, disturbed and noisy) and report how it does.
    Simulate(Box<SimArgs>),
    /// Run the observer over a logged bench record in every number format,
    /// test its innovations (mean, covariance, NIS, whiteness) and fit the
    /// process and measurement noise to them.
    Replay(ReplayArgs),
}

/// Options of `lookout replay`.
#[derive(Debug, clap::Args)]
pub struct ReplayArgs {
    /// The model file (TOML).
    pub model: PathBuf,
    /// The log (CSV with a header: the model's input and output names, an
    /// optional time column; an empty reading cell is a missing reading).
    pub log: PathBuf,
    /// Lags of the autocorrelation test and of the noise fit.
    #[arg(long, default_value_t = 20, allow_negative_numbers = true)]
    pub lags: i64,
    /// Samples left out of the statistics at the start of the log (default:
    /// until the observer's error has decayed by 10⁶, at most half the log).
    #[arg(long, allow_negative_numbers = true)]
    pub skip: Option<i64>,
    /// Skip columns other than time, step, inputs and outputs instead of
    /// refusing them (e.g. a `lookout simulate --csv` file).
    #[arg(long)]
    pub ignore_other_columns: bool,
    /// Print one JSON object instead of the readable report.
    #[arg(long)]
    pub json: bool,
    /// Write the innovations and estimates per format as CSV.
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,
    /// Write the innovation and autocorrelation plot (.svg or .png).
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// TrueType font for the plot's text.
    #[arg(long, value_name = "FILE")]
    pub font: Option<PathBuf>,
}

/// Options of `lookout simulate`. Numbers are checked by the command itself
/// so that a bad value gets a message naming the option (exit code 2).
#[derive(Debug, clap::Args)]
pub struct SimArgs {
    /// The model file (TOML).
    pub model: PathBuf,
    /// Steps to simulate (default 2000, or the rows of a `csv:` input).
    #[arg(long, allow_negative_numbers = true)]
    pub steps: Option<i64>,
    /// Seed of the random streams (perturbation, noise, dropouts).
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Initial estimation error x − x̂, one value per estimated state
    /// (comma separated, state units) or one for all [default: 1 for every
    /// state].
    #[arg(long, value_name = "E[,E..]", allow_hyphen_values = true)]
    pub initial_error: Option<String>,
    /// Input signal on every input: step:A[@K], sine:A:HZ, prbs:A[:HOLD] or
    /// csv:FILE (one row per step, one column per input).
    #[arg(long, default_value = "step:1")]
    pub input: String,
    /// Standard deviation per sample of noise on each plant state (state
    /// units); default: the model's Kalman process noise, else none.
    #[arg(long, allow_negative_numbers = true)]
    pub process_noise: Option<f64>,
    /// Standard deviation per sample of noise on each output (output
    /// units); default: the model's Kalman measurement noise, else none.
    #[arg(long, allow_negative_numbers = true)]
    pub measurement_noise: Option<f64>,
    /// Relative perturbation of the true plant's A and B (0.05 = each entry
    /// off by up to 5 %); default 0, or 0.05 with --sweep.
    #[arg(long, allow_negative_numbers = true)]
    pub mismatch: Option<f64>,
    /// A disturbance on the true plant's input: INPUT:SIZE[@STEP] (input
    /// index, size in the input's unit, first step).
    #[arg(long, value_name = "INPUT:SIZE[@STEP]", allow_hyphen_values = true)]
    pub disturbance: Option<String>,
    /// Probability in [0, 1] that a reading is missing.
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    pub dropout_rate: f64,
    /// Probability in [0, 1] that a reading is an outlier.
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    pub outlier_rate: f64,
    /// Size of an outlier in the output's unit (random sign).
    #[arg(long, default_value_t = 1.0, allow_negative_numbers = true)]
    pub outlier_size: f64,
    /// Settling band per estimated state (state units); default from the
    /// design's statistics (see docs/simulate.md).
    #[arg(long, value_name = "T[,T..]")]
    pub tolerance: Option<String>,
    /// Print one JSON object instead of the readable report.
    #[arg(long)]
    pub json: bool,
    /// Write the error and pole-map plot (.svg or .png).
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// TrueType font for the plot's text (default: DejaVu Sans where the
    /// system has it).
    #[arg(long, value_name = "FILE")]
    pub font: Option<PathBuf>,
    /// Write the time series (truth, estimates, errors per format) as CSV.
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,
    /// Monte Carlo over N random plant perturbations of size --mismatch.
    #[arg(long, value_name = "N", allow_negative_numbers = true)]
    pub sweep: Option<i64>,
    /// Number formats to run (f64,f32,q31,q15); default f64, f32 and the
    /// `[fixed_point]` format the model was designed for.
    #[arg(long, value_name = "F[,F..]")]
    pub formats: Option<String>,
}

/// `--scalar` values.
#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum ScalarArg {
    /// 32-bit float tables.
    F32,
    /// 64-bit float tables.
    F64,
}

impl From<ScalarArg> for lookout_design::Scalar {
    fn from(s: ScalarArg) -> Self {
        match s {
            ScalarArg::F32 => lookout_design::Scalar::F32,
            ScalarArg::F64 => lookout_design::Scalar::F64,
        }
    }
}

/// A usage error of the argument parser as one line (its first paragraph,
/// without clap's own `error: ` prefix), pointing to `--help`.
pub fn one_line(e: &clap::Error) -> String {
    if e.kind() == clap::error::ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand {
        return "no subcommand: design, emit, simulate or replay (see lookout --help)".to_string();
    }
    let text = e.render().to_string();
    let paragraph: Vec<&str> = text
        .lines()
        .map(str::trim)
        .skip_while(|l| l.is_empty())
        .take_while(|l| !l.is_empty())
        .collect();
    let joined = paragraph.join(" ");
    let first = joined.strip_prefix("error: ").unwrap_or(&joined);
    if first.is_empty() {
        "bad arguments (see lookout --help)".to_string()
    } else {
        format!("{first} (see lookout --help)")
    }
}
