//! Fuzzing the model reader, the whole design pipeline and the table
//! emitter with generated model files (see `hostile/generator.rs`): every
//! case must end in a design whose numbers are all finite and whose emitted
//! tables contain no `inf` or `NaN`, or in a one-line error, never a panic
//! (issue 16).
//!
//! By default a fixed number of cases of a fixed seed runs with the other
//! tests. Environment variables: `LOOKOUT_FUZZ_SEED` (default 16),
//! `LOOKOUT_FUZZ_CASES` (default 300), `LOOKOUT_FUZZ_SECONDS` (run cases
//! until this much time has passed instead; CI uses 60), `LOOKOUT_FUZZ_CASE`
//! (run that one case and print its model), `LOOKOUT_FUZZ_DUMP` (a directory
//! that receives every model that designed, for running `simulate` on).

mod hostile {
    pub mod driver;
    pub mod generator;
}

use lookout_design::{Design, Scalar, design_text, tables_source};
use nalgebra::DMatrix;
use std::panic::{AssertUnwindSafe, catch_unwind};

/// The first non-finite number of the design's tables and results, if any.
fn non_finite(d: &Design) -> Option<String> {
    let mut mats: Vec<(&str, &DMatrix<f64>)> = vec![
        ("Ad", &d.ad),
        ("Bd", &d.bd),
        ("Cd", &d.cd),
        ("Dd", &d.dd),
        ("F", &d.f),
        ("G", &d.g),
        ("H", &d.h),
    ];
    if let Some(g) = &d.gain {
        mats.push(("gain", g));
    }
    if let Some(k) = &d.kalman {
        mats.extend([("P", &k.p), ("K", &k.k), ("S", &k.innovation_covariance)]);
    }
    for (name, m) in mats {
        if let Some(v) = m.iter().find(|v| !v.is_finite()) {
            return Some(format!("{name} has {v}"));
        }
    }
    let poles = d.error_poles.iter().chain(&d.plant_poles);
    if let Some(z) = poles
        .clone()
        .find(|z| !(z.re.is_finite() && z.im.is_finite()))
    {
        return Some(format!("a pole is {z}"));
    }
    if !d.spectral_radius.is_finite() {
        return Some("the spectral radius is not finite".into());
    }
    None
}

/// Whether the generated source contains an `inf` or `NaN` token.
fn has_non_finite_token(text: &str) -> bool {
    text.split(|c: char| !(c.is_ascii_alphanumeric() || c == '_'))
        .any(|t| t == "inf" || t == "NaN")
}

/// What one case ended in: `Ok(label)` for the tally, `Err(why)` on a failure.
fn run_case(text: &str) -> Result<String, String> {
    let designed = catch_unwind(AssertUnwindSafe(|| design_text(text, "fuzz.toml")))
        .map_err(|_| "design_text panicked".to_string())?;
    let design = match designed {
        Err(e) => {
            let msg = e.to_string();
            if msg.is_empty() || msg.contains('\n') || !e.is_input_error() {
                return Err(format!("error not one line / not an input error: {msg:?}"));
            }
            // Tally by the part before the first detail.
            let label = msg.split(": ").nth(1).unwrap_or("?").to_string();
            return Ok(format!("refused: {label}"));
        }
        Ok(d) => d,
    };
    if let Some(why) = non_finite(&design) {
        return Err(format!("design Ok with a non-finite number: {why}"));
    }
    for scalar in [Scalar::F32, Scalar::F64] {
        let emitted = catch_unwind(AssertUnwindSafe(|| tables_source(&design, scalar)))
            .map_err(|_| format!("tables_source({scalar:?}) panicked"))?;
        match emitted {
            Ok(src) if has_non_finite_token(&src) => {
                return Err(format!("{scalar:?} tables contain inf or NaN"));
            }
            Ok(_) => {}
            Err(e) if scalar == Scalar::F64 => {
                return Err(format!("f64 emit refused a finished design: {e}"));
            }
            Err(e) if e.to_string().contains('\n') => return Err(format!("{e:?}")),
            Err(_) => {}
        }
    }
    Ok(format!("designed ({} states)", design.n()))
}

#[test]
fn generated_models_never_panic_and_never_give_non_finite_results() {
    let dump = std::env::var_os("LOOKOUT_FUZZ_DUMP").map(std::path::PathBuf::from);
    hostile::driver::fuzz("fuzz", 300, run_case, |case, text, label| {
        if let (Some(dir), true) = (&dump, label.starts_with("designed")) {
            let _ = std::fs::write(dir.join(format!("case{case}.toml")), text);
        }
    });
}
