//! The README's "Firmware from scratch" shows the template crate
//! `examples/firmware-template` file by file; CI builds and runs that crate.
//! These tests keep the two the same: every fenced block whose info string
//! names a template file (```` ```toml examples/firmware-template/Cargo.toml ````)
//! equals that file byte for byte, and every file of the template (but its
//! Cargo.lock and build output) is shown.

use std::collections::BTreeMap;
use std::fs;
use std::path::Path;

const TEMPLATE: &str = "examples/firmware-template";

/// Files of the template the README need not show: the lock file cargo
/// writes, and the build output.
const NOT_SHOWN: [&str; 2] = ["Cargo.lock", "target"];

/// The README's fenced blocks labelled with a template file: path → text.
/// A block's text is its lines between the fences, each ending in `\n`.
fn labelled_blocks(readme: &str) -> BTreeMap<String, String> {
    let mut blocks = BTreeMap::new();
    let mut open: Option<(String, String)> = None;
    for line in readme.lines() {
        match open.take() {
            Some((path, text)) if line == "```" => {
                let again = blocks.insert(path.clone(), text);
                assert!(again.is_none(), "README.md shows {path} twice");
            }
            Some((path, mut text)) => {
                text.push_str(line);
                text.push('\n');
                open = Some((path, text));
            }
            None => {
                let Some(info) = line.strip_prefix("```") else {
                    continue;
                };
                let label = info.split_whitespace().nth(1).unwrap_or("");
                if label.starts_with(TEMPLATE) {
                    open = Some((label.to_string(), String::new()));
                }
            }
        }
    }
    assert!(open.is_none(), "README.md: a template block is not closed");
    blocks
}

/// Every file under `dir`, as a path from the repository root.
fn files_under(dir: &Path, found: &mut Vec<String>) {
    for entry in fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy();
        if NOT_SHOWN.contains(&name.as_ref()) {
            continue;
        }
        if path.is_dir() {
            files_under(&path, found);
        } else {
            found.push(path.to_string_lossy().replace('\\', "/"));
        }
    }
}

fn readme() -> String {
    fs::read_to_string("README.md").unwrap()
}

#[test]
fn every_template_block_in_the_readme_equals_its_file() {
    let blocks = labelled_blocks(&readme());
    assert!(!blocks.is_empty(), "README.md shows no template file");
    for (path, text) in &blocks {
        let file = fs::read_to_string(path)
            .unwrap_or_else(|e| panic!("README.md shows {path}, which cannot be read: {e}"));
        assert!(
            *text == file,
            "README.md's block for {path} differs from the file (copy the file into the block)"
        );
    }
}

#[test]
fn the_readme_shows_every_template_file() {
    let blocks = labelled_blocks(&readme());
    let mut files = Vec::new();
    files_under(Path::new(TEMPLATE), &mut files);
    files.sort();
    assert!(
        files.len() >= 5,
        "the template has too few files: {files:?}"
    );
    let missing: Vec<&String> = files.iter().filter(|f| !blocks.contains_key(*f)).collect();
    assert!(
        missing.is_empty(),
        "README.md does not show {missing:?} (add a block labelled with each path)"
    );
}
