//! The error catalogue (docs/errors.md) against the program: every error class listed there is
//! triggered here through the command line, and the message and exit code are checked. A class in
//! the catalogue without a case here, or a case whose class the catalogue lacks, fails the test.

use std::collections::BTreeSet;
use std::path::Path;
use std::process::Command;

use serde_json::{Value, json};

const BIN: &str = env!("CARGO_BIN_EXE_antinode");

/// Exit code of a reported error; a panic gives 101, a usage error 2.
const ERROR_EXIT_CODE: i32 = 1;

/// A valid invented model: a steel bar on two pins with a study and a design request.
fn base() -> Value {
    json!({
        "title": "Invented error-catalogue model: a steel bar on two pins",
        "materials": {"steel": {"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}},
        "sections": {"bar": {"rectangle": {"width": 0.04, "height": 0.01}}},
        "lines": [{"name": "bar", "from": [0, 0, 0], "to": [1, 0, 0], "elements": 20, "section": "bar", "material": "steel"}],
        "supports": [{"at": {"line": "bar", "at": 0}, "fixed": "pinned"},
                     {"at": {"line": "bar", "at": 1}, "fixed": ["uy", "uz", "rx"]}],
        "study": {
            "band_hz": [10, 200],
            "excitation": [{"at": {"line": "bar", "at": 0.3}, "direction": "y", "amplitude": 1}],
            "response_points": [{"at": {"line": "bar", "at": 0.3}, "direction": "y"}],
            "absorber_design": {"candidates": [{"line": "bar"}], "directions": ["y"], "mass_each": 0.05}
        }
    })
}

/// One catalogue case: the class (a heading of docs/errors.md), the model file's text, the
/// command and the fragments its message must hold.
struct Case {
    class: &'static str,
    model: String,
    command: &'static [&'static str],
    expect: &'static [&'static str],
}

fn edited(edit: impl FnOnce(&mut Value)) -> String {
    let mut m = base();
    edit(&mut m);
    serde_json::to_string_pretty(&m).expect("JSON")
}

fn cases() -> Vec<Case> {
    let check: &'static [&'static str] = &["check", "model.json"];
    vec![
        Case {
            class: "model-unreadable",
            model: String::new(),
            command: &["check", "missing.json"],
            expect: &["cannot read", "missing.json"],
        },
        Case {
            class: "json-syntax",
            model: "{\"materials\": {} ".into(),
            command: check,
            expect: &["model.json", "line 1, column 17", "EOF"],
        },
        Case {
            class: "json-field",
            model: edited(|m| m["nodez"] = json!([])),
            command: check,
            expect: &["at `nodez`", "unknown field `nodez`", "expected one of"],
        },
        Case {
            class: "unknown-name",
            model: edited(|m| m["lines"][0]["section"] = json!("nope")),
            command: check,
            expect: &["lines[0].section", "section \"nope\" is not defined", "(defined: \"bar\")"],
        },
        Case {
            class: "unknown-node",
            model: edited(|m| {
                m["beams"] = json!([{"id": 100, "nodes": [1, 99], "section": "bar", "material": "steel"}])
            }),
            command: check,
            expect: &["beams[0].nodes[1]", "node 99 does not exist"],
        },
        Case {
            class: "duplicate",
            model: edited(|m| m["nodes"] = json!([{"id": 1, "xyz": [0, 1, 0]}, {"id": 1, "xyz": [0, 2, 0]}])),
            command: check,
            expect: &["nodes[1]", "node 1 is defined twice (first at nodes[0])"],
        },
        Case {
            class: "out-of-range",
            model: edited(|m| m["materials"]["steel"]["poisson_ratio"] = json!(0.6)),
            command: check,
            expect: &["materials.steel", "poisson_ratio = 0.6 is not allowed", "between -1 and 0.5"],
        },
        Case {
            class: "zero-length",
            model: edited(|m| {
                m["nodes"] = json!([{"id": 1000, "xyz": [0, 1, 0]}, {"id": 1001, "xyz": [0, 1, 0]}]);
                m["beams"] = json!([{"id": 100, "nodes": [1000, 1001], "section": "bar", "material": "steel"}]);
            }),
            command: check,
            expect: &["beam 100", "zero length"],
        },
        Case {
            class: "orientation-parallel",
            model: edited(|m| m["lines"][0]["orientation"] = json!([1, 0, 0])),
            command: check,
            expect: &["lines[0].orientation", "parallel to the beam axis"],
        },
        Case {
            class: "no-node-near",
            model: edited(|m| m["point_masses"] = json!([{"at": {"xyz": [0.5, 0.3, 0]}, "mass": 1}])),
            command: check,
            expect: &["point_masses[0].at.xyz", "no node lies within", "the nearest (node 11) is 3.000e-1 m away"],
        },
        Case {
            class: "no-mass",
            model: json!({"materials": {}, "nodes": [{"id": 1, "xyz": [0, 0, 0]}],
                          "springs": [{"at": {"node": 1}, "stiffness": {"ux": 1}}]})
            .to_string(),
            command: check,
            expect: &["the model has no mass", "0 kg"],
        },
        Case {
            class: "invalid",
            model: edited(|m| m["regions"] = json!({"far": {"box": [[5, 5, 5], [6, 6, 6]]}})),
            command: check,
            expect: &["regions.far", "selects no node"],
        },
        Case {
            class: "node-limit",
            model: edited(|m| m["lines"][0]["elements"] = json!(300_000_000u64)),
            command: check,
            expect: &["lines[0] (\"bar\").elements", "node limit"],
        },
        Case {
            class: "mesh-file",
            model: edited(|m| {
                m["meshes"] = json!([{"name": "m", "file": "absent.vtk",
                                      "properties": {"1": {"shell": {"thickness": 0.002, "material": "steel"}}}}])
            }),
            command: check,
            expect: &["absent.vtk"],
        },
        Case {
            class: "no-free-dofs",
            model: edited(|m| {
                m["regions"] = json!({"all": {"box": [[-1, -1, -1], [2, 1, 1]]}});
                m["supports"] = json!([{"at": {"region": "all"}, "fixed": "clamped"}]);
                if let Some(o) = m.as_object_mut() {
                    o.remove("study");
                }
            }),
            command: check,
            expect: &["no free degree of freedom"],
        },
        Case {
            class: "mechanism",
            model: edited(|m| m["supports"][1]["fixed"] = json!(["uy", "uz"])),
            command: check,
            expect: &["can move without straining in 1 independent way(s) where 0 expected", "node 21 rx"],
        },
        Case {
            class: "massless-dof",
            model: edited(|m| {
                m["nodes"] = json!([{"id": 500, "xyz": [0.5, 0.5, 0]}]);
                m["springs"] =
                    json!([{"at": {"node": 500}, "to": {"line": "bar", "at": 0.5}, "stiffness": {"ux": 1e5}}]);
                m["supports"]
                    .as_array_mut()
                    .expect("supports")
                    .push(json!({"at": {"node": 500}, "fixed": ["uy", "uz", "rx", "ry", "rz"]}));
            }),
            command: check,
            expect: &["have stiffness but no mass", "node 500"],
        },
        Case {
            class: "mode-request",
            model: edited(|_| {}),
            command: &["modes", "model.json", "--count", "0"],
            expect: &["zero modes requested"],
        },
        Case {
            class: "memory-limit",
            model: edited(|_| {}),
            command: &["--memory-limit", "1e-6", "modes", "model.json", "--count", "4"],
            expect: &[
                "model.json is too large for this machine",
                "the eigen solution would need about",
                "2 factors of",
                "the limit given by --memory-limit is 0.000 GiB",
                "coarsen the mesh",
                "fewer modes",
            ],
        },
        Case {
            class: "not-finite",
            model: edited(|m| {
                m["sections"]["bar"] = json!({"properties": {"area": 1e300, "second_moment_y": 1e-9,
                                               "second_moment_z": 1e-9, "torsion_constant": 1e-9}})
            }),
            command: check,
            expect: &["non-finite value in the matrices of", "bar"],
        },
        Case {
            class: "matrix-file",
            model: "x\n".into(),
            command: &["modes", "--stiffness", "model.json", "--mass", "model.json"],
            expect: &["model.json", "not a readable real MatrixMarket coordinate file"],
        },
        Case {
            class: "no-study",
            model: edited(|m| {
                if let Some(o) = m.as_object_mut() {
                    o.remove("study");
                }
            }),
            command: &["design", "model.json"],
            expect: &["model.json", "no study block"],
        },
        Case {
            class: "design-request",
            model: edited(|m| m["study"]["absorber_design"]["targets"] = json!([50])),
            command: &["design", "model.json"],
            expect: &["absorber design", "target mode 50 is not among the", "computed modes"],
        },
        Case {
            class: "measured-frequency",
            model: edited(|m| m["study"]["measured_frequencies"] = json!([{"mode": 1, "frequency_hz": 1e4}])),
            command: &["respond", "model.json"],
            expect: &["study.measured_frequencies", "falls below mode 1", "mode order differs"],
        },
        Case {
            class: "absorber-kind",
            model: edited(|m| m["study"]["absorber_design"]["kind"] = json!("ring_insert")),
            command: check,
            expect: &["study.absorber_design.candidates[0]", "ring inserts", "sit in rings of a shell tube"],
        },
        Case {
            class: "output-folder",
            model: edited(|_| {}),
            command: &["modes", "model.json", "--out", "model.json"],
            expect: &["cannot create output folder model.json"],
        },
        Case {
            class: "output-exists",
            model: edited(|_| {}),
            command: &["modes", "model.json", "--count", "2", "--out", "."],
            expect: &["exists and", "holds no earlier antinode results", "--force"],
        },
        Case {
            class: "file-exists",
            model: edited(|_| {}),
            command: &["init", "beam", "--out", "model.json"],
            expect: &["model.json already exists"],
        },
    ]
}

/// The classes of docs/errors.md: its level-3 headings of the form "### `class`".
fn catalogue() -> BTreeSet<String> {
    let doc = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("../docs/errors.md"))
        .expect("docs/errors.md");
    doc.lines()
        .filter_map(|l| l.strip_prefix("### `"))
        .filter_map(|l| l.split('`').next())
        .map(str::to_string)
        .collect()
}

#[test]
fn every_catalogued_error_is_triggered_with_its_message_and_exit_code() {
    let cases = cases();
    let tested: BTreeSet<String> = cases.iter().map(|c| c.class.to_string()).collect();
    let documented = catalogue();
    assert_eq!(tested.len(), cases.len(), "one case per class");
    let undocumented: Vec<_> = tested.difference(&documented).collect();
    let untested: Vec<_> = documented.difference(&tested).collect();
    assert!(undocumented.is_empty(), "classes tested but missing from docs/errors.md: {undocumented:?}");
    assert!(untested.is_empty(), "classes in docs/errors.md without a case here: {untested:?}");
    for case in &cases {
        let dir = tempfile::tempdir().expect("a temporary folder");
        if !case.model.is_empty() {
            std::fs::write(dir.path().join("model.json"), &case.model).expect("model written");
        }
        if case.class == "output-exists" {
            // A file of someone else's where `modes` would write its table.
            std::fs::write(dir.path().join("modes.json"), "not antinode's").expect("file written");
        }
        let out = Command::new(BIN).current_dir(dir.path()).args(case.command).output().expect("the binary runs");
        let stderr = String::from_utf8_lossy(&out.stderr);
        let what = format!("{} ({:?}):\n{stderr}", case.class, case.command);
        assert_eq!(out.status.code(), Some(ERROR_EXIT_CODE), "exit code of {what}");
        assert!(!stderr.contains("panicked"), "panic in {what}");
        assert!(stderr.starts_with("error: "), "message of {what}");
        for e in case.expect {
            assert!(stderr.contains(e), "{what}\nlacks {e:?}");
        }
        // No output folder is left behind by a failed command.
        assert!(!dir.path().join("out").exists(), "out/ left behind by {what}");
    }
}

/// The panel-stiffener checks (classes `invalid` and `unknown-name`): each message names the
/// stiffener's JSON path and what is allowed.
#[test]
fn stiffener_errors_name_their_json_path() {
    let with = |stiffener: Value| {
        edited(|m| {
            m["panels"] = json!([{"name": "lid", "size": [0.4, 0.2], "thickness": 0.002, "material": "steel",
                                   "origin": [0, 1, 0], "divisions": [4, 2], "stiffeners": [stiffener]}]);
        })
    };
    let at = "panels[0] (\"lid\").stiffeners[0]";
    let cases: [(Value, &[&str]); 5] = [
        (
            json!({"from": [0, 0.1], "to": [0.5, 0.1], "section": "bar", "material": "steel"}),
            &[".to", "[0.5, 0.1] lies outside the panel", "0 <= u <= 0.4"],
        ),
        (
            json!({"from": [0.1, 0.1], "to": [0.1, 0.1], "section": "bar", "material": "steel"}),
            &["zero length", "give two different panel points"],
        ),
        (
            json!({"from": [0, 0], "to": [0.4, 0.2], "section": "bar", "material": "steel"}),
            &["runs diagonally", "parallel to an edge"],
        ),
        (
            json!({"from": [0, 0.1], "to": [0.4, 0.1], "section": "nope", "material": "steel"}),
            &[".section", "section \"nope\" is not defined"],
        ),
        (
            json!({"from": [0, 0.1], "to": [0.4, 0.1], "section": "bar", "material": "wood"}),
            &[".material", "material \"wood\" is not defined"],
        ),
    ];
    for (stiffener, expect) in cases {
        let dir = tempfile::tempdir().expect("a temporary folder");
        std::fs::write(dir.path().join("model.json"), with(stiffener.clone())).expect("model written");
        let out = Command::new(BIN).current_dir(dir.path()).args(["check", "model.json"]).output().expect("runs");
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(ERROR_EXIT_CODE), "{stiffener}: {stderr}");
        assert!(stderr.starts_with("error: ") && stderr.contains(at), "{stiffener}: {stderr}");
        for e in expect {
            assert!(stderr.contains(e), "{stiffener}: {stderr}\nlacks {e:?}");
        }
    }
}
