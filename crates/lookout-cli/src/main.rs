//! The `lookout` command: design an observer from a model file, print the
//! report, and write the runtime's tables as Rust source.
//!
//! Exit codes: 0 success; 2 bad input (model file missing, unreadable or
//! wrong, a design that cannot be made, bad options); 1 anything else
//! (e.g. the output file cannot be written).

mod cli;
mod error;
mod json;
mod replay;
mod report;
mod sim;

use clap::Parser;
use error::CliError;
use lookout_design::{Design, DesignError, design_file};
use std::process::ExitCode;

fn main() -> ExitCode {
    let args = match cli::Args::try_parse() {
        Ok(args) => args,
        // clap prints help and version to stdout with success.
        Err(e) if !e.use_stderr() => {
            let _ = e.print();
            return ExitCode::SUCCESS;
        }
        // Usage errors in the tool's own one-line shape.
        Err(e) => {
            eprintln!("lookout: error: {}", cli::one_line(&e));
            return ExitCode::from(2);
        }
    };
    match run(args) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("lookout: error: {e}");
            ExitCode::from(if e.is_input_error() { 2 } else { 1 })
        }
    }
}

fn run(args: cli::Args) -> Result<(), CliError> {
    match args.command {
        cli::Command::Design { model, json } => {
            let design = designed(&model)?;
            let text = if json {
                json::design(&design)
            } else {
                report::design(&design)
            };
            Ok(write_stdout(text.as_bytes())?)
        }
        cli::Command::Simulate(sim_args) => {
            // The options are checked before the design's warnings are shown.
            let design = design_file(&sim_args.model)?;
            let opts = sim::prepare(&design, &sim_args)?;
            warn(&design);
            let text = sim::simulate(&design, &sim_args, &opts)?;
            Ok(write_stdout(text.as_bytes())?)
        }
        cli::Command::Replay(args) => {
            let design = design_file(&args.model)?;
            let text = replay::command(&design, &args)?;
            warn(&design);
            Ok(write_stdout(text.as_bytes())?)
        }
        cli::Command::Emit {
            model,
            output,
            scalar,
        } => {
            let scalar = scalar.into();
            match output {
                Some(path) => {
                    let design = designed(&model)?;
                    let text = lookout_design::tables_source(&design, scalar)?;
                    let written = lookout_design::emit::write_file(&path, text.as_bytes())?;
                    if written.through_link {
                        eprintln!(
                            "lookout: wrote {} (through the symbolic link {})",
                            written.file.display(),
                            path.display()
                        );
                    } else {
                        eprintln!("lookout: wrote {}", path.display());
                    }
                    Ok(())
                }
                None => {
                    let design = designed(&model)?;
                    Ok(write_stdout(
                        lookout_design::tables_source(&design, scalar)?.as_bytes(),
                    )?)
                }
            }
        }
    }
}

/// The design of the model file, its warnings shown on stderr.
fn designed(model: &std::path::Path) -> Result<Design, DesignError> {
    let design = design_file(model)?;
    warn(&design);
    Ok(design)
}

fn warn(design: &Design) {
    for w in &design.warnings {
        eprintln!("lookout: warning: {w}");
    }
}

/// Writes all of `bytes` to standard output. A reader that has gone away
/// (a closed pipe, as with `| head`) is not worth a message.
fn write_stdout(bytes: &[u8]) -> Result<(), DesignError> {
    use std::io::Write as _;
    let mut out = std::io::stdout().lock();
    match out.write_all(bytes).and_then(|()| out.flush()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(DesignError::Io {
            path: "standard output".into(),
            message: e.to_string(),
        }),
        _ => Ok(()),
    }
}
