//! Mesh round trip (issue 5): generated models exported as a VTK mesh plus a model that imports it
//! (`export_mesh`), read back from disk and checked again, give the same K, M and modes, through
//! both the XML `.vtu` and the legacy ASCII `.vtk` file. These are identity checks of our own
//! export and import (no outside reference applies; common practice for file round trips).
//!
//! Why the tolerances are tight: coordinates are written as f64 (base64 of the bytes in `.vtu`,
//! the shortest decimal that reads back to the same double in legacy ASCII), sections and
//! thicknesses are copied as the same f64 values, and every node is written in node order and
//! every element in element order, so the imported structure numbers its DOFs and sums element
//! contributions exactly as the original. K and M are then expected to be bit-identical; the
//! assertion allows 1e-14 of the largest entry (a few ulps, room for a reordered sum only), far
//! below any real change (moving a node by 1 µm or changing a thickness by 0.1 % changes entries
//! by 1e-6 relative or more). The eigensolver is seeded, so the modes of identical matrices agree
//! to the same level; frequencies are compared at 1e-12 and shapes by MAC ≥ 1 − 1e-10.

mod common;

use std::collections::BTreeMap;
use std::path::Path;

use antinode::mesh::{MeshFormat, Model, Structure, export_mesh, load_model, parse_model, validate, validate_in};
use antinode::solver::{AssemblyOptions, System, assemble, write_matrix_market};
use common::lowest;

/// A shell tube (16 around, 12 along) with rigid end fittings, a bearing at the start and a
/// pinned end, a beam-tube stub shaft from the end fitting and a bar (a named section) hanging from
/// the start fitting, a point mass, a spring between two wall nodes and an absorber.
const TUBE_WITH_BEAMS: &str = r#"{
  "title": "round-trip tube",
  "materials": {"al": {"youngs_modulus": 7e10, "poisson_ratio": 0.33, "density": 2700},
                "steel": {"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}},
  "sections": {"bar": {"rectangle": {"width": 0.012, "height": 0.02, "shear_deformation": true}}},
  "lines": [{"name": "arm", "from": [0, 0, 0], "to": [0, 0, -0.15], "elements": 3, "section": "bar", "material": "steel"}],
  "tubes": [{"name": "wall", "length": 0.8, "outer_diameter": 0.08, "wall_thickness": 0.002, "material": "al",
             "fidelity": "shell", "around": 16, "along": 12,
             "segments": [{"to": 0.5}, {"to": 1, "wall_thickness": 0.003}],
             "fittings": {"start": {"mass": 0.2, "axial_inertia": 1e-4, "transverse_inertia": 8e-5},
                          "end": {"mass": 0.3}},
             "ends": {"start": {"bearing": {"ux": 1e7, "uy": 4e6, "uz": 4e6, "rx": 1500}}, "end": "pinned"}},
            {"name": "stub", "length": 0.2, "outer_diameter": 0.03, "wall_thickness": 0.004, "material": "steel",
             "start": [0.8, 0, 0], "along": 4}],
  "point_masses": [{"at": {"tube": "stub", "at": 1}, "mass": 0.5, "inertia": [1e-4, 2e-4, 2e-4]}],
  "springs": [{"at": {"xyz": [0.4, 0, 0.039]}, "to": {"xyz": [0.4, 0, -0.039]}, "stiffness": {"uz": 2e5}}],
  "absorbers": [{"at": {"xyz": [0.4, 0, 0.039]}, "direction": "z", "mass": 0.05, "stiffness": 3e5, "damping": 2}]
}"#;

/// A panel with mixed edges (simply supported, clamped, elastic, free) and two mounts.
const PANEL: &str = r#"{
  "title": "round-trip panel",
  "materials": {"steel": {"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}},
  "panels": [{"name": "lid", "size": [0.6, 0.4], "thickness": 0.0015, "material": "steel", "origin": [0.1, -0.2, 0.05],
              "divisions": [15, 10],
              "edges": {"x0": "simply_supported", "y0": "clamped", "x1": {"elastic": {"uz": 1e6}}},
              "mounts": [{"at": [0.6, 0.4], "stiffness": {"ux": 1e5, "uy": 1e5, "uz": 3e5}}]}],
  "mass_matrix": "lumped"
}"#;

struct Dir(std::path::PathBuf);

impl Dir {
    fn new(tag: &str) -> Self {
        let d = std::env::temp_dir().join(format!("antinode-round-trip-{tag}-{}", std::process::id()));
        std::fs::create_dir_all(&d).unwrap_or_else(|e| panic!("{e}"));
        Self(d)
    }
}

impl Drop for Dir {
    fn drop(&mut self) {
        std::fs::remove_dir_all(&self.0).ok();
    }
}

/// Exports `json`'s structure in `format` into a fresh folder, reads the exported model from disk
/// and checks it there; returns both structures.
fn export_and_import(json: &str, format: MeshFormat, tag: &str) -> (Structure, Structure, Dir) {
    let model: Model = parse_model(json, Path::new("original.json")).unwrap_or_else(|e| panic!("{e}"));
    let original = validate(&model).unwrap_or_else(|e| panic!("{e}"));
    let dir = Dir::new(tag);
    let file = match format {
        MeshFormat::Vtu => "part.vtu",
        MeshFormat::LegacyVtk => "part.vtk",
    };
    let export = export_mesh(&model, &original, file, format).unwrap_or_else(|e| panic!("{e}"));
    std::fs::write(dir.0.join(file), &export.mesh).unwrap_or_else(|e| panic!("{e}"));
    let text = serde_json::to_string_pretty(&export.model).unwrap_or_else(|e| panic!("{e}"));
    let model_path = dir.0.join("part.json");
    std::fs::write(&model_path, text).unwrap_or_else(|e| panic!("{e}"));
    let back = load_model(&model_path).unwrap_or_else(|e| panic!("{e}"));
    let imported = validate_in(&back, &dir.0).unwrap_or_else(|e| panic!("{e}"));
    (original, imported, dir)
}

/// K and M of `system` as (row, column) → value maps of the lower triangle, read back from
/// MatrixMarket files (written with the shortest decimal that reads back exactly).
fn matrices(system: &System, dir: &Path, tag: &str) -> [BTreeMap<(usize, usize), f64>; 2] {
    let k = dir.join(format!("{tag}-K.mtx"));
    let m = dir.join(format!("{tag}-M.mtx"));
    write_matrix_market(system, &k, &m).unwrap_or_else(|e| panic!("{e}"));
    [k, m].map(|p| {
        let text = std::fs::read_to_string(&p).unwrap_or_else(|e| panic!("{e}"));
        let mut out = BTreeMap::new();
        for line in text.lines().filter(|l| !l.starts_with('%')).skip(1) {
            let w: Vec<&str> = line.split_whitespace().collect();
            if w.len() == 3 {
                let parse = |s: &str| s.parse::<usize>().unwrap_or_else(|e| panic!("{e}"));
                let v = w[2].parse::<f64>().unwrap_or_else(|e| panic!("{e}"));
                out.insert((parse(w[0]), parse(w[1])), v);
            }
        }
        out
    })
}

fn assert_same_matrices(a: &System, b: &System, dir: &Path, what: &str) {
    assert_eq!(a.n_dofs(), b.n_dofs(), "{what}: DOF count");
    let ma = matrices(a, dir, "a");
    let mb = matrices(b, dir, "b");
    for (name, x, y) in [("K", &ma[0], &mb[0]), ("M", &ma[1], &mb[1])] {
        let keys_x: Vec<_> = x.keys().collect();
        let keys_y: Vec<_> = y.keys().collect();
        assert!(keys_x == keys_y, "{what}: {name} has a different sparsity pattern");
        let scale = x.values().fold(0.0f64, |s, v| s.max(v.abs()));
        let worst = x.iter().map(|(k, v)| (v - y[k]).abs()).fold(0.0f64, f64::max);
        // Tolerance: see the file's doc comment (identical inputs, identical summation order).
        assert!(worst <= 1e-14 * scale, "{what}: {name} differs by {worst:.3e} (largest entry {scale:.3e})");
    }
}

fn check_round_trip(json: &str, format: MeshFormat, tag: &str, n_modes: usize) {
    let (original, imported, dir) = export_and_import(json, format, tag);
    let what = format!("{tag} ({format:?})");
    assert_eq!(original.nodes.len(), imported.nodes.len(), "{what}: node count");
    for (a, b) in original.nodes.iter().zip(&imported.nodes) {
        assert_eq!(a.id, b.id, "{what}: node ids in order");
        assert!(a.xyz.iter().zip(&b.xyz).all(|(x, y)| x.to_bits() == y.to_bits()), "{what}: node {} moved", a.id);
    }
    assert_eq!(original.beams.len(), imported.beams.len(), "{what}: beams");
    assert_eq!(original.shells.len(), imported.shells.len(), "{what}: shells");
    assert_eq!(original.links, imported.links, "{what}: links");
    assert_eq!(original.fixed, imported.fixed, "{what}: fixed DOFs");
    assert_eq!(original.springs.len(), imported.springs.len(), "{what}: springs");
    for include_absorbers in [false, true] {
        let opts = AssemblyOptions { include_absorbers };
        let a = assemble(&original, opts).unwrap_or_else(|e| panic!("{e}"));
        let b = assemble(&imported, opts).unwrap_or_else(|e| panic!("{e}"));
        assert_same_matrices(&a, &b, &dir.0, &format!("{what}, absorbers {include_absorbers}"));
    }
    let (_, ma) = lowest(&original, n_modes);
    let (_, mb) = lowest(&imported, n_modes);
    for i in 0..n_modes {
        let (fa, fb) = (ma.frequency_hz(i), mb.frequency_hz(i));
        // Identical matrices and a seeded solver (see the file's doc comment).
        assert!((fa - fb).abs() <= 1e-12 * fa.abs().max(1.0), "{what}: mode {} at {fa} Hz vs {fb} Hz", i + 1);
        let (x, y) = (ma.shape(i), mb.shape(i));
        let dot: f64 = x.iter().zip(y).map(|(p, q)| p * q).sum();
        let nx: f64 = x.iter().map(|p| p * p).sum();
        let ny: f64 = y.iter().map(|q| q * q).sum();
        let mac = dot * dot / (nx * ny);
        assert!(mac >= 1.0 - 1e-10, "{what}: mode {} MAC {mac}", i + 1);
    }
}

#[test]
fn shell_tube_with_beams_round_trips_through_vtu() {
    check_round_trip(TUBE_WITH_BEAMS, MeshFormat::Vtu, "tube-vtu", 12);
}

#[test]
fn shell_tube_with_beams_round_trips_through_legacy_vtk() {
    check_round_trip(TUBE_WITH_BEAMS, MeshFormat::LegacyVtk, "tube-vtk", 12);
}

#[test]
fn panel_round_trips_through_vtu() {
    check_round_trip(PANEL, MeshFormat::Vtu, "panel-vtu", 10);
}

#[test]
fn panel_round_trips_through_legacy_vtk() {
    check_round_trip(PANEL, MeshFormat::LegacyVtk, "panel-vtk", 10);
}

#[test]
fn exported_model_uses_mesh_properties_and_named_sections() {
    let (original, imported, _dir) = export_and_import(TUBE_WITH_BEAMS, MeshFormat::Vtu, "props");
    // The bar keeps its named section; the generated tube's section is written as properties.
    assert!(imported.beams.iter().any(|b| b.section_name == "bar"));
    assert!(imported.beams.iter().any(|b| b.section_name == "tube stub"));
    // Two wall thicknesses (the stepped tube), one of each material and section for the beams.
    let thicknesses: std::collections::BTreeSet<u64> = imported.shells.iter().map(|e| e.thickness.to_bits()).collect();
    assert_eq!(thicknesses.len(), 2);
    assert_eq!(imported.meshes.len(), 1);
    assert_eq!(imported.meshes[0].nodes.len(), original.nodes.len());
    assert!((imported.total_mass() - original.total_mass()).abs() <= 1e-12 * original.total_mass());
}

/// The comparison has teeth: the same export with one shell thickness changed by 0.1 % gives K
/// entries that differ by far more than the round-trip tolerance.
#[test]
fn a_changed_thickness_is_seen_by_the_matrix_comparison() {
    let model: Model = parse_model(PANEL, Path::new("original.json")).unwrap_or_else(|e| panic!("{e}"));
    let original = validate(&model).unwrap_or_else(|e| panic!("{e}"));
    let dir = Dir::new("teeth");
    let mut export = export_mesh(&model, &original, "part.vtu", MeshFormat::Vtu).unwrap_or_else(|e| panic!("{e}"));
    std::fs::write(dir.0.join("part.vtu"), &export.mesh).unwrap_or_else(|e| panic!("{e}"));
    for p in export.model.meshes[0].properties.values_mut() {
        if let antinode::mesh::MeshProperty::Shell(s) = p {
            s.thickness *= 1.001;
        }
    }
    let changed = validate_in(&export.model, &dir.0).unwrap_or_else(|e| panic!("{e}"));
    let a = assemble(&original, AssemblyOptions::default()).unwrap_or_else(|e| panic!("{e}"));
    let b = assemble(&changed, AssemblyOptions::default()).unwrap_or_else(|e| panic!("{e}"));
    let [ka, _] = matrices(&a, &dir.0, "a");
    let [kb, _] = matrices(&b, &dir.0, "b");
    let scale = ka.values().fold(0.0f64, |s, v| s.max(v.abs()));
    let worst = ka.iter().map(|(k, v)| (v - kb[k]).abs()).fold(0.0f64, f64::max);
    // Membrane terms grow as t and bending terms as t³, so entries change by 0.1 to 0.3 %; asking for
    // 1e-4 of the largest entry is still 1e10 times the round-trip tolerance.
    assert!(worst > 1e-4 * scale, "a 0.1 % thicker panel changed K by only {worst:.3e} of {scale:.3e}");
}
