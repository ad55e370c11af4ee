//! Resource and numerical guards through the program: the memory estimate (reported by `check` and
//! in modes.json, and a model refused under `--memory-limit`), and the ill-conditioning warnings of
//! `check` and `modes` (stiffness ratio extremes, rigid springs, tiny masses).

use std::path::Path;
use std::process::Command;

use serde_json::{Value, json};

const BIN: &str = env!("CARGO_BIN_EXE_antinode");

/// An invented model: an aluminium tube on two pins with a stub carrying a point mass.
fn base() -> Value {
    json!({
        "title": "Invented guard-test model: aluminium tube on two pins with a stub carrying a mass",
        "materials": {"al": {"youngs_modulus": 7.0e10, "poisson_ratio": 0.33, "density": 2700}},
        "sections": {
            "tube": {"circular_tube": {"outer_diameter": 0.05, "wall_thickness": 0.002}},
            "bar": {"rectangle": {"width": 0.02, "height": 0.01}}
        },
        "nodes": [{"id": 1, "xyz": [0.5, 0, 0]}, {"id": 2, "xyz": [0.5, 0, 0.1]}],
        "lines": [{"name": "shaft", "from": [0, 0, 0], "to": [1, 0, 0], "elements": 10,
                   "section": "tube", "material": "al"}],
        "beams": [{"id": 1, "nodes": [1, 2], "section": "bar", "material": "al"}],
        "supports": [{"at": {"line": "shaft", "at": 0.0}, "fixed": ["ux", "uy", "uz", "rx"]},
                     {"at": {"line": "shaft", "at": 1.0}, "fixed": ["uy", "uz"]}],
        "point_masses": [{"at": {"node": 2}, "mass": 0.1}]
    })
}

struct Run {
    code: Option<i32>,
    stdout: String,
    stderr: String,
}

fn run(dir: &Path, args: &[&str]) -> Run {
    let out = Command::new(BIN).current_dir(dir).args(args).output().expect("the binary runs");
    Run {
        code: out.status.code(),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

/// Writes `model` as model.json in a fresh folder and runs `check --json` on it.
fn check_json(model: &Value) -> Value {
    let dir = tempfile::tempdir().expect("a temporary folder");
    std::fs::write(dir.path().join("model.json"), model.to_string()).expect("model written");
    let r = run(dir.path(), &["check", "model.json", "--json"]);
    assert_eq!(r.code, Some(0), "check failed:\n{}", r.stderr);
    serde_json::from_str(&r.stdout).expect("JSON report")
}

fn warnings(report: &Value) -> Vec<String> {
    report["warnings"]
        .as_array()
        .expect("a warnings list")
        .iter()
        .map(|w| w.as_str().expect("text").to_string())
        .collect()
}

fn bytes(v: &Value, field: &str) -> u64 {
    v[field].as_u64().unwrap_or_else(|| panic!("{field} is not an integer in {v}"))
}

/// `check` and modes.json report the estimate with its parts, which add up (the parts' formulas
/// are solver/src/memory.rs; their agreement with the factor actually made is its unit test).
#[test]
fn the_memory_estimate_is_reported() {
    let report = check_json(&base());
    let m = &report["memory_estimate"];
    assert_eq!(bytes(&report, "memory_estimate_bytes"), bytes(m, "total_bytes"));
    let n = bytes(m, "n_dofs");
    assert_eq!(n, bytes(&report, "free_dofs"));
    assert_eq!(
        bytes(m, "total_bytes"),
        bytes(m, "matrices_bytes") + bytes(m, "factors_alive") * bytes(m, "factor_bytes") + bytes(m, "vectors_bytes")
    );
    assert_eq!(bytes(m, "factors_alive"), 2);
    // One factor holds at least the lower triangle's diagonal: n values of 8 bytes.
    assert!(bytes(m, "factor_values") >= n && bytes(m, "factor_bytes") >= 8 * n);
    assert_eq!(bytes(m, "modes"), 20, "check assumes the default mode count");

    let dir = tempfile::tempdir().expect("a temporary folder");
    std::fs::write(dir.path().join("model.json"), base().to_string()).expect("model written");
    let r = run(dir.path(), &["modes", "model.json", "--count", "6", "--out", "out"]);
    assert_eq!(r.code, Some(0), "modes failed:\n{}", r.stderr);
    let text = std::fs::read_to_string(dir.path().join("out/modes.json")).expect("modes.json");
    let j: Value = serde_json::from_str(&text).expect("JSON");
    assert_eq!(bytes(&j, "memory_estimate_bytes"), bytes(&j["memory_estimate"], "total_bytes"));
    assert_eq!(bytes(&j["memory_estimate"], "modes"), 6, "the estimate is made for the count asked for");
    assert!(bytes(&j, "memory_estimate_bytes") < bytes(m, "total_bytes"), "fewer modes, fewer vectors");
}

/// A limit below the estimate refuses the model before anything is factorized or written, for each
/// command that solves; a generous limit lets it through.
#[test]
fn a_memory_limit_below_the_estimate_refuses_the_model() {
    let mut model = base();
    model["study"] = json!({
        "band_hz": [20, 400],
        "excitation": [{"at": {"line": "shaft", "at": 0.3}, "direction": "z", "amplitude": 1.0}],
        "response_points": [{"at": {"line": "shaft", "at": 0.3}, "direction": "z"}],
        "absorber_design": {"count": 1, "mass_each": 0.05,
                            "candidates": [{"line": "shaft", "from": 0.1, "to": 0.9}], "directions": ["z"]}
    });
    let commands: [&[&str]; 4] = [
        &["check", "model.json"],
        &["modes", "model.json", "--out", "out"],
        &["design", "model.json", "--out", "out"],
        &["respond", "model.json", "--out", "out"],
    ];
    for command in commands {
        let dir = tempfile::tempdir().expect("a temporary folder");
        std::fs::write(dir.path().join("model.json"), model.to_string()).expect("model written");
        let mut args = vec!["--memory-limit", "0.00001"];
        args.extend_from_slice(command);
        let r = run(dir.path(), &args);
        let what = format!("{command:?}:\n{}", r.stderr);
        assert_eq!(r.code, Some(1), "exit code of {what}");
        assert!(!r.stderr.contains("panicked"), "{what}");
        for fragment in [
            "error: model.json is too large for this machine",
            "would need about",
            "K and M",
            "2 factors of",
            "the limit given by --memory-limit is 0.000 GiB",
            "coarsen the mesh",
        ] {
            assert!(r.stderr.contains(fragment), "{what}\nlacks {fragment:?}");
        }
        assert!(!dir.path().join("out").exists(), "no output folder is left: {what}");
        let mut args = vec!["--memory-limit", "64"];
        args.extend_from_slice(command);
        let r = run(dir.path(), &args);
        assert_eq!(r.code, Some(0), "under a 64 GiB limit {command:?} runs:\n{}", r.stderr);
    }
    let dir = tempfile::tempdir().expect("a temporary folder");
    let r = run(dir.path(), &["--memory-limit=-1", "check", "model.json"]);
    assert_eq!(r.code, Some(2), "a negative limit is a usage error:\n{}", r.stderr);
    assert!(r.stderr.contains("is not a memory size"), "{}", r.stderr);
}

fn has(ws: &[String], fragments: &[&str]) -> bool {
    ws.iter().any(|w| fragments.iter().all(|f| w.contains(f)))
}

const CONDITIONING: [&str; 3] = ["ill-conditioned stiffness", "rigid spring", "tiny mass"];

/// The base model has none of the warnings; a spring of 1e20 N/m to ground on the tube is a rigid
/// spring (the tube's own uz stiffness there is about 2 · 12EI/L³ ≈ 1.6e8 N/m, so the ratio is
/// about 6e11, above 1e8) and stretches K's translational diagonal beyond 1e12; a spring of 1e6 N/m
/// is neither. Thresholds are common practice (solver/src/conditioning.rs).
#[test]
fn rigid_springs_and_stiffness_extremes_are_warned() {
    let ws = warnings(&check_json(&base()));
    assert!(!ws.iter().any(|w| CONDITIONING.iter().any(|c| w.starts_with(c))), "{ws:?}");

    let mut stiff = base();
    stiff["springs"] = json!([{"at": {"node": 1}, "stiffness": {"uz": 1e20}}]);
    let ws = warnings(&check_json(&stiff));
    assert!(has(&ws, &["rigid spring: springs[0] uz = 1.000e20", "at node 1", "use a support"]), "{ws:?}");
    assert!(has(&ws, &["ill-conditioned stiffness: the translational stiffnesses", "at node 1 uz"]), "{ws:?}");

    let mut soft = base();
    soft["springs"] = json!([{"at": {"node": 1}, "stiffness": {"uz": 1e6}}]);
    let ws = warnings(&check_json(&soft));
    assert!(!ws.iter().any(|w| CONDITIONING.iter().any(|c| w.starts_with(c))), "{ws:?}");

    // `modes` gives the same warnings, in modes.json and on standard output.
    let dir = tempfile::tempdir().expect("a temporary folder");
    std::fs::write(dir.path().join("model.json"), stiff.to_string()).expect("model written");
    let r = run(dir.path(), &["modes", "model.json", "--count", "4", "--out", "out"]);
    assert_eq!(r.code, Some(0), "modes failed:\n{}", r.stderr);
    assert!(r.stdout.contains("rigid spring: springs[0] uz"), "{}", r.stdout);
    let j: Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("out/modes.json")).expect("modes.json"))
            .expect("JSON");
    assert!(has(&warnings(&j), &["rigid spring: springs[0] uz"]), "{j}");
}

/// A point mass of 1e-12 kg on a model of about 0.9 kg is below 1e-9 of the total (common
/// practice threshold) and is named; 1e-6 kg is not.
#[test]
fn tiny_masses_are_warned() {
    let mut tiny = base();
    tiny["point_masses"].as_array_mut().expect("list").push(json!({"at": {"node": 1}, "mass": 1e-12}));
    let ws = warnings(&check_json(&tiny));
    assert!(
        has(&ws, &["tiny mass: a point mass is below 1e-9 of the total mass", "point_masses[1] at node 1"]),
        "{ws:?}"
    );
    let mut small = base();
    small["point_masses"].as_array_mut().expect("list").push(json!({"at": {"node": 1}, "mass": 1e-6}));
    let ws = warnings(&check_json(&small));
    assert!(!has(&ws, &["tiny mass"]), "{ws:?}");
}
