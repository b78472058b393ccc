//! The `lookout` command: design an observer from a model file, print the
//! report, and write the runtime's tables as Rust source.
//!
//! Exit codes: 0 success; 2 bad input (model file missing, unreadable or
//! wrong, a design that cannot be made, bad options); 1 anything else
//! (e.g. the output file cannot be written).

mod cli;
mod json;
mod report;

use clap::Parser;
use lookout_design::{DesignError, design_file};
use std::process::ExitCode;

fn main() -> ExitCode {
    let args = match cli::Args::try_parse() {
        Ok(args) => args,
        Err(e) => {
            // clap prints help and version to stdout with success, usage errors to stderr.
            let _ = e.print();
            return if e.use_stderr() {
                ExitCode::from(2)
            } else {
                ExitCode::SUCCESS
            };
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

fn run(args: cli::Args) -> Result<(), DesignError> {
    match args.command {
        cli::Command::Design { model, json } => {
            let design = design_file(&model)?;
            for w in &design.warnings {
                eprintln!("lookout: warning: {w}");
            }
            let text = if json {
                json::design(&design)
            } else {
                report::design(&design)
            };
            print!("{text}");
            Ok(())
        }
        cli::Command::Emit {
            model,
            output,
            scalar,
        } => {
            let scalar = scalar.into();
            match output {
                Some(path) => {
                    let design = lookout_design::emit_file(&model, &path, scalar)?;
                    for w in &design.warnings {
                        eprintln!("lookout: warning: {w}");
                    }
                    eprintln!("lookout: wrote {}", path.display());
                }
                None => {
                    let design = design_file(&model)?;
                    for w in &design.warnings {
                        eprintln!("lookout: warning: {w}");
                    }
                    let mut bytes = Vec::new();
                    lookout_design::write_tables(&design, scalar, &mut bytes).map_err(|e| {
                        DesignError::Io {
                            path: "standard output".into(),
                            message: e.to_string(),
                        }
                    })?;
                    use std::io::Write as _;
                    std::io::stdout()
                        .write_all(&bytes)
                        .map_err(|e| DesignError::Io {
                            path: "standard output".into(),
                            message: e.to_string(),
                        })?;
                }
            }
            Ok(())
        }
    }
}
