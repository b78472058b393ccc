//! Issue 7: `lookout simulate` run as a user runs it, checked against the
//! closed-form error recursion, the final-value theorem, itself (same seed)
//! and bad input.

#![allow(clippy::needless_range_loop)] // indices are matrix positions here

use serde_json::Value;
use std::path::PathBuf;
mod common;
use common::{json, lookout, scratch};

const DEMO: &str = "../../examples/conveyor.toml";
const DEMO_LOAD: &str = "../../examples/conveyor_load.toml";
const DEMO_KALMAN: &str = "../../examples/conveyor_kalman.toml";

fn matrix(v: &Value) -> Vec<Vec<f64>> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|r| {
            r.as_array()
                .unwrap()
                .iter()
                .map(|x| x.as_f64().unwrap())
                .collect()
        })
        .collect()
}

fn numbers(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn format<'a>(v: &'a Value, name: &str) -> &'a Value {
    v["formats"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["format"] == name)
        .unwrap()
}

/// Reads the f64 error columns of a `--csv` file: e[k] per state.
fn f64_errors(path: &PathBuf, names: &[&str]) -> Vec<Vec<f64>> {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let cols: Vec<usize> = names
        .iter()
        .map(|n| {
            header
                .iter()
                .position(|h| *h == format!("f64_error_{n}"))
                .unwrap()
        })
        .collect();
    lines
        .map(|l| {
            // Only the wanted cells: the log columns of the last row are empty.
            let cells: Vec<&str> = l.split(',').collect();
            cols.iter().map(|&c| cells[c].parse().unwrap()).collect()
        })
        .collect()
}

/// Exact model, no noise: the f64 observer's error obeys e[k+1] = F e[k]
/// (the runtime docs' closed form), so e[k] = F^k e0. Cross-check with the
/// design report's poles: by Cayley–Hamilton a 2 × 2 F satisfies
/// e[k+2] = (λ1 + λ2) e[k+1] − λ1 λ2 e[k], with λ the reported error poles
/// (a conjugate pair: 2 Re λ and |λ|²), so the recursion built from the poles
/// alone must reproduce the simulated sequence too.
///
/// Tolerance: each simulated step rounds the plant and the observer (about
/// 4 roundings of |x| ≤ 1 rad·s), and the error recursion is contracting, so
/// the accumulated difference stays below k·ε·|x|max with k = 1e3 for 200
/// steps (stated margin); relative to |e0| = 5 rad/s that is ~1e-12.
#[test]
fn exact_model_error_follows_the_designed_error_dynamics() {
    let design = json(&["design", DEMO, "--json"]);
    let f = matrix(&design["f"]);
    let poles = matrix(&design["error_poles"]);
    let csv = scratch("exact.csv");
    let e0 = [0.1, 5.0];
    let v = json(&[
        "simulate",
        DEMO,
        "--steps",
        "200",
        "--initial-error",
        "0.1,5",
        "--input",
        "step:1",
        "--csv",
        csv.to_str().unwrap(),
        "--json",
    ]);
    let sim = f64_errors(&csv, &["angle", "speed"]);
    assert_eq!(sim.len(), 201);
    let tol = 1e3 * f64::EPSILON * 5.0;
    // F^k e0 by repeated multiplication.
    let mut e = e0.to_vec();
    for (k, row) in sim.iter().enumerate() {
        for i in 0..2 {
            assert!(
                (row[i] - e[i]).abs() <= tol,
                "step {k}, state {i}: simulated {} vs F^k e0 {}",
                row[i],
                e[i]
            );
        }
        e = vec![
            f[0][0] * e[0] + f[0][1] * e[1],
            f[1][0] * e[0] + f[1][1] * e[1],
        ];
    }
    // The recursion from the reported poles only.
    let (l1, l2) = ((poles[0][0], poles[0][1]), (poles[1][0], poles[1][1]));
    let sum = l1.0 + l2.0;
    let prod = l1.0 * l2.0 - l1.1 * l2.1;
    assert!(
        (l1.0 * l2.1 + l1.1 * l2.0).abs() < 1e-15,
        "a conjugate pair"
    );
    for k in 0..199 {
        for i in 0..2 {
            let predicted = sum * sim[k + 1][i] - prod * sim[k][i];
            assert!(
                (sim[k + 2][i] - predicted).abs() <= 4.0 * tol,
                "step {}: Cayley–Hamilton from the poles gives {predicted}, simulated {}",
                k + 2,
                sim[k + 2][i]
            );
        }
    }
    let f64_run = format(&v, "f64");
    assert_eq!(
        f64_run["max_deviation_from_f64"],
        serde_json::json!([0.0, 0.0])
    );
    assert_eq!(f64_run["converged"], true);
}

/// A constant disturbance d on input 0 that the observer does not model:
/// x⁺ = Ad x + Bd (u + d), x̂⁺ = Ad x̂ + Bd u + L (y − C x̂) with D = 0, so
/// e⁺ = F e + Bd d and, by the final-value theorem on the error dynamics,
/// e[∞] = (I − F)⁻¹ Bd d (2 × 2 inverse written out). After 3000 steps the
/// transient is e^{−70·3} small; rounding as in the test above. Relative
/// tolerance 1e-9 (the bias is ~1e-2 rad, the rounding ~1e-12).
#[test]
fn unmodelled_input_disturbance_leaves_the_final_value_bias() {
    let design = json(&["design", DEMO, "--json"]);
    let f = matrix(&design["f"]);
    let bd = matrix(&design["bd"]);
    let d = 0.25;
    let v = json(&[
        "simulate",
        DEMO,
        "--steps",
        "3000",
        "--disturbance",
        "0:0.25",
        "--json",
    ]);
    let m = [[1.0 - f[0][0], -f[0][1]], [-f[1][0], 1.0 - f[1][1]]];
    let det = m[0][0] * m[1][1] - m[0][1] * m[1][0];
    let rhs = [bd[0][0] * d, bd[1][0] * d];
    let expected = [
        (m[1][1] * rhs[0] - m[0][1] * rhs[1]) / det,
        (-m[1][0] * rhs[0] + m[0][0] * rhs[1]) / det,
    ];
    let got = numbers(&format(&v, "f64")["final_error"]);
    for i in 0..2 {
        assert!(
            (got[i] - expected[i]).abs() <= 1e-9 * expected[i].abs(),
            "state {i}: final error {} vs (I − F)⁻¹ Bd d = {}",
            got[i],
            expected[i]
        );
    }
    assert!(expected[0].abs() > 1e-3, "the bias is visible");
}

/// The disturbance-estimating demo: after a load step the load-torque state
/// converges to the load the simulated current disturbance stands for. The
/// model's load column is [0, −1/J] and b = [0, K_t/J], so a disturbance of
/// −0.25 A on the current is a braking torque of 0.25·K_t = 0.0125 N·m;
/// the final errors are rounding-sized (bound as in the disturbance test of
/// the suite: 1e4·ε·30).
#[test]
fn load_estimate_converges_to_a_step_load() {
    let v = json(&[
        "simulate",
        DEMO_LOAD,
        "--steps",
        "4000",
        "--initial-error",
        "0",
        "--disturbance",
        "0:-0.25@500",
        "--json",
    ]);
    let run = format(&v, "f64");
    let final_error = numbers(&run["final_error"]);
    assert_eq!(final_error.len(), 3);
    let tol = 1e4 * f64::EPSILON * 30.0;
    assert!(
        final_error.iter().all(|e| e.abs() <= tol),
        "{final_error:?}"
    );
    assert_eq!(run["converged"], true);
    assert!(run["settling_step"].as_u64().unwrap() > 500);
    assert_eq!(v["state_names"][2], "load_torque");
}

const NOISY: &[&str] = &[
    "simulate",
    DEMO,
    "--steps",
    "300",
    "--mismatch",
    "0.05",
    "--measurement-noise",
    "1e-3",
    "--process-noise",
    "1e-4",
    "--dropout-rate",
    "0.1",
    "--outlier-rate",
    "0.02",
    "--input",
    "prbs:2:5",
    "--json",
];

fn with_seed(seed: &str) -> Vec<&str> {
    let mut a = NOISY.to_vec();
    a.extend(["--seed", seed]);
    a
}

#[test]
fn same_seed_gives_the_same_json() {
    let a = lookout(&with_seed("42"));
    let b = lookout(&with_seed("42"));
    assert!(a.status.success(), "{}", String::from_utf8_lossy(&a.stderr));
    assert_eq!(a.stdout, b.stdout);
    let c = lookout(&with_seed("43"));
    assert_ne!(a.stdout, c.stdout, "another seed, another run");
}

/// The documented keys (docs/simulate.md), each format's entries per state.
#[test]
fn json_has_the_documented_keys() {
    let v = json(&with_seed("7"));
    for key in [
        "steps",
        "seed",
        "formats",
        "state_names",
        "tolerance",
        "tolerance_source",
        "dropped",
    ] {
        assert!(v.get(key).is_some(), "missing {key}");
    }
    assert_eq!(v["steps"], 300);
    assert_eq!(v["seed"], 7);
    let names: Vec<&str> = v["formats"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["format"].as_str().unwrap())
        .collect();
    // Issue 13: the Q format the model was not designed for runs only on
    // request (--formats).
    assert_eq!(names, ["f64", "f32", "q31"]);
    for f in v["formats"].as_array().unwrap() {
        for key in ["rms_error", "final_error", "max_deviation_from_f64"] {
            assert_eq!(f[key].as_array().unwrap().len(), 2, "{key}");
        }
        for key in [
            "settling_step",
            "saturations",
            "gated",
            "dropped",
            "converged",
            "verdict",
            "band",
            "nees",
            "nis",
        ] {
            assert!(f.get(key).is_some(), "missing {key}");
        }
        assert!(f["dropped"].as_u64().unwrap() > 0);
    }
    assert_eq!(
        format(&v, "f64")["max_deviation_from_f64"],
        serde_json::json!([0.0, 0.0])
    );
}

/// The gated Kalman demo with outliers: some readings are gated.
#[test]
fn outliers_are_gated_by_the_kalman_demo() {
    let v = json(&[
        "simulate",
        DEMO_KALMAN,
        "--steps",
        "400",
        "--outlier-rate",
        "0.05",
        "--outlier-size",
        "0.05",
        "--json",
    ]);
    let f = format(&v, "f64");
    assert!(f["gated"].as_u64().unwrap() > 0, "{f}");
}

#[test]
fn sweep_reports_fractions_and_worst_cases_reproducibly() {
    let args = [
        "simulate",
        DEMO,
        "--steps",
        "200",
        "--sweep",
        "16",
        "--mismatch",
        "0.05",
        "--json",
        "--initial-error",
        "0.1,5",
    ];
    let a = lookout(&args);
    assert!(a.status.success(), "{}", String::from_utf8_lossy(&a.stderr));
    assert_eq!(a.stdout, lookout(&args).stdout);
    let v: Value = serde_json::from_slice(&a.stdout).unwrap();
    assert_eq!(v["runs"], 16);
    for f in v["formats"].as_array().unwrap() {
        for key in ["stable_fraction", "converged_fraction"] {
            let x = f[key].as_f64().unwrap();
            assert!((0.0..=1.0).contains(&x), "{key} {x}");
        }
        assert_eq!(f["worst"].as_array().unwrap().len(), 3);
    }
}

fn fails_with(args: &[&str], needle: &str) {
    let out = lookout(args);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
    assert!(err.contains(needle), "{args:?}: `{err}` lacks `{needle}`");
    assert_eq!(err.lines().count(), 1, "one line: {err}");
}

#[test]
fn bad_options_exit_2_with_a_clear_message() {
    fails_with(
        &["simulate", DEMO, "--steps", "-5"],
        "--steps: must be a whole number > 0, got -5",
    );
    fails_with(&["simulate", DEMO, "--steps", "0"], "--steps");
    fails_with(
        &["simulate", DEMO, "--dropout-rate", "1.5"],
        "--dropout-rate: must be a probability in [0, 1], got 1.5",
    );
    fails_with(
        &["simulate", DEMO, "--outlier-rate", "-0.1"],
        "--outlier-rate",
    );
    fails_with(&["simulate", DEMO, "--mismatch", "-0.1"], "--mismatch");
    fails_with(
        &["simulate", DEMO, "--initial-error", "1,2,3"],
        "expected 1 value or 2",
    );
    fails_with(
        &["simulate", DEMO, "--disturbance", "3:1"],
        "input 3 does not exist",
    );
    fails_with(
        &["simulate", DEMO, "--input", "square:1"],
        "unknown signal kind",
    );
    fails_with(&["simulate", DEMO, "--sweep", "-1"], "--sweep");
    fails_with(
        &["simulate", DEMO, "--sweep", "2", "--csv", "x.csv"],
        "--plot and --csv show one run",
    );

    let wide = scratch("wide.csv");
    std::fs::write(&wide, "0.5\n0.5,1.0\n").unwrap();
    let arg = format!("csv:{}", wide.display());
    fails_with(
        &["simulate", DEMO, "--input", &arg],
        "line 2: expected 1 column (one per input), found 2",
    );
    let word = scratch("word.csv");
    std::fs::write(&word, "# current (A)\n0.5\nabc\n").unwrap();
    let arg = format!("csv:{}", word.display());
    fails_with(
        &["simulate", DEMO, "--input", &arg],
        "line 3, column 1: `abc` is not a finite number",
    );
    let short = scratch("short.csv");
    std::fs::write(&short, "1\n1\n").unwrap();
    let arg = format!("csv:{}", short.display());
    fails_with(
        &["simulate", DEMO, "--input", &arg, "--steps", "5"],
        "only 2 rows",
    );
}

/// A CSV input drives the run with one step per row.
#[test]
fn csv_input_sets_the_step_count() {
    let rows = scratch("rows.csv");
    std::fs::write(&rows, "# current (A)\n1\n1\n0.5\n0\n").unwrap();
    let arg = format!("csv:{}", rows.display());
    let v = json(&["simulate", DEMO, "--input", &arg, "--json"]);
    assert_eq!(v["steps"], 4);
}

/// The plot is written (SVG here; text needs a TrueType font, so the test
/// is skipped, saying so, on a machine without the usual system fonts).
#[test]
fn plot_is_written() {
    let font = "/usr/share/fonts/truetype/dejavu/DejaVuSans.ttf";
    if !std::path::Path::new(font).exists() {
        eprintln!("skipped: no {font}");
        return;
    }
    let svg = scratch("plot.svg");
    let out = lookout(&[
        "simulate",
        DEMO,
        "--steps",
        "100",
        "--initial-error",
        "0.1,5",
        "--formats",
        "f32,q31,q15",
        "--plot",
        svg.to_str().unwrap(),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = std::fs::read_to_string(&svg).unwrap();
    for label in [
        "time (s)",
        "error (rad/s)",
        "Re z",
        "quantised error poles (Q31)",
        "q15",
    ] {
        assert!(text.contains(label), "missing {label}");
    }
    fails_with(
        &["simulate", DEMO, "--steps", "10", "--plot", "out.gif"],
        "must end in .svg or .png",
    );
}

fn verdicts(v: &Value) -> Vec<(String, String)> {
    v["formats"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            (
                f["format"].as_str().unwrap().to_string(),
                f["verdict"].as_str().unwrap().to_string(),
            )
        })
        .collect()
}

/// Issue 13, done-when: the bundled Kalman demo, run bare (its own noise,
/// the gate active), converges in every format for seeds 1 to 20 (a sweep
/// without mismatch runs exactly seeds 1..=20), and a single run prints its
/// NEES and NIS statistics.
#[test]
fn kalman_demo_converges_for_seeds_1_to_20() {
    let v = json(&[
        "simulate",
        DEMO_KALMAN,
        "--sweep",
        "20",
        "--mismatch",
        "0",
        "--json",
    ]);
    for f in v["formats"].as_array().unwrap() {
        assert_eq!(f["converged_fraction"], 1.0, "{f}");
    }
    let out = lookout(&["simulate", DEMO_KALMAN]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("NEES") && text.contains("NIS"), "{text}");
    assert!(text.contains("verdict f64: CONVERGED"), "{text}");
}

/// Issue 13: a steady error the observer does not model is reported as a
/// bias, in every format, with and without noise: the noise-free demo on a
/// plant 30 % off (its error cannot decay as F predicts), and the Kalman
/// demo with a constant unmodelled input (final-value bias, as in
/// `unmodelled_input_disturbance_leaves_the_final_value_bias`).
#[test]
fn mismatched_plant_is_reported_biased() {
    for args in [
        vec!["simulate", DEMO, "--mismatch", "0.3", "--json"],
        vec!["simulate", DEMO_KALMAN, "--disturbance", "0:0.3", "--json"],
    ] {
        for (format, verdict) in verdicts(&json(&args)) {
            assert_eq!(verdict, "biased", "{args:?}: {format}");
        }
    }
    let out = lookout(&["simulate", DEMO, "--mismatch", "0.3"]);
    assert!(String::from_utf8_lossy(&out.stdout).contains("[disturbances]"));
}

/// Issue 13: when the f64 run is not finite (an input of 1e308 A overflows
/// the plant), no format is called converged, and f64's failure is the
/// design's.
#[test]
fn non_finite_f64_run_is_never_converged() {
    // The plant stays finite (it starts at rest); the observer, started
    // 1e307 off, overflows f64. (A plant that itself overflows, e.g.
    // `--input step:1e308`, is refused as bad input: see tests/hostile.rs.)
    let args = [
        "simulate",
        DEMO,
        "--initial-error",
        "1e307,1e307",
        "--steps",
        "300",
    ];
    let mut with_json = args.to_vec();
    with_json.extend(["--formats", "f32,q31,q15", "--json"]);
    let v = json(&with_json);
    for (format, verdict) in verdicts(&v) {
        assert!(
            verdict == "diverged" || verdict == "design failed",
            "{format}: {verdict}"
        );
    }
    for f in v["formats"].as_array().unwrap() {
        assert_eq!(f["converged"], false);
    }
    let text = String::from_utf8_lossy(&lookout(&args).stdout).into_owned();
    assert!(text.contains("the design fails"), "{text}");
    assert!(!text.contains(": CONVERGED"), "{text}");
}

const CELL: &str = "../../examples/cell.toml";

// One value per concept: the verdict band rests on the very deviation bound
// `lookout design --json` reports (`fixed_point.format_accuracy`), for the
// form simulate runs. Checked against the design command's own output (a
// different command path over the same model) and the band's stated
// composition (docs/simulate.md): with noise k·σ + deviation, without the
// f64 residual plus the f64 and the format's deviation; either way the Q31
// band minus the f64 band is the Q31 deviation minus the f64 one.

/// The design's deviation of `form` in `format` from `lookout design --json`.
fn design_deviation(form: &str, format: &str) -> Vec<f64> {
    let d = json(&["design", CELL, "--json"]);
    let row = d["fixed_point"]["format_accuracy"]["combinations"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["form"] == form && c["format"] == format)
        .unwrap_or_else(|| panic!("no {form} {format} row"))
        .clone();
    numbers(&row["deviation"])
}

/// Issue 12/13 unification: a Q31 run of the cell demo (predictor form,
/// `[fixed_point]` in Q31) carries exactly the design's predictor-Q31
/// deviation in its band, with and without simulated noise.
#[test]
fn q31_band_holds_exactly_the_designs_deviation() {
    let q31 = design_deviation("predictor", "q31");
    let f64_dev = design_deviation("predictor", "f64");
    for extra in [&[][..], &["--measurement-noise", "0.001"][..]] {
        let mut args = vec!["simulate", CELL, "--formats", "q31", "--json"];
        args.extend_from_slice(extra);
        let v = json(&args);
        let (f, q) = (format(&v, "f64"), format(&v, "q31"));
        // Serialised by the same serializer from the same f64: equal bits.
        assert_eq!(numbers(&q["deviation_bound"]), q31, "{extra:?}");
        // f64's bound is the same analysis at the run's own signal peaks
        // (this run starts outside the declared ranges, so they may exceed
        // the scales): the same order as the design's, never zero.
        let run_f64 = numbers(&f["deviation_bound"]);
        for (run, design) in run_f64.iter().zip(&f64_dev) {
            assert!(
                *run > 0.0 && *run < 100.0 * design,
                "{extra:?}: f64 {run}, design {design}"
            );
        }
        let (bf, bq) = (numbers(&f["band"]), numbers(&q["band"]));
        for i in 0..q31.len() {
            // Both bands share their first term; the difference is formed
            // with two roundings of about ε·band each (k = 4).
            let want = q31[i] - run_f64[i];
            let tol = 4.0 * f64::EPSILON * bq[i];
            assert!(
                ((bq[i] - bf[i]) - want).abs() <= tol,
                "{extra:?} state {i}: band q31 {} − f64 {} ≠ deviation q31 − f64 {want}",
                bq[i],
                bf[i]
            );
        }
        let source = v["tolerance_source"].as_str().unwrap();
        assert!(
            source.contains("format_accuracy") && source.contains("predictor form"),
            "{source}"
        );
    }
}

/// Issue 15: the sweep's progress bar (indicatif) draws only on a terminal;
/// with stderr piped, as in CI logs, a short sweep writes nothing there.
#[test]
fn sweep_progress_stays_off_a_piped_stderr() {
    let out = lookout(&["simulate", DEMO_KALMAN, "--sweep", "8", "--steps", "200"]);
    assert!(out.status.success());
    assert_eq!(String::from_utf8_lossy(&out.stderr), "");
    assert!(String::from_utf8_lossy(&out.stdout).contains("sweep of 8 runs"));
}
