//! Any bytes as a VTK mesh file (legacy `.vtk` or XML `.vtu`, chosen by the first byte) imported by
//! a model: reading, property mapping, validation and (for small meshes) assembly must either
//! succeed or return an error naming the file; never panic, hang or exhaust memory.

#![no_main]

use std::path::{Path, PathBuf};
use std::sync::OnceLock;

use antinode::mesh::{Limits, parse_model, validate_with};
use antinode::solver::{AssemblyOptions, assemble};
use libfuzzer_sys::fuzz_target;

/// Imported meshes are capped well below the default node limit, so that one input takes
/// milliseconds.
const LIMITS: Limits = Limits { max_nodes: 5000 };

/// Meshes above this many nodes are only read and validated.
const ASSEMBLE_MAX_NODES: usize = 100;

/// A folder of this process for the mesh file.
fn folder() -> &'static Path {
    static DIR: OnceLock<PathBuf> = OnceLock::new();
    DIR.get_or_init(|| {
        let dir = std::env::temp_dir().join(format!("antinode-fuzz-mesh-{}", std::process::id()));
        std::fs::create_dir_all(&dir).expect("a temporary folder for the fuzzed mesh");
        dir
    })
}

/// Property tables: shells first (bit 1 clear) or a beam first (bit 1 set).
const PROPERTIES: [&str; 2] = [
    r#"{"1": {"shell": {"thickness": 0.003, "material": "al"}}, "2": {"shell": {"thickness": 0.004, "material": "al"}},
        "3": {"beam": {"section": "rod", "material": "al"}}}"#,
    r#"{"1": {"beam": {"section": "rod", "material": "al", "orientation": [0, 0, 1]}},
        "2": {"shell": {"thickness": 0.002, "material": "al"}}, "3": {"shell": {"thickness": 0.002, "material": "al"}}}"#,
];

fuzz_target!(|data: &[u8]| {
    let Some((&pick, bytes)) = data.split_first() else { return };
    let file = if pick & 1 == 0 { "mesh.vtk" } else { "mesh.vtu" };
    if std::fs::write(folder().join(file), bytes).is_err() {
        return;
    }
    let model = format!(
        r#"{{"title": "Invented fuzz model", "materials": {{"al": {{"youngs_modulus": 7e10, "poisson_ratio": 0.33, "density": 2700}}}},
            "sections": {{"rod": {{"circle": {{"diameter": 0.01}}}}}},
            "meshes": [{{"name": "m", "file": "{file}", "properties": {}}}]}}"#,
        PROPERTIES[usize::from(pick >> 1 & 1)]
    );
    let Ok(model) = parse_model(&model, Path::new("fuzz.json")) else { return };
    let Ok(structure) = validate_with(&model, folder(), &LIMITS) else { return };
    if structure.nodes.len() <= ASSEMBLE_MAX_NODES {
        let _ = assemble(&structure, AssemblyOptions::default());
    }
});
