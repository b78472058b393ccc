//! Issue 15: `lookout simulate` has no size limit a designable model can
//! hit below the runtime's 32 outputs. The 40-state chain (its closed form
//! in the fixture's header) runs padded to its size class, end to end.

use std::io::Write as _;
mod common;
use common::{json, lookout, scratch};

const CHAIN40: &str = "tests/fixtures/sizes/chain40_5_inputs_6_outputs.toml";

/// The Kalman design run on its own noise, started at the true state:
/// each verdict is a test at 99.9 % confidence (the seed is fixed, so the
/// outcome is too), and f32 follows f64 within its deviation bound.
#[test]
fn forty_states_five_inputs_six_outputs_run_end_to_end() {
    let v = json(&["simulate", CHAIN40, "--initial-error", "0", "--json"]);
    let formats = v["formats"].as_array().unwrap();
    assert_eq!(formats.len(), 2, "f64 and f32 (no [fixed_point])");
    for f in formats {
        let rms = f["rms_error"].as_array().unwrap();
        assert_eq!(rms.len(), 40);
        assert!(rms.iter().all(|x| x.as_f64().unwrap().is_finite()));
        assert_eq!(f["verdict"], "converged", "{}", f["format"]);
    }
}

/// A model beyond the largest class (33 outputs: the runtime's channel mask
/// holds 32) is refused in one line naming the limit, exit 2.
#[test]
fn thirty_three_outputs_are_refused_in_one_line() {
    let path = scratch("outputs33.toml");
    let ones = vec!["[1.0]"; 33].join(", ");
    let r: Vec<String> = (0..33)
        .map(|i| {
            let row: Vec<&str> = (0..33)
                .map(|j| if i == j { "1.0" } else { "0.0" })
                .collect();
            format!("[{}]", row.join(", "))
        })
        .collect();
    let mut f = std::fs::File::create(&path).unwrap();
    write!(
        f,
        "name = \"wide\"\nsample_period = 0.01\n[plant]\ndomain = \"discrete\"\na = [[0.9]]\nb = [[1.0]]\nc = [{ones}]\n[observer]\nform = \"current\"\n[observer.kalman]\nprocess_noise = [[1.0]]\nnoise_domain = \"discrete\"\nmeasurement_noise = [{}]\n",
        r.join(", ")
    )
    .unwrap();
    let out = lookout(&["simulate", path.to_str().unwrap()]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(
        err.contains("1 to 32 outputs") && err.contains("p = 33"),
        "{err}"
    );
}

const ROD30: &str = "tests/fixtures/sizes/heat_rod30_kalman.toml";

/// The Kalman design of a 30-lump heat rod run on its own noise from the
/// default start (3 σ off): the samples of the bias and consistency tests
/// start once the initial error is forgotten, so the run is judged on its
/// noise alone and converges (each verdict a test at 99.9 %; the seed is
/// fixed, so the outcome is too). Counting the start as noise made this
/// run "inconsistent".
#[test]
fn slow_thirty_state_kalman_run_is_judged_after_its_start_is_forgotten() {
    let v = json(&["simulate", ROD30, "--formats", "f64", "--json"]);
    let f64_run = &v["formats"][0];
    assert_eq!(f64_run["verdict"], "converged", "{f64_run}");
    let from = f64_run["tests_from_step"].as_u64().unwrap();
    assert!(from > 0, "the start is counted: {f64_run}");
    assert!(f64_run["nees"]["holds"].as_bool().unwrap(), "{f64_run}");
}
