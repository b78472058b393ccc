//! Designs the conveyor demo and writes its observer tables to
//! `OUT_DIR/conveyor.rs`; puts memory.x where the linker finds it.
use lookout_design::{EmitOptions, Scalar, emit_file_with};
use std::path::{Path, PathBuf};

fn main() {
    let out = PathBuf::from(std::env::var("OUT_DIR").unwrap());

    // The model: the f32 tables, and (as it has a [fixed_point] section)
    // the Q31 tables and their conversions, in one module `conveyor`.
    let model = Path::new("../conveyor.toml");
    println!("cargo:rerun-if-changed={}", model.display());
    let options = EmitOptions::new(Scalar::F32).module("conveyor");
    let design =
        emit_file_with(model, &out.join("conveyor.rs"), &options).unwrap_or_else(|e| panic!("{e}"));
    for warning in &design.warnings {
        println!("cargo:warning={warning}");
    }

    // cortex-m-rt's link.x includes memory.x from the linker's search path.
    std::fs::copy("memory.x", out.join("memory.x")).unwrap();
    println!("cargo:rustc-link-search={}", out.display());
    println!("cargo:rerun-if-changed=memory.x");
}
