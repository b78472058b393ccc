//! The model texts and the error check the model-error tests share.

#![allow(dead_code)] // each test file uses its own part

use lookout_design::model::{Model, ModelError, ModelErrorKind};

pub const PLANT: &str = "a = [[0.0, 1.0], [0.0, -8.0]]\nb = [[0.0], [80.0]]\nc = [[1.0, 0.0]]\n";
pub const OBSERVER: &str = "form = \"predictor\"\npoles = [-40.0, -45.0]\n";

/// A two-state, one-input, one-output model with the given section bodies.
pub fn model(plant: &str, observer: &str, rest: &str) -> String {
    format!(
        "name = \"conveyor\"\nsample_period = 0.001\n\n[plant]\n{plant}\n[observer]\n{observer}\n{rest}"
    )
}

pub fn parse_err(text: &str) -> ModelError {
    match Model::from_toml_str(text, "test.toml") {
        Ok(m) => panic!("expected an error, got {m:?}\n--- input ---\n{text}"),
        Err(e) => e,
    }
}

#[track_caller]
pub fn check(text: &str, kind: ModelErrorKind, path: &str, words: &[&str]) -> ModelError {
    let e = parse_err(text);
    let shown = e.to_string();
    assert_eq!(e.kind(), kind, "{shown}");
    assert_eq!(e.path(), path, "{shown}");
    assert!(shown.starts_with("test.toml:"), "{shown}");
    assert!(!shown.contains('\n'), "one line: {shown}");
    for w in words {
        assert!(shown.contains(w), "missing {w:?} in: {shown}");
    }
    e
}

pub fn with_plant(plant: &str) -> String {
    model(plant, OBSERVER, "")
}

pub fn with_observer(observer: &str) -> String {
    model(PLANT, observer, "")
}

pub fn with_rest(rest: &str) -> String {
    model(PLANT, OBSERVER, rest)
}

pub const FIXED: &str =
    "[fixed_point]\nformat = \"q31\"\ninput_range = [5.0]\noutput_range = [64.0]\n";
