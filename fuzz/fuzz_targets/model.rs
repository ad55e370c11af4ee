//! Any bytes as a model file: reading, validation and (for small models) assembly and the
//! zero-energy check must either succeed or return an error; never panic, hang or exhaust memory.

#![no_main]

use std::path::Path;

use antinode::mesh::{Limits, parse_model, validate_with};
use antinode::solver::{AssemblyOptions, assemble, check_zero_energy};
use libfuzzer_sys::fuzz_target;

/// Generated parts are capped well below the default limit, so that one input takes
/// milliseconds (the default limit itself is unit-tested in the mesh crate).
const LIMITS: Limits = Limits { max_nodes: 5000 };

/// Models above this many nodes are only read and validated (assembly time would hide the
/// parser and validator from the fuzzer).
const ASSEMBLE_MAX_NODES: usize = 400;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let Ok(model) = parse_model(text, Path::new("fuzz.json")) else { return };
    let Ok(structure) = validate_with(&model, Path::new(""), &LIMITS) else { return };
    if structure.nodes.len() > ASSEMBLE_MAX_NODES {
        return;
    }
    for include_absorbers in [false, true] {
        if let Ok(system) = assemble(&structure, AssemblyOptions { include_absorbers }) {
            let _ = check_zero_energy(&structure, &system);
        }
    }
});
