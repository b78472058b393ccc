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
