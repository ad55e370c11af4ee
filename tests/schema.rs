//! The committed JSON Schema of the model file is the one the code generates, and every bundled
//! model loads and validates.

use antinode::mesh::{load_model, model_schema_json, validate_in};

#[test]
fn committed_schema_is_current() {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/docs/model.schema.json");
    let committed = std::fs::read_to_string(path).unwrap_or_default();
    assert!(
        committed == model_schema_json(),
        "docs/model.schema.json is stale: run `cargo run --release -- schema > docs/model.schema.json`"
    );
}

#[test]
fn every_bundled_model_validates() {
    let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/models");
    let mut n = 0;
    for entry in std::fs::read_dir(dir).into_iter().flatten().flatten() {
        let p = entry.path();
        if p.extension().is_some_and(|e| e == "json") {
            let model = load_model(&p).unwrap_or_else(|e| panic!("{e}"));
            assert!(
                model.title.to_lowercase().contains("invented"),
                "{}: title must say the scenario is invented",
                p.display()
            );
            // Mesh files are named relative to the model file.
            validate_in(&model, std::path::Path::new(dir)).unwrap_or_else(|e| panic!("{}: {e}", p.display()));
            n += 1;
        }
    }
    assert!(n >= 2);
}
