//! The `lookout` binary as a user runs it: reports, JSON, emitted files and
//! every kind of bad input.

use std::path::Path;
mod common;
use common::{json, lookout, scratch};

const DEMO: &str = "../../examples/conveyor.toml";
const DEMO_KALMAN: &str = "../../examples/conveyor_kalman.toml";

/// A valid model with one edit applied to its text.
const BASE: &str = r#"name = "bench_axis"
sample_period = 0.001

[plant]
a = [[0.0, 1.0], [0.0, -8.0]]
b = [[0.0], [80.0]]
c = [[1.0, 0.0]]

[observer]
form = "predictor"
poles = [{ re = -70.0, im = 40.0 }]
"#;

#[test]
fn design_json_has_the_documented_keys_and_the_requested_poles() {
    let v = json(&["design", DEMO, "--json"]);
    for key in [
        "name",
        "sample_period",
        "ad",
        "bd",
        "cd",
        "dd",
        "f",
        "g",
        "h",
        "gain",
        "error_poles",
        "spectral_radius",
        "observability",
        "warnings",
    ] {
        assert!(v.get(key).is_some(), "missing key {key}");
    }
    assert_eq!(v["name"], "conveyor");
    assert_eq!(v["observability"]["rank"], 2);
    assert_eq!(v["observability"]["n"], 2);
    // n × 1 matrices stay nested.
    assert_eq!(v["gain"].as_array().unwrap().len(), 2);
    assert_eq!(v["gain"][0].as_array().unwrap().len(), 1);
    // The demo asks for s = −70 ± 40i at T = 1 ms: z = exp(sT) in closed form.
    let t = v["sample_period"].as_f64().unwrap();
    let mag = (-70.0 * t).exp();
    let poles = v["error_poles"].as_array().unwrap();
    assert_eq!(poles.len(), 2);
    for p in poles {
        let (re, im) = (p[0].as_f64().unwrap(), p[1].as_f64().unwrap());
        assert!((re - mag * (40.0 * t).cos()).abs() < 1e-12);
        assert!((im.abs() - mag * (40.0 * t).sin()).abs() < 1e-12);
    }
    assert!((v["spectral_radius"].as_f64().unwrap() - mag).abs() < 1e-12);
    // The demo has a [fixed_point] section.
    let fx = &v["fixed_point"];
    for key in [
        "format",
        "state_scale_exponents",
        "state_bounds",
        "error_poles",
        "spectral_radius",
        "max_table_error",
    ] {
        assert!(fx.get(key).is_some(), "fixed_point lacks {key}");
    }
    assert_eq!(fx["format"], "q31");
    for (bound, e) in fx["state_bounds"]
        .as_array()
        .unwrap()
        .iter()
        .zip(fx["state_scale_exponents"].as_array().unwrap())
    {
        assert!(bound.as_f64().unwrap() < 2f64.powi(e.as_i64().unwrap() as i32));
    }
    assert_eq!(fx["error_poles"].as_array().unwrap().len(), 2);
    // f = ad − gain · cd, element by element.
    for i in 0..2 {
        for j in 0..2 {
            let expected = v["ad"][i][j].as_f64().unwrap()
                - v["gain"][i][0].as_f64().unwrap() * v["cd"][0][j].as_f64().unwrap();
            assert!((v["f"][i][j].as_f64().unwrap() - expected).abs() < 1e-15);
        }
    }
}

#[test]
fn kalman_json_reports_the_riccati_solution() {
    let v = json(&["design", DEMO_KALMAN, "--json"]);
    let k = &v["kalman"];
    assert_eq!(k["p"].as_array().unwrap().len(), 2);
    // S = C P Cᵀ + R with C = [1, 0]: S − P₁₁ is the measurement variance.
    let s = k["innovation_covariance"][0][0].as_f64().unwrap();
    assert!(s > k["p"][0][0].as_f64().unwrap());
}

#[test]
fn readable_report_names_the_parts() {
    let out = lookout(&["design", DEMO]);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    for part in [
        "sampled plant",
        "observability   rank 2 of 2",
        "gain L",
        "error dynamics",
        "spectral radius",
        "warnings",
    ] {
        assert!(text.contains(part), "report lacks {part:?}:\n{text}");
    }
}

#[test]
fn emit_is_byte_identical_run_to_run_and_records_its_origin() {
    let (a, b) = (scratch("a.rs"), scratch("b.rs"));
    for path in [&a, &b] {
        let out = lookout(&["emit", DEMO, "-o", path.to_str().unwrap()]);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    let (ta, tb) = (std::fs::read(&a).unwrap(), std::fs::read(&b).unwrap());
    assert_eq!(ta, tb);
    let text = String::from_utf8(ta).unwrap();
    assert!(text.contains(concat!("lookout-design ", env!("CARGO_PKG_VERSION"))));
    assert!(text.contains("model file hash (SHA-256): "));
    assert!(text.contains("pub static PREDICTOR: lookout::PredictorTables<f32, N, M, P>"));
    let f64_text = String::from_utf8(lookout(&["emit", DEMO, "--scalar", "f64"]).stdout).unwrap();
    assert!(f64_text.contains("lookout::FusedTables<f64, N, M, P>"));
}

/// Runs `design` and `emit -o` on `text`; both must fail with exit code 2,
/// one stderr line naming the file and `needle`, empty stdout, no file.
fn refused(file: &str, text: &str, needles: &[&str]) {
    let model = scratch(file);
    std::fs::write(&model, text).unwrap();
    let out_file = scratch(&format!("{file}.rs"));
    let _ = std::fs::remove_file(&out_file);
    for args in [
        vec!["design", model.to_str().unwrap()],
        vec![
            "emit",
            model.to_str().unwrap(),
            "-o",
            out_file.to_str().unwrap(),
        ],
    ] {
        let out = lookout(&args);
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{file}: {stderr}");
        assert!(out.stdout.is_empty(), "{file}: stdout not empty");
        let lines: Vec<&str> = stderr.lines().filter(|l| !l.contains("warning")).collect();
        assert_eq!(
            lines.len(),
            1,
            "{file}: expected one error line, got {stderr}"
        );
        assert!(
            lines[0].contains(file),
            "{file}: error does not name the file: {}",
            lines[0]
        );
        for needle in needles {
            assert!(
                lines[0].contains(needle),
                "{file}: error lacks {needle:?}: {}",
                lines[0]
            );
        }
        assert!(
            !Path::new(&out_file).exists(),
            "{file}: partial output written"
        );
    }
}

#[test]
fn bad_models_are_refused_with_one_clear_line() {
    refused(
        "missing_key.toml",
        &BASE.replace("sample_period = 0.001\n", ""),
        &["sample_period"],
    );
    refused(
        "wrong_size.toml",
        &BASE.replace("b = [[0.0], [80.0]]", "b = [[0.0], [80.0], [1.0]]"),
        &["plant.b"],
    );
    refused(
        "non_finite.toml",
        &BASE.replace("[0.0, -8.0]]", "[0.0, nan]]"),
        &["plant.a"],
    );
    refused(
        "zero_period.toml",
        &BASE.replace("0.001", "0.0"),
        &["sample_period"],
    );
    refused(
        "negative_period.toml",
        &BASE.replace("0.001", "-1e-3"),
        &["sample_period"],
    );
    refused(
        "unknown_form.toml",
        &BASE.replace("\"predictor\"", "\"smoother\""),
        &["observer.form"],
    );
    refused(
        "pole_count.toml",
        &BASE.replace("[{ re = -70.0, im = 40.0 }]", "[-70.0]"),
        &["observer.poles"],
    );
    refused(
        "degenerate_pair.toml",
        &BASE.replace("im = 40.0", "im = 0.0"),
        &["observer.poles"],
    );
    refused(
        "unstable_pole.toml",
        &BASE.replace("re = -70.0", "re = 5.0"),
        &["observer.poles"],
    );
    // The encoder reads speed only: the angle (an integrator) is unobservable.
    refused(
        "unobservable.toml",
        &BASE.replace("c = [[1.0, 0.0]]", "c = [[0.0, 1.0]]"),
        &["observab"],
    );
    // An undamped unobservable mode makes the Kalman problem non-detectable.
    let kalman = BASE
        .replace("c = [[1.0, 0.0]]", "c = [[0.0, 1.0]]")
        .replace(
            "poles = [{ re = -70.0, im = 40.0 }]",
            "[observer.kalman]\nprocess_noise = [[1e-6, 0.0], [0.0, 1e-2]]\nmeasurement_noise = [[1e-6]]",
        );
    refused("undetectable.toml", &kalman, &[]);
    refused(
        "syntax.toml",
        "name = \"x\"\nsample_period = = 1\n",
        &["syntax"],
    );
}

#[test]
fn missing_file_and_bad_options_exit_2() {
    let out = lookout(&["design", "no/such/model.toml"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("model.toml"));
    assert_eq!(lookout(&["design"]).status.code(), Some(2));
    assert_eq!(
        lookout(&["emit", DEMO, "--scalar", "f16"]).status.code(),
        Some(2)
    );
    assert_eq!(lookout(&["frobnicate"]).status.code(), Some(2));
    assert!(lookout(&["--help"]).status.success());
}
