//! Writes the firmware's observer tables to OUT_DIR and wires the linker
//! script: the build-script pattern the README teaches.
//!
//! * f32 tables (what the firmware runs) and f64 tables (the "true" plant the
//!   firmware simulates) of each demo model, by `lookout_design::emit_file`.
//!   A model with a `[fixed_point]` section also gets its Q31 tables there
//!   (`PREDICTOR_Q31`, `FUSED_Q31`, `SCALES`);
//! * Q15 tables of the two predictor models, by the same emitter
//!   (`emit_file_with`, `EmitOptions::fixed` and `EmitOptions::scales`) at
//!   the scenario's scales below, in modules `<model>_fixed`;
//! * the target core's memory map (`memory/<core>.x`) copied to OUT_DIR as
//!   `memory.x`, which goes on the link search path, and `-Tlink.x` (the
//!   linker script of cortex-m-rt or riscv-rt, which includes `memory.x`);
//! * `core.rs` in OUT_DIR: the core's name and the counter ticks per
//!   instruction the board QEMU emulates for it should show.
//!
//! Every model file is a `rerun-if-changed` input: editing one regenerates
//! the tables on the next `cargo build`, with no manual step.

use lookout_design::emit::{EmitOptions, emit_file_with};
use lookout_design::model::FixedFormat;
use lookout_design::{Scalar, emit_file};
use std::error::Error;
use std::path::{Path, PathBuf};

/// The demo models: path (relative to this crate) and the stem of the
/// generated files.
const MODELS: [(&str, &str); 3] = [
    ("../conveyor.toml", "conveyor"),
    ("../conveyor_kalman.toml", "conveyor_kalman"),
    ("models/two_mass.toml", "two_mass"),
];

fn main() {
    if let Err(e) = run() {
        eprintln!("error: {e}");
        std::process::exit(1);
    }
}

fn run() -> Result<(), Box<dyn Error>> {
    let out = PathBuf::from(std::env::var_os("OUT_DIR").ok_or("OUT_DIR is not set")?);

    let target = std::env::var("TARGET")?;
    let (core, per_tick, memory) =
        core_of(&target).ok_or_else(|| format!("no board for {target}"))?;
    std::fs::write(
        out.join("core.rs"),
        format!(
            "/// The core this image was built for.\npub const CORE: &str = {core:?};\n\
             /// Counter ticks per instruction on the board QEMU emulates for it.\n\
             pub const EXPECTED_PER_TICK: f64 = {per_tick:?};\n"
        ),
    )?;
    std::fs::copy(memory, out.join("memory.x"))?;
    println!("cargo:rustc-link-search={}", out.display());
    println!("cargo:rustc-link-arg=-Tlink.x");
    println!("cargo:rerun-if-changed=memory");

    for (model, stem) in MODELS {
        println!("cargo:rerun-if-changed={model}");
        for (scalar, suffix) in [(Scalar::F32, "f32"), (Scalar::F64, "f64")] {
            let file = out.join(format!("{stem}_{suffix}.rs"));
            let design =
                emit_file(Path::new(model), &file, scalar).map_err(|e| format!("{model}: {e}"))?;
            if scalar == Scalar::F32 {
                for w in &design.warnings {
                    println!("cargo:warning={model}: {w}");
                }
            }
        }
    }

    for (model, stem, [state, input, output]) in [
        ("../conveyor.toml", "conveyor", CONVEYOR_SCALES),
        ("models/two_mass.toml", "two_mass", TWO_MASS_SCALES),
    ] {
        let module = format!("{stem}_fixed");
        let options = EmitOptions::new(Scalar::F32)
            .module(&module)
            .fixed(FixedFormat::Q15)
            .scales(state, input, output);
        emit_file_with(
            Path::new(model),
            &out.join(format!("{module}.rs")),
            &options,
        )
        .map_err(|e| format!("{model}: {e}"))?;
    }
    Ok(())
}

/// The core of a compilation target: its name, the instructions per
/// counter tick on the board QEMU emulates for it (SysTick on the core
/// clock under `-icount shift=0`: 10⁹ / f_core; `minstret`: 1), and its
/// memory map.
fn core_of(target: &str) -> Option<(&'static str, f64, &'static str)> {
    Some(match target {
        "thumbv6m-none-eabi" => ("cortex-m0", 62.5, "memory/cortex-m0.x"),
        "thumbv7m-none-eabi" => ("cortex-m3", 40.0, "memory/cortex-m.x"),
        "thumbv7em-none-eabihf" => ("cortex-m4f", 40.0, "memory/cortex-m.x"),
        "thumbv8m.main-none-eabihf" => ("cortex-m33", 50.0, "memory/cortex-m33.x"),
        "riscv32imc-unknown-none-elf" => ("rv32imc", 1.0, "memory/riscv32.x"),
        _ => return None,
    })
}

/// Signal scale exponents (|v| < 2^s) of the conveyor's Q15 tables, chosen
/// for the firmware's scenario with one bit of headroom (not bounds proven
/// for every reading, as lookout-design's are: a reading far outside the
/// scenario saturates, which the step counts in its status): angle within 64 rad
/// (the firmware keeps it in a window, see conveyor.toml), speed within
/// 512 rad/s (the belt reaches 300), current within 8 A (limit 5 A).
const CONVEYOR_SCALES: [&[i8]; 3] = [&[7, 10], &[4], &[7]];

/// The two-mass drive's scales, chosen the same way: angles within 64 rad,
/// speeds within 1024 rad/s, current within 8 A.
const TWO_MASS_SCALES: [&[i8]; 3] = [&[7, 11, 7, 11], &[4], &[7, 7]];
