//! Helpers shared by the reference tests.
#![allow(dead_code)]

pub mod shells;

use antinode::mesh::{Structure, parse_model, validate};
use antinode::placement::{Design, StudyModel, design};
use antinode::solver::{
    AssemblyOptions, EigenParams, Method, ModalSolution, ModeRequest, System, assemble, solve_modes,
};

/// Parses and validates model JSON; panics with the error (test input is ours).
pub fn structure(json: &str) -> Structure {
    let model = parse_model(json, std::path::Path::new("test.json")).unwrap_or_else(|e| panic!("{e}"));
    validate(&model).unwrap_or_else(|e| panic!("{e}"))
}

/// Assembles without absorbers.
pub fn system(s: &Structure) -> System {
    assemble(s, AssemblyOptions::default()).unwrap_or_else(|e| panic!("{e}"))
}

/// The lowest `n` modes by the sparse (Lanczos) route.
pub fn lowest(s: &Structure, n: usize) -> (System, ModalSolution) {
    let sys = system(s);
    let params = EigenParams { method: Method::Lanczos, ..EigenParams::default() };
    let sol = solve_modes(&sys, ModeRequest::Lowest(n), &params).unwrap_or_else(|e| panic!("{e}"));
    (sys, sol)
}

/// The study model of `json` on its lowest `modes` modes (with residual flexibility).
pub fn study_model(json: &str, modes: usize) -> StudyModel {
    let s = structure(json);
    let sys = system(&s);
    let sol = solve_modes(&sys, ModeRequest::Lowest(modes), &EigenParams::default()).unwrap_or_else(|e| panic!("{e}"));
    let spec = s.study.clone().unwrap_or_else(|| panic!("the model has no study"));
    StudyModel::build(&s, &sys, &sol, &spec, false).unwrap_or_else(|e| panic!("{e}"))
}

/// Relative difference |a − b| / |b|.
pub fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

/// Asserts |a − b| ≤ tol·|b| with a message.
#[track_caller]
pub fn assert_rel(a: f64, b: f64, tol: f64, what: &str) {
    assert!(rel(a, b) <= tol, "{what}: got {a}, expected {b} (relative error {:.3e} > {tol:.1e})", rel(a, b));
}

/// A straight beam model along X with the given section JSON and supports JSON.
pub fn beam_model(section: &str, elements: usize, length: f64, supports: &str, material: &str) -> String {
    format!(
        r#"{{
  "materials": {{"m": {material}}},
  "sections": {{"s": {section}}},
  "lines": [{{"name": "beam", "from": [0, 0, 0], "to": [{length}, 0, 0], "elements": {elements}, "section": "s", "material": "m"}}],
  "supports": {supports}
}}"#
    )
}

/// Steel of the reference sheet's worked examples.
pub const STEEL: &str = r#"{"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}"#;

/// A free-free frame of four tube and bar runs with a point mass (six rigid-body modes).
pub const FREE_FRAME: &str = r#"{
  "materials": {"m": {"youngs_modulus": 7e10, "poisson_ratio": 0.33, "density": 2700}},
  "sections": {"t": {"circular_tube": {"outer_diameter": 0.03, "wall_thickness": 0.002}},
               "r": {"rectangle": {"width": 0.02, "height": 0.008}}},
  "lines": [
    {"name": "a", "from": [0, 0, 0], "to": [0.6, 0, 0], "elements": 8, "section": "t", "material": "m"},
    {"name": "b", "from": [0.6, 0, 0], "to": [0.6, 0.4, 0], "elements": 6, "section": "r", "material": "m"},
    {"name": "c", "from": [0.6, 0.4, 0], "to": [0, 0.4, 0.3], "elements": 8, "section": "t", "material": "m"},
    {"name": "d", "from": [0, 0.4, 0.3], "to": [0, 0, 0], "elements": 6, "section": "r", "material": "m", "orientation": [1, 0, 0]}
  ],
  "point_masses": [{"at": {"line": "b", "at": 0.5}, "mass": 0.3, "inertia": [1e-4, 2e-4, 1e-4]}]
}"#;

/// A model's study run end to end: the modes up to the study's `max_mode_frequency_hz`, the reduced
/// study model (with residual flexibility) and the absorber design of its design block.
pub struct Designed {
    pub structure: Structure,
    pub modes: ModalSolution,
    pub study: StudyModel,
    pub design: Design,
}

/// Solves the study of `json` and designs its absorbers; panics on any error (test input is ours).
pub fn designed(json: &str) -> Designed {
    let s = structure(json);
    let sys = system(&s);
    let study = s.study.clone().unwrap_or_else(|| panic!("study"));
    let sol = solve_modes(
        &sys,
        ModeRequest::Band { low_hz: 0.0, high_hz: study.max_mode_frequency_hz },
        &EigenParams::default(),
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let mut sol = sol;
    antinode::placement::measured::apply_measured(&mut sol, &study.measured_frequencies)
        .unwrap_or_else(|e| panic!("{e}"));
    let sm = StudyModel::build(&s, &sys, &sol, &study, true).unwrap_or_else(|e| panic!("{e}"));
    let spec = study.design.clone().unwrap_or_else(|| panic!("design"));
    let d = design(&sm, &spec, &s).unwrap_or_else(|e| panic!("{e}"));
    Designed { structure: s, modes: sol, study: sm, design: d }
}
