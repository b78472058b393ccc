//! Issue 12: `lookout design` never says `warnings none` of tables that lose
//! precision or a form that amplifies rounding, and reports the predicted
//! deviation of every form and format (text and `--json`).

mod common;
use common::lookout;

fn cell() -> String {
    std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../examples/cell.toml"
    ))
    .unwrap()
}

fn scratch(name: &str, text: &str) -> std::path::PathBuf {
    let dir = std::env::temp_dir().join(format!("lookout-formats-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path
}

/// The issue's badly posed cell: slow polarisation modes, error poles far
/// faster, no physical ranges. B rounds to zero in Q31 and the transient
/// grows a thousand-fold; the report must say so.
#[test]
fn issue_12_badly_posed_cell_is_not_warnings_none() {
    let text: String = cell()
        .lines()
        .filter(|l| {
            ![
                "state_range",
                "initial_error",
                "output_noise",
                "deviation_limit",
            ]
            .iter()
            .any(|k| l.starts_with(k))
        })
        .collect::<Vec<_>>()
        .join("\n")
        .replace(
            "[[0.0, 0.0, 0.0], [0.0, -0.5, 0.0], [0.0, 0.0, -0.05]]",
            "[[0.0, 0.0, 0.0], [0.0, -0.03, 0.0], [0.0, 0.0, -0.004]]",
        )
        .replace("[0.005], [0.001]]", "[0.002], [0.0004]]");
    let path = scratch("cell_bad.toml", &text);
    let out = lookout(&["design", path.to_str().unwrap()]);
    assert!(out.status.success());
    let report = String::from_utf8_lossy(&out.stdout);
    assert!(!report.contains("warnings        none"), "{report}");
    assert!(
        report.contains("table b entry (0, 0) loses 100.0 %"),
        "{report}"
    );
    assert!(report.contains("strongly non-normal"), "{report}");
    assert!(report.contains("declaring state_range"), "{report}");
}

#[test]
fn cell_demo_reports_the_format_table_in_text_and_json() {
    let out = lookout(&["design", "../../examples/cell.toml"]);
    assert!(out.status.success());
    let report = String::from_utf8_lossy(&out.stdout);
    assert!(report.contains("scales from the plant"), "{report}");
    assert!(report.contains("predictor q31"), "{report}");
    let out = lookout(&["design", "--json", "../../examples/cell.toml"]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let fx = &v["fixed_point"];
    assert_eq!(fx["scales_from"], "plant");
    let rows = fx["format_accuracy"]["combinations"].as_array().unwrap();
    assert_eq!(rows.len(), 8, "2 forms x 4 formats");
    let q31 = rows
        .iter()
        .find(|r| r["form"] == "predictor" && r["format"] == "q31")
        .unwrap();
    assert_eq!(q31["usable"], true);
    assert_eq!(q31["deviation"].as_array().unwrap().len(), 3);
}

#[test]
fn cell_demo_in_q15_is_refused_naming_the_state_and_what_meets_it() {
    let path = scratch(
        "cell_q15.toml",
        &cell().replace("format = \"q31\"", "format = \"q15\""),
    );
    let out = lookout(&["design", path.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("fixed_point.deviation_limit") && err.contains("soc"),
        "{err}"
    );
    assert!(err.contains("predictor q31"), "{err}");
}

/// A model with disturbance states: the plant proof needs a range for every
/// estimated state and says so (exit 2, no panic); the readings proof judges
/// the disturbance state against its proven peak.
#[test]
fn disturbance_states_get_a_clear_error_or_their_proven_peak() {
    let base = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../examples/conveyor_load.toml"
    ))
    .unwrap();
    let fixed = "\n[fixed_point]\nformat = \"q31\"\ninput_range = [5.0]\noutput_range = [64.0]\nstate_range = [64.0, 300.0]\n";
    let path = scratch("load_plant.toml", &(base.clone() + fixed));
    let out = lookout(&["design", path.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("fixed_point.state_range") && err.contains("3 with the disturbance states"),
        "{err}"
    );
    let path = scratch(
        "load_readings.toml",
        &(base + fixed + "scales_from = \"readings\"\n"),
    );
    let out = lookout(&["design", "--json", path.to_str().unwrap()]);
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(
        v["fixed_point"]["format_accuracy"]["limit"]
            .as_array()
            .unwrap()
            .len(),
        3
    );
}
