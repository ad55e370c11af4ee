//! Determinism: the same command on the same model writes the same files whatever the number of
//! threads. Every file a run writes is compared byte for byte between a run on one thread and a
//! run on two; the only values allowed to differ are wall-clock times (JSON members whose name
//! ends in `_seconds`), which are set to zero in both before the comparison.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;

use serde_json::Value;

const BIN: &str = env!("CARGO_BIN_EXE_antinode");

fn model(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../models").join(name)
}

/// Runs `antinode args... --out out --threads N` in a fresh folder; returns every file
/// written under `out/`, by relative name.
fn run(args: &[&str], threads: usize) -> BTreeMap<String, Vec<u8>> {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let out = Command::new(BIN)
        .current_dir(dir.path())
        .args(args)
        .args(["--out", "out", "--threads", &threads.to_string()])
        .output()
        .expect("the antinode binary runs");
    assert!(out.status.success(), "{args:?} on {threads} thread(s) failed:\n{}", String::from_utf8_lossy(&out.stderr));
    let mut files = BTreeMap::new();
    collect(&dir.path().join("out"), Path::new(""), &mut files);
    assert!(!files.is_empty(), "{args:?} wrote no file");
    files
}

fn collect(dir: &Path, rel: &Path, files: &mut BTreeMap<String, Vec<u8>>) {
    let entries = std::fs::read_dir(dir).unwrap_or_else(|e| panic!("{}: {e}", dir.display()));
    for entry in entries {
        let entry = entry.expect("a folder entry");
        let path = entry.path();
        let name = rel.join(entry.file_name());
        if path.is_dir() {
            collect(&path, &name, files);
        } else {
            let bytes = std::fs::read(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
            files.insert(name.to_string_lossy().into_owned(), bytes);
        }
    }
}

/// A JSON file with its wall-clock times set to zero; other files as they are.
fn without_times(name: &str, bytes: &[u8]) -> Vec<u8> {
    if !name.ends_with(".json") {
        return bytes.to_vec();
    }
    let mut v: Value = serde_json::from_slice(bytes).unwrap_or_else(|e| panic!("{name} is not JSON: {e}"));
    zero_times(&mut v);
    serde_json::to_vec(&v).expect("JSON")
}

fn zero_times(v: &mut Value) {
    match v {
        Value::Object(map) => {
            for (k, x) in map.iter_mut() {
                if k.ends_with("_seconds") && x.is_number() {
                    *x = Value::from(0);
                } else {
                    zero_times(x);
                }
            }
        }
        Value::Array(items) => items.iter_mut().for_each(zero_times),
        _ => {}
    }
}

fn assert_same_on_one_and_two_threads(args: &[&str]) {
    let one = run(args, 1);
    let two = run(args, 2);
    assert_eq!(one.keys().collect::<Vec<_>>(), two.keys().collect::<Vec<_>>(), "{args:?}: files written");
    for (name, a) in &one {
        let b = &two[name];
        assert!(without_times(name, a) == without_times(name, b), "{args:?}: {name} differs between 1 and 2 threads");
    }
}

#[test]
fn modes_of_a_shell_tube_are_identical_on_one_and_two_threads() {
    let m = model("gantry-boom.json");
    assert_same_on_one_and_two_threads(&["modes", m.to_str().expect("UTF-8 path")]);
}

#[test]
fn design_and_response_are_identical_on_one_and_two_threads() {
    let m = model("fan-shaft.json");
    let m = m.to_str().expect("UTF-8 path");
    assert_same_on_one_and_two_threads(&["design", m]);
    assert_same_on_one_and_two_threads(&["respond", m]);
}

#[test]
fn a_panel_design_is_identical_on_one_and_two_threads() {
    let m = model("enclosure-panel.json");
    assert_same_on_one_and_two_threads(&["design", m.to_str().expect("UTF-8 path")]);
}
