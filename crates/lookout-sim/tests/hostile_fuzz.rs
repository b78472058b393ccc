//! Fuzzing the simulator with the generated model files of the design
//! crate's fuzzer (`crates/lookout-design/tests/hostile/generator.rs`):
//! every model that designs is simulated in every format it is designed
//! for, with mismatch, noise, dropouts and outliers. A run must end in a
//! result or a one-line error, never a panic, and its verdicts must be
//! honest (issue 16):
//!
//! * a format judged anything but "not finite" or "design failed" has
//!   finite RMS and final errors;
//! * a format judged converged has every final error inside its band, a
//!   finite positive band, and passed the boundedness test.
//!
//! Environment variables as for the design fuzzer: `LOOKOUT_FUZZ_SEED`
//! (default 16), `LOOKOUT_FUZZ_CASES` (default 120 generated models, of
//! which roughly a third design), `LOOKOUT_FUZZ_SECONDS` (run until this
//! much time has passed instead), `LOOKOUT_FUZZ_CASE` (one case, printed).

#[path = "../../lookout-design/tests/hostile"]
mod hostile {
    pub mod driver;
    pub mod generator;
}

use lookout_design::{Design, design_text};
use lookout_sim::metrics::Metrics;
use lookout_sim::reference::Reference;
use lookout_sim::signal::InputSignal;
use lookout_sim::verdict::Verdict;
use lookout_sim::{Outputs, RunConfig, Setup, formats, run_once};
use std::panic::{AssertUnwindSafe, catch_unwind};

/// The run every designed model gets: short, noisy, a little mismatched.
fn config(design: &Design) -> RunConfig {
    RunConfig {
        steps: 300,
        seed: 5,
        initial_error: vec![1.0; design.n()],
        input: InputSignal::Prbs {
            amplitude: 1.0,
            hold: 7,
        },
        process_noise: None,
        measurement_noise: Some(1e-3),
        mismatch: 0.01,
        disturbance: None,
        dropout_rate: 0.02,
        outlier_rate: 0.005,
        outlier_size: 1.0,
        tolerance: None,
    }
}

/// Why `m` is a dishonest verdict, if it is.
fn dishonest(m: &Metrics) -> Option<String> {
    let diverged = matches!(m.verdict, Verdict::NotFinite | Verdict::DesignFailed);
    let finite = m
        .rms_error
        .iter()
        .chain(&m.final_error)
        .all(|v| v.is_finite());
    if !diverged && !finite {
        return Some(format!(
            "verdict {:?} with non-finite errors {:?} / {:?}",
            m.verdict, m.rms_error, m.final_error
        ));
    }
    if m.verdict == Verdict::Converged {
        let inside = m
            .final_error
            .iter()
            .zip(&m.band)
            .all(|(e, b)| b.is_finite() && *b > 0.0 && e.abs() <= *b);
        if !(inside && m.stable && m.converged) {
            return Some(format!(
                "converged with final error {:?} against band {:?} (stable {})",
                m.final_error, m.band, m.stable
            ));
        }
    }
    None
}

/// What one case ended in: `Ok(label)` for the tally, `Err(why)` on a failure.
fn run_case(text: &str) -> Result<String, String> {
    let Ok(design) = design_text(text, "fuzz.toml") else {
        return Ok("not designed".into());
    };
    let opts = config(&design);
    let ran = catch_unwind(AssertUnwindSafe(|| {
        let setup = Setup {
            reference: Reference::of(&design, &opts)?,
            formats: formats(&design),
        };
        run_once(&design, &opts, &setup, opts.seed, Outputs::default())
    }))
    .map_err(|_| "simulation panicked".to_string())?;
    let result = match ran {
        Err(e) => {
            let msg = e.to_string();
            if msg.is_empty() || msg.contains('\n') {
                return Err(format!("error not one line: {msg:?}"));
            }
            return Ok("refused".into());
        }
        Ok(r) => r,
    };
    for (run, metrics) in &result.formats {
        if let Some(why) = dishonest(metrics) {
            return Err(format!("{}: {why}", run.format.name()));
        }
    }
    let verdicts: Vec<String> = result
        .formats
        .iter()
        .map(|(_, m)| format!("{:?}", m.verdict))
        .collect();
    Ok(format!("simulated ({})", verdicts.join(", ")))
}

#[test]
fn generated_models_simulate_without_panic_and_with_honest_verdicts() {
    let tally = hostile::driver::fuzz("simulate fuzz", 120, run_case, |_, _, _| {});
    let one_case = std::env::var_os("LOOKOUT_FUZZ_CASE").is_some();
    assert!(
        one_case || tally.keys().any(|k| k.starts_with("simulated")),
        "no generated model was simulated: the fuzzer tests nothing"
    );
}
