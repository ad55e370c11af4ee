//! Absorber kinds through the command line: a ring insert and a lateral absorber designed,
//! written to design.json and evaluated by `respond --verify`; their bad input named by JSON path.

use std::path::Path;
use std::process::Command;

use serde_json::{Value, json};

const BIN: &str = env!("CARGO_BIN_EXE_antinode");

/// An invented thin steel tube on pins at both ends, as shells or beams, with a design request.
fn tube(fidelity: &str, design: Value) -> Value {
    let mut t = json!({"name": "pipe", "length": 1.2, "outer_diameter": 0.1, "wall_thickness": 0.002,
                       "material": "steel", "fidelity": fidelity, "along": 30,
                       "ends": {"start": "pinned", "end": "pinned"}});
    if fidelity == "shell" {
        t["around"] = json!(24);
    }
    json!({
        "title": "Invented scenario: pinned steel tube with absorbers",
        "materials": {"steel": {"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}},
        "tubes": [t],
        "rigid_body_modes": if fidelity == "beam" { 1 } else { 0 },
        "study": {
            "band_hz": [50, 900],
            "max_mode_frequency_hz": 2000,
            "excitation": [{"at": {"tube": "pipe", "at": 0.4}, "direction": [0, 1, 1], "amplitude": 10}],
            "response_points": [{"at": {"tube": "pipe", "at": 0.4}, "direction": "y"},
                                {"at": {"tube": "pipe", "at": 0.4}, "direction": "z"}],
            "absorber_design": design
        }
    })
}

fn run(dir: &Path, args: &[&str]) -> (i32, String, String) {
    let out = Command::new(BIN).current_dir(dir).args(args).output().expect("the binary runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn read(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).expect("file")).expect("JSON")
}

/// Designs `model`, checks design.json runs through `respond --verify`, returns design-result.json
/// and design.json.
fn design_and_respond(model: &Value) -> (Value, Value, String) {
    let dir = tempfile::tempdir().expect("a temporary folder");
    std::fs::write(dir.path().join("model.json"), model.to_string()).expect("model written");
    let (code, stdout, stderr) = run(dir.path(), &["design", "model.json", "--out", "d"]);
    assert_eq!(code, 0, "{stderr}");
    let (code, _, stderr) = run(dir.path(), &["respond", "d/design.json", "--verify", "--out", "r"]);
    assert_eq!(code, 0, "respond of design.json: {stderr}");
    (read(&dir.path().join("d/design-result.json")), read(&dir.path().join("d/design.json")), stdout)
}

#[test]
fn ring_insert_design_writes_its_link_and_warns_about_ovaling_targets() {
    let model = tube(
        "shell",
        json!({"kind": "ring_insert", "mass_each": 0.2, "targets": [1, 3],  "count": 2,
               "candidates": [{"tube": "pipe", "from": 0.1, "to": 0.9}], "directions": ["y", "z"]}),
    );
    let (result, designed, stdout) = design_and_respond(&model);
    assert_eq!(result["kind"], "ring_insert");
    let a = &result["absorbers"][0];
    assert_eq!(a["kind"], "ring_insert");
    let link = a["ring"]["link"].as_str().expect("ring link");
    // design.json carries the averaging link over the ring and the absorber on it.
    let links = designed["links"].as_array().expect("links");
    let l = links.iter().find(|l| l["name"] == link).expect("the ring's link in design.json");
    assert_eq!(l["kind"], "average");
    assert_eq!(l["members"]["nodes"].as_array().map(Vec::len), Some(24), "every node of the ring");
    assert_eq!(designed["absorbers"][0]["at"]["link"], link);
    // Mode 3 is the first n = 2 ovaling mode of this tube: the warning names it and its class.
    let w = result["warnings"].as_array().expect("warnings");
    assert!(
        w.iter().any(|w| w.as_str().is_some_and(|w| w.contains("target mode 3") && w.contains("ovaling"))),
        "{w:?}"
    );
    assert!(stdout.contains("warning: target mode 3"), "{stdout}");
    assert!(stdout.contains("ring insert"), "kind in the table: {stdout}");
}

#[test]
fn lateral_design_is_one_body_with_two_directions() {
    let model = tube(
        "beam",
        json!({"kind": "lateral", "mass_each": 0.2, "targets": [2],
               "candidates": [{"tube": "pipe", "from": 0.1, "to": 0.9}], "directions": ["y", "z"]}),
    );
    let (result, designed, _) = design_and_respond(&model);
    let a = &result["absorbers"][0];
    assert_eq!(a["kind"], "lateral");
    assert_eq!(a["second_direction"], "z");
    // One body: the mass budget counts it once.
    let m = a["mass_kg"].as_f64().expect("mass");
    assert!((result["constraints"]["total_mass_kg"].as_f64().expect("total") - m).abs() < 1e-12);
    assert_eq!(designed["absorbers"].as_array().map(Vec::len), Some(1));
    assert_eq!(designed["absorbers"][0]["second_direction"], "z");
    // Final verification on the full model: the reduced (modal) coupled response against the
    // direct sparse complex solve, the reference of tests/direct_response.rs, within its 1 %.
    let v = &result["verification"];
    let diff = v["max_relative_difference"].as_f64().expect("verification difference");
    assert!(diff < 0.01, "reduced against direct: {diff}");
    assert!(v["points"].as_array().is_some_and(|p| p.len() >= 6), "{v}");
    assert!(v["full_model_modes_hz"].as_array().is_some_and(|m| !m.is_empty()), "{v}");
}

#[test]
fn bad_kinds_name_the_json_path() {
    let cases = [
        (
            tube(
                "beam",
                json!({"kind": "ring_insert", "mass_each": 0.2,
                                "candidates": [{"tube": "pipe"}], "directions": ["y"]}),
            ),
            vec!["study.absorber_design.candidates[0].tube", "meshed as beams", "ring insert needs a wall ring"],
        ),
        (
            tube(
                "beam",
                json!({"kind": "lateral", "mass_each": 0.2,
                                "candidates": [{"tube": "pipe"}], "directions": ["y", [0, 1, 1]]}),
            ),
            vec!["study.absorber_design.directions[1]", "must be perpendicular", "45.000°"],
        ),
        (
            tube(
                "beam",
                json!({"kind": "lateral", "mass_each": 0.2,
                                "candidates": [{"tube": "pipe"}], "directions": ["y"]}),
            ),
            vec!["study.absorber_design.directions", "exactly two perpendicular directions"],
        ),
    ];
    let mut with_absorber =
        tube("beam", json!({"mass_each": 0.2, "candidates": [{"tube": "pipe"}], "directions": ["y"]}));
    with_absorber["absorbers"] = json!([{"at": {"tube": "pipe", "at": 0.5}, "direction": "y", "second_direction": "y",
                                        "mass": 0.1, "stiffness": 1e5, "damping": 10}]);
    let cases =
        cases.into_iter().chain([(with_absorber, vec!["absorbers[0].second_direction", "must be perpendicular"])]);
    for (model, expect) in cases {
        let dir = tempfile::tempdir().expect("a temporary folder");
        std::fs::write(dir.path().join("model.json"), model.to_string()).expect("model written");
        let (code, _, stderr) = run(dir.path(), &["design", "model.json"]);
        assert_eq!(code, 1, "{stderr}");
        for e in expect {
            assert!(stderr.contains(e), "expected {e:?} in: {stderr}");
        }
        assert!(!dir.path().join("out").exists(), "no output left behind");
    }
}
