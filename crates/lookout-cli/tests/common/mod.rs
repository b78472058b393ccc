//! Helpers shared by the integration tests that run the built `lookout`
//! binary. Each test binary uses only some of them.
#![allow(dead_code)]

use serde_json::Value;
use std::path::PathBuf;
use std::process::{Command, Output};

/// Runs the built binary from the CLI crate's folder.
pub fn lookout(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_lookout"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .unwrap()
}

/// A path named `name` in this test process's own temporary folder.
pub fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("lookout-cli-tests-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir.join(name)
}

/// The JSON object a successful run prints.
pub fn json(args: &[&str]) -> Value {
    let out = lookout(args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}
