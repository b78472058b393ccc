//! Generates the demo models' tables into OUT_DIR for the suite's tests and
//! examples: the same pattern a firmware crate's build.rs uses.

use std::path::{Path, PathBuf};

fn main() {
    let out_dir = PathBuf::from(std::env::var_os("OUT_DIR").unwrap_or_default());
    for (model, scalar, file) in [
        (
            "examples/conveyor.toml",
            lookout_design::Scalar::F32,
            "conveyor_f32.rs",
        ),
        (
            "examples/conveyor.toml",
            lookout_design::Scalar::F64,
            "conveyor_f64.rs",
        ),
        (
            "examples/conveyor_kalman.toml",
            lookout_design::Scalar::F64,
            "conveyor_kalman_f64.rs",
        ),
        (
            "tests/models/conveyor_kalman_q31.toml",
            lookout_design::Scalar::F64,
            "conveyor_kalman_q31.rs",
        ),
        (
            "examples/conveyor_load.toml",
            lookout_design::Scalar::F64,
            "conveyor_load_f64.rs",
        ),
    ] {
        println!("cargo:rerun-if-changed={model}");
        match lookout_design::emit_file(Path::new(model), &out_dir.join(file), scalar) {
            Ok(design) => {
                for w in &design.warnings {
                    println!("cargo:warning={model}: {w}");
                }
            }
            Err(e) => {
                eprintln!("{e}");
                std::process::exit(1);
            }
        }
    }
}
