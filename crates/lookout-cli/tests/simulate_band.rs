//! One value per concept: the verdict band of `lookout simulate` rests on
//! the very deviation bound `lookout design --json` reports
//! (`fixed_point.format_accuracy`), for the form simulate runs.
//!
//! Checked against: the design command's own output (a different command
//! path over the same model), and the band's stated composition (docs/
//! simulate.md): with noise k·σ + deviation, without the f64 residual plus
//! the f64 and the format's deviation; either way the Q31 band minus the f64
//! band is the Q31 deviation minus the f64 one.

use serde_json::Value;
use std::process::Command;

const CELL: &str = "../../examples/cell.toml";

fn json(args: &[&str]) -> Value {
    let out = Command::new(env!("CARGO_BIN_EXE_lookout"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn numbers(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap_or_else(|| panic!("not an array: {v}"))
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

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

fn format<'a>(v: &'a Value, name: &str) -> &'a Value {
    v["formats"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["format"] == name)
        .unwrap_or_else(|| panic!("no {name} run"))
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
        assert_eq!(numbers(&f["deviation_bound"]), f64_dev, "{extra:?}");
        let (bf, bq) = (numbers(&f["band"]), numbers(&q["band"]));
        for i in 0..q31.len() {
            // Both bands share their first term; the difference is formed
            // with two roundings of about ε·band each (k = 4).
            let want = q31[i] - f64_dev[i];
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
