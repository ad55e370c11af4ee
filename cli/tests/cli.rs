//! Integration tests of the `antinode` program: each test runs the built binary in its own
//! temporary folder and checks the JSON contract of the commands (README, "Stable JSON fields"),
//! the files they write, and that bad input ends with a non-zero exit code, a message naming the
//! item, field and what is wrong, and no output left behind.

use std::collections::BTreeSet;
use std::ffi::OsStr;
use std::path::{Path, PathBuf};
use std::process::Command;

use serde_json::{Value, json};
use tempfile::TempDir;

/// The binary under test.
const BIN: &str = env!("CARGO_BIN_EXE_antinode");

/// Exit code of `main` on a reported error (`ExitCode::FAILURE`); a panic gives 101, a clap usage
/// error 2.
const ERROR_EXIT_CODE: i32 = 1;

/// What a run of the program produced.
struct Run {
    code: Option<i32>,
    stdout: String,
    stderr: String,
}

impl Run {
    /// Standard output parsed as JSON; fails the test with both streams otherwise.
    fn json(&self) -> Value {
        serde_json::from_str(&self.stdout).unwrap_or_else(|e| {
            panic!("stdout is not JSON ({e}):\n--- stdout\n{}\n--- stderr\n{}", self.stdout, self.stderr)
        })
    }

    /// Fails the test unless the run succeeded.
    fn assert_success(&self, what: &str) {
        assert_eq!(self.code, Some(0), "{what} failed:\n--- stdout\n{}\n--- stderr\n{}", self.stdout, self.stderr);
    }
}

/// Runs `antinode args...` with `dir` as the working folder (so a default `out/` would land there).
fn antinode<I, S>(dir: &Path, args: I) -> Run
where
    I: IntoIterator<Item = S>,
    S: AsRef<OsStr>,
{
    let out = Command::new(BIN).current_dir(dir).args(args).output().expect("the antinode binary runs");
    Run {
        code: out.status.code(),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

fn temp() -> TempDir {
    tempfile::tempdir().expect("a temporary folder")
}

/// A bundled example model, by file name.
fn example(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../models").join(name)
}

/// Names of the entries of a folder (empty if it does not exist).
/// The files in `dir`, except the marker of a folder holding antinode results.
fn entries(dir: &Path) -> BTreeSet<String> {
    std::fs::read_dir(dir)
        .into_iter()
        .flatten()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n != OUTPUT_MARKER)
        .collect()
}

/// Marks an output folder as antinode's (cli/src/pipeline.rs).
const OUTPUT_MARKER: &str = ".antinode-outputs";

fn set(names: &[&str]) -> BTreeSet<String> {
    names.iter().map(|s| s.to_string()).collect()
}

/// The number at `v`, failing the test with `what` if it is missing or not a number.
fn num(v: &Value, what: &str) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("{what} is missing or not a number: {v}"))
}

/// Asserts that `dir` holds exactly `names`, each a non-empty file.
fn assert_files(dir: &Path, names: &[&str]) {
    assert_eq!(entries(dir), set(names), "files in {} (no temporary or extra files expected)", dir.display());
    for n in names {
        let len = std::fs::metadata(dir.join(n)).map(|m| m.len()).unwrap_or(0);
        assert!(len > 0, "{} is empty", dir.join(n).display());
    }
}

// ---------------------------------------------------------------------------------------------
// Happy path on the bundled examples
// ---------------------------------------------------------------------------------------------

/// `check --json`: counts and mass of a valid model.
fn check_example(dir: &Path, model: &Path) {
    let r = antinode(dir, [OsStr::new("check"), model.as_os_str(), "--json".as_ref()]);
    r.assert_success("check");
    let j = r.json();
    assert!(num(&j["total_mass_kg"], "check: total_mass_kg") > 0.0);
    assert!(j["nodes"].as_u64().is_some_and(|n| n > 0), "check: nodes");
    assert!(j["free_dofs"].as_u64().is_some_and(|n| n > 0), "check: free_dofs");
    assert_eq!(j["zero_energy_modes"].as_u64(), Some(0), "check: held model");
    assert!(j["warnings"].is_array(), "check: warnings");
    assert!(entries(dir).is_empty(), "check writes no file");
}

/// `modes --count 8 --json --out`: the contract fields and the files.
fn modes_example(dir: &Path, model: &Path) {
    let out = dir.join("modes-out");
    let r = antinode(
        dir,
        [
            OsStr::new("modes"),
            model.as_os_str(),
            "--count".as_ref(),
            "8".as_ref(),
            "--json".as_ref(),
            "--out".as_ref(),
            out.as_os_str(),
        ],
    );
    r.assert_success("modes");
    let j = r.json();
    assert!(num(&j["total_mass_kg"], "modes: total_mass_kg") > 0.0);
    let modes = j["modes"].as_array().expect("modes: modes[] is an array");
    assert_eq!(modes.len(), 8, "modes --count 8 gives 8 modes");
    let mut previous = 0.0;
    for (i, m) in modes.iter().enumerate() {
        assert_eq!(m["number"].as_u64(), Some(i as u64 + 1), "modes[{i}].number");
        let f = num(&m["frequency_hz"], "modes[].frequency_hz");
        assert!(f > 0.0, "modes[{i}].frequency_hz = {f} (the examples are held)");
        // Non-strict: the round shafts have pairs of equal bending frequencies.
        assert!(f >= previous, "modes[{i}].frequency_hz = {f} < {previous}");
        previous = f;
        for d in ["x", "y", "z"] {
            let e = num(&m["effective_mass_fraction"][d], "modes[].effective_mass_fraction");
            assert!((0.0..=1.0).contains(&e), "modes[{i}].effective_mass_fraction.{d} = {e}");
        }
    }
    let sturm = &j["sturm_check"];
    assert!(sturm.is_object(), "modes: sturm_check is an object: {sturm}");
    assert_eq!(sturm["passed"].as_bool(), Some(true), "sturm_check: {sturm}");
    let mut files = vec!["modes.json", "modes.csv", "modes.vtu", "modes.svg", "mac.svg"];
    if model.ends_with("gantry-boom.json") {
        // A tube model also gets the shape along the tube.
        files.push("shape.svg");
    }
    assert_files(&out, &files);
    // The file holds the same report as standard output.
    let file: Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("modes.json")).expect("modes.json is readable"))
            .expect("modes.json is JSON");
    assert_eq!(file["modes"], j["modes"], "modes.json and stdout agree");
}

/// `respond --json --out`: peaks and files.
fn respond_example(dir: &Path, model: &Path, has_absorbers: bool) {
    let out = dir.join("respond-out");
    let r =
        antinode(dir, [OsStr::new("respond"), model.as_os_str(), "--json".as_ref(), "--out".as_ref(), out.as_os_str()]);
    r.assert_success("respond");
    let j = r.json();
    let before = num(&j["peak_before"], "respond: peak_before");
    assert!(before > 0.0 && before.is_finite(), "peak_before = {before}");
    let peaks = j["peaks_before"].as_array().expect("respond: peaks_before[]");
    assert!(!peaks.is_empty(), "respond: at least one peak in the band");
    let band = [num(&j["band_hz"][0], "band"), num(&j["band_hz"][1], "band")];
    for p in peaks {
        let f = num(&p["frequency_hz"], "peaks_before[].frequency_hz");
        assert!(f >= band[0] && f <= band[1], "peak at {f} Hz outside {band:?}");
        let v = num(&p["receptance"], "peaks_before[].receptance");
        assert!(v > 0.0 && v <= before * (1.0 + 1e-9), "peak {v} above peak_before {before}");
    }
    if has_absorbers {
        let after = num(&j["peak_after"], "respond: peak_after");
        assert!(after > 0.0 && after.is_finite(), "peak_after = {after}");
    } else {
        assert!(j["peak_after"].is_null(), "no absorbers: peak_after is null");
    }
    if j["speed"].is_null() {
        assert_files(&out, &["response.csv", "response.json", "frf.svg"]);
    } else {
        assert_files(&out, &["response.csv", "response.json", "frf.svg", "speed.csv", "speed.svg", "interference.svg"]);
    }
}

/// `design --json --out`: the absorber contract, peak before and after, and the files. Returns the
/// report.
fn design_example(dir: &Path, model: &Path, out: &Path) -> Value {
    let r =
        antinode(dir, [OsStr::new("design"), model.as_os_str(), "--json".as_ref(), "--out".as_ref(), out.as_os_str()]);
    r.assert_success("design");
    let j = r.json();
    let m: Value =
        serde_json::from_str(&std::fs::read_to_string(model).expect("model readable")).expect("model is JSON");
    let spec = &m["study"]["absorber_design"];
    let count = spec["count"].as_u64().unwrap_or(1);
    let mass_each = spec["mass_each"]
        .as_f64()
        .or_else(|| spec["total_mass"].as_f64().map(|t| t / count as f64))
        .expect("the example gives the absorber mass");
    let targets = j["targets"].as_array().expect("design: targets[]");
    let absorbers = j["absorbers"].as_array().expect("design: absorbers[]");
    assert_eq!(absorbers.len() as u64, count, "design: as many absorbers as asked");
    for (i, a) in absorbers.iter().enumerate() {
        assert!(a["location"]["node"].is_u64(), "absorbers[{i}].location.node is an integer: {}", a["location"]);
        let xyz = a["location"]["xyz"].as_array().expect("absorbers[].location.xyz is an array");
        assert_eq!(xyz.len(), 3, "absorbers[{i}].location.xyz");
        assert!(xyz.iter().all(|v| v.as_f64().is_some_and(f64::is_finite)));
        let dir = &a["direction"];
        assert!(
            dir.as_str().is_some_and(|s| ["x", "y", "z"].contains(&s)) || dir.as_array().is_some_and(|v| v.len() == 3),
            "absorbers[{i}].direction = {dir}"
        );
        let mass = num(&a["mass_kg"], "absorbers[].mass_kg");
        assert!((mass - mass_each).abs() <= 1e-12 * mass_each, "absorbers[{i}].mass_kg = {mass}, asked {mass_each}");
        let k = num(&a["stiffness_n_per_m"], "absorbers[].stiffness_n_per_m");
        assert!(k > 0.0 && k.is_finite(), "absorbers[{i}].stiffness_n_per_m = {k}");
        let c = num(&a["damping_n_s_per_m"], "absorbers[].damping_n_s_per_m");
        assert!(c > 0.0 && c.is_finite(), "absorbers[{i}].damping_n_s_per_m = {c}");
        let f = num(&a["tuned_frequency_hz"], "absorbers[].tuned_frequency_hz");
        let f_expected = (k / mass).sqrt() / (2.0 * std::f64::consts::PI);
        assert!(
            (f - f_expected).abs() <= 1e-9 * f_expected,
            "absorbers[{i}].tuned_frequency_hz = {f}, sqrt(k/m)/2pi = {f_expected}"
        );
        let mode = a["target_mode"].as_u64().expect("absorbers[].target_mode");
        let target = targets
            .iter()
            .find(|t| t["mode"].as_u64() == Some(mode))
            .unwrap_or_else(|| panic!("absorbers[{i}].target_mode {mode} is not in targets[]"));
        let f_mode = num(&target["frequency_hz"], "targets[].frequency_hz");
        // A tuned absorber sits close below its mode (Den Hartog: f = 1/(1 + mu)); a factor of 1.5
        // either way only catches a wrong mode or units.
        assert!(f > f_mode / 1.5 && f < f_mode * 1.5, "absorbers[{i}] tuned to {f} Hz for mode {mode} at {f_mode} Hz");
        let mu = num(&a["mass_ratio"], "absorbers[].mass_ratio");
        assert!(mu > 0.0 && mu < 1.0, "absorbers[{i}].mass_ratio = {mu}");
    }
    let before = num(&j["peak_before"], "design: peak_before");
    let after = num(&j["peak_after"], "design: peak_after");
    assert!(before > 0.0 && before.is_finite(), "peak_before = {before}");
    assert!(after > 0.0, "peak_after = {after}");
    assert!(after < before, "peak_after {after} is not below peak_before {before}");
    assert_files(out, &["design.json", "design-result.json", "design.csv", "frf.svg", "design.vtu"]);
    j
}

fn happy_path(model_name: &str, has_absorbers: bool) {
    let tmp = temp();
    let dir = tmp.path();
    let model = example(model_name);
    check_example(dir, &model);
    modes_example(dir, &model);
    respond_example(dir, &model, has_absorbers);
    design_example(dir, &model, &dir.join("design-out"));
    // Nothing went to the default out/ folder.
    assert_eq!(entries(dir), set(&["modes-out", "respond-out", "design-out"]), "only the --out folders are written");
}

#[test]
fn happy_path_interface_example() {
    happy_path("interface-example.json", true);
}

#[test]
fn happy_path_fan_shaft() {
    happy_path("fan-shaft.json", false);
}

/// The design.json written by `design` is a model; `respond` on it gives the design's peak after.
fn round_trip(model_name: &str) {
    let tmp = temp();
    let dir = tmp.path();
    let out = dir.join("design-out");
    let design = design_example(dir, &example(model_name), &out);
    let designed = out.join("design.json");
    let check = antinode(dir, [OsStr::new("check"), designed.as_os_str()]);
    check.assert_success("check of design.json");
    let r = antinode(
        dir,
        [
            OsStr::new("respond"),
            designed.as_os_str(),
            "--json".as_ref(),
            "--out".as_ref(),
            dir.join("respond-out").as_os_str(),
        ],
    );
    r.assert_success("respond on design.json");
    let j = r.json();
    let expected = num(&design["peak_after"], "design: peak_after");
    let got = num(&j["peak_after"], "respond on design.json: peak_after");
    // Both are the largest receptance over the band at the response points with the same
    // absorbers; only the search for the maximum may differ in rounding.
    assert!(
        (got - expected).abs() <= 1e-6 * expected,
        "respond on design.json: peak_after = {got}, design said {expected}"
    );
    let before = num(&design["peak_before"], "design: peak_before");
    let got_before = num(&j["peak_before"], "respond: peak_before");
    let absorbers_before =
        serde_json::from_str::<Value>(&std::fs::read_to_string(example(model_name)).expect("model readable"))
            .expect("model is JSON")["absorbers"]
            .as_array()
            .map_or(0, Vec::len);
    if absorbers_before == 0 {
        // Without absorbers in the original, the bare structure is the design's "before".
        assert!(
            (got_before - before).abs() <= 1e-6 * before,
            "respond peak_before = {got_before}, design peak_before = {before}"
        );
    }
}

#[test]
fn round_trip_interface_example() {
    round_trip("interface-example.json");
}

#[test]
fn round_trip_fan_shaft() {
    round_trip("fan-shaft.json");
}

/// The imported-mesh example: its mesh file is found next to the model, and the design.json
/// written to the output folder still finds it.
#[test]
fn happy_path_and_round_trip_imported_bracket() {
    happy_path("imported-bracket.json", false);
    round_trip("imported-bracket.json");
}

#[test]
fn schema_prints_json_schema() {
    let tmp = temp();
    let r = antinode(tmp.path(), ["schema"]);
    r.assert_success("schema");
    let j = r.json();
    assert!(j.get("$schema").is_some(), "schema output has a \"$schema\" key");
    assert!(entries(tmp.path()).is_empty(), "schema writes no file");
}

// ---------------------------------------------------------------------------------------------
// Bad input
// ---------------------------------------------------------------------------------------------

/// A small valid model using every block the bad-input tests break: a line and an explicit stub
/// beam, supports, a point mass, an absorber and a study with a design request.
fn base() -> Value {
    json!({
        "title": "Invented test model: aluminium tube on two pins with a stub carrying a mass",
        "materials": {"al": {"youngs_modulus": 7.0e10, "poisson_ratio": 0.33, "density": 2700}},
        "sections": {
            "tube": {"circular_tube": {"outer_diameter": 0.05, "wall_thickness": 0.002}},
            "rod": {"circle": {"diameter": 0.01}},
            "bar": {"rectangle": {"width": 0.02, "height": 0.01}}
        },
        "nodes": [{"id": 1, "xyz": [0.5, 0, 0]}, {"id": 2, "xyz": [0.5, 0, 0.1]}],
        "lines": [{"name": "shaft", "from": [0, 0, 0], "to": [1, 0, 0], "elements": 10,
                   "section": "tube", "material": "al"}],
        "beams": [{"id": 1, "nodes": [1, 2], "section": "bar", "material": "al"}],
        "supports": [{"at": {"line": "shaft", "at": 0.0}, "fixed": ["ux", "uy", "uz", "rx"]},
                     {"at": {"line": "shaft", "at": 1.0}, "fixed": ["uy", "uz"]}],
        "point_masses": [{"at": {"node": 2}, "mass": 0.1}],
        "absorbers": [{"name": "existing", "at": {"line": "shaft", "at": 0.3}, "direction": "z",
                       "mass": 0.02, "stiffness": 2.0e4, "damping": 1.0}],
        "study": {
            "band_hz": [20, 400],
            "excitation": [{"at": {"line": "shaft", "at": 0.3}, "direction": "z", "amplitude": 1.0}],
            "response_points": [{"at": {"line": "shaft", "at": 0.3}, "direction": "z"}],
            "absorber_design": {"count": 1, "mass_each": 0.05,
                                "candidates": [{"line": "shaft", "from": 0.1, "to": 0.9}],
                                "directions": ["z"]}
        }
    })
}

fn pretty(v: &Value) -> String {
    serde_json::to_string_pretty(v).expect("JSON serialises")
}

/// Writes `text` as `model.json` into a fresh folder, runs each command on it (with
/// `--out <folder>/out` where the command writes files) and checks that it fails cleanly: exit code
/// 1 (no panic), a message on standard error naming the file and containing every `expect`
/// fragment, and nothing written.
fn assert_rejected(text: &str, commands: &[&str], expect: &[&str]) {
    for command in commands {
        let tmp = temp();
        let dir = tmp.path();
        let model = dir.join("model.json");
        std::fs::write(&model, text).expect("model written");
        let out = dir.join("out");
        let mut args = vec![OsStr::new(*command), model.as_os_str()];
        if *command != "check" {
            args.extend([OsStr::new("--out"), out.as_os_str()]);
        }
        let r = antinode(dir, &args);
        let context = format!(
            "`antinode {command}` on\n{text}\n--- exit code {:?}\n--- stdout\n{}\n--- stderr\n{}",
            r.code, r.stdout, r.stderr
        );
        assert!(!r.stderr.contains("panicked"), "panic: {context}");
        assert_eq!(r.code, Some(ERROR_EXIT_CODE), "exit code: {context}");
        assert!(r.stderr.starts_with("error: "), "the message starts with `error: `: {context}");
        assert!(r.stderr.contains("model.json"), "the message names the file: {context}");
        for e in expect {
            assert!(r.stderr.contains(e), "the message lacks {e:?}: {context}");
        }
        assert!(entries(&out).is_empty(), "files left in the out folder: {:?}; {context}", entries(&out));
        assert_eq!(entries(dir), set(&["model.json"]), "files left in the working folder; {context}");
    }
}

/// The base model with `edit` applied, rejected by `check` and `design`.
fn assert_edit_rejected(edit: impl FnOnce(&mut Value), expect: &[&str]) {
    let mut m = base();
    edit(&mut m);
    assert_rejected(&pretty(&m), &["check", "design"], expect);
}

#[test]
fn base_model_of_bad_input_tests_is_valid() {
    let tmp = temp();
    let dir = tmp.path();
    let model = dir.join("model.json");
    std::fs::write(&model, pretty(&base())).expect("model written");
    antinode(dir, [OsStr::new("check"), model.as_os_str()]).assert_success("check of base model");
    let out = dir.join("out");
    let r =
        antinode(dir, [OsStr::new("design"), model.as_os_str(), "--json".as_ref(), "--out".as_ref(), out.as_os_str()]);
    r.assert_success("design of base model");
    let j = r.json();
    assert!(num(&j["peak_after"], "peak_after") < num(&j["peak_before"], "peak_before"));
    let r = antinode(dir, [OsStr::new("respond"), model.as_os_str(), "--out".as_ref(), out.as_os_str()]);
    r.assert_success("respond of base model");
}

#[test]
fn rejects_unknown_node_id() {
    assert_edit_rejected(
        |m| m["beams"][0]["nodes"][1] = json!(99),
        &["beams[0].nodes[1]", "node 99", "does not exist"],
    );
    assert_edit_rejected(
        |m| m["point_masses"][0]["at"] = json!({"node": 77}),
        &["point_masses[0].at.node", "node 77", "does not exist"],
    );
}

#[test]
fn rejects_unknown_section_name() {
    assert_edit_rejected(
        |m| m["beams"][0]["section"] = json!("flat"),
        &["beams[0].section", "section \"flat\"", "not defined", "\"bar\""],
    );
}

#[test]
fn rejects_unknown_material_name() {
    assert_edit_rejected(
        |m| m["lines"][0]["material"] = json!("steel"),
        &["lines[0].material", "material \"steel\"", "not defined", "\"al\""],
    );
}

#[test]
fn rejects_duplicate_node_ids() {
    assert_edit_rejected(
        |m| {
            m["nodes"].as_array_mut().expect("nodes").push(json!({"id": 1, "xyz": [0.2, 0, 0.1]}));
        },
        &["nodes[2]", "node 1", "defined twice", "nodes[0]"],
    );
}

#[test]
fn rejects_duplicate_beam_ids() {
    assert_edit_rejected(
        |m| {
            m["beams"]
                .as_array_mut()
                .expect("beams")
                .push(json!({"id": 1, "nodes": [2, 1], "section": "rod", "material": "al"}));
        },
        &["beams[1]", "beam 1", "defined twice", "beams[0]"],
    );
}

#[test]
fn rejects_duplicate_line_names() {
    assert_edit_rejected(
        |m| {
            m["lines"].as_array_mut().expect("lines").push(json!({
                "name": "shaft", "from": [0, 0, 0], "to": [0, 1, 0], "elements": 4,
                "section": "tube", "material": "al"
            }));
        },
        &["lines[1]", "line \"shaft\"", "defined twice", "lines[0]"],
    );
}

#[test]
fn rejects_non_positive_youngs_modulus() {
    for e in [0.0, -7.0e10] {
        assert_edit_rejected(
            |m| m["materials"]["al"]["youngs_modulus"] = json!(e),
            &["materials.al", "youngs_modulus", &format!("{e}"), "positive"],
        );
    }
}

#[test]
fn rejects_non_positive_density() {
    for rho in [0.0, -2700.0] {
        assert_edit_rejected(
            |m| m["materials"]["al"]["density"] = json!(rho),
            &["materials.al", "density", &format!("{rho}"), "positive"],
        );
    }
}

#[test]
fn rejects_non_positive_dimension() {
    assert_edit_rejected(
        |m| m["sections"]["tube"]["circular_tube"]["wall_thickness"] = json!(0.0),
        &["sections.tube", "wall_thickness", "= 0", "positive"],
    );
    assert_edit_rejected(
        |m| m["sections"]["rod"]["circle"]["diameter"] = json!(-0.01),
        &["sections.rod", "diameter", "-0.01", "positive"],
    );
    assert_edit_rejected(
        |m| m["sections"]["bar"]["rectangle"]["height"] = json!(0.0),
        &["sections.bar", "height", "= 0", "positive"],
    );
}

#[test]
fn rejects_tube_wall_thicker_than_radius() {
    assert_edit_rejected(
        |m| m["sections"]["tube"]["circular_tube"]["wall_thickness"] = json!(0.03),
        &["sections.tube", "wall_thickness", "0.03", "less than half the outer diameter"],
    );
    // Exactly the radius is a solid bar, not a tube.
    assert_edit_rejected(
        |m| m["sections"]["tube"]["circular_tube"]["wall_thickness"] = json!(0.025),
        &["sections.tube", "wall_thickness", "0.025", "less than half the outer diameter"],
    );
}

#[test]
fn rejects_poisson_ratio_outside_range() {
    for nu in [0.5, 0.7, -1.0, -1.5] {
        assert_edit_rejected(
            |m| m["materials"]["al"]["poisson_ratio"] = json!(nu),
            &["materials.al", "poisson_ratio", &format!("{nu}"), "between -1 and 0.5"],
        );
    }
}

#[test]
fn rejects_zero_length_beam() {
    assert_edit_rejected(
        |m| {
            m["nodes"].as_array_mut().expect("nodes").push(json!({"id": 3, "xyz": [0.5, 0, 0.1]}));
            m["beams"]
                .as_array_mut()
                .expect("beams")
                .push(json!({"id": 2, "nodes": [2, 3], "section": "rod", "material": "al"}));
        },
        &["beams[1]", "beam 2", "nodes 2 and 3", "zero length"],
    );
}

#[test]
fn rejects_orientation_parallel_to_beam() {
    // Beam 1 runs along global Z, from node 1 to node 2.
    assert_edit_rejected(
        |m| m["beams"][0]["orientation"] = json!([0, 0, 2]),
        &["beams[0]", "beam 1", "orientation", "parallel to the beam axis"],
    );
}

#[test]
fn rejects_absorber_with_non_positive_mass() {
    for mass in [0.0, -0.02] {
        assert_edit_rejected(
            |m| m["absorbers"][0]["mass"] = json!(mass),
            &["absorbers[0]", "mass", &format!("{mass}"), "positive"],
        );
    }
}

#[test]
fn rejects_absorber_with_non_positive_stiffness() {
    for k in [0.0, -2.0e4] {
        assert_edit_rejected(
            |m| m["absorbers"][0]["stiffness"] = json!(k),
            &["absorbers[0]", "stiffness", &format!("{k}"), "positive"],
        );
    }
}

#[test]
fn rejects_location_that_snaps_to_no_node() {
    assert_edit_rejected(
        |m| m["study"]["excitation"][0]["at"] = json!({"xyz": [0.5, 0.5, 0]}),
        &["study.excitation[0].at.xyz", "no node lies within", "nearest"],
    );
}

#[test]
fn rejects_model_without_mass() {
    let m = json!({
        "title": "Invented test model: two nodes joined by springs, no mass",
        "nodes": [{"id": 1, "xyz": [0, 0, 0]}, {"id": 2, "xyz": [1, 0, 0]}],
        "springs": [{"at": {"node": 1}, "stiffness": {"ux": 1000, "uy": 1000, "uz": 1000}},
                    {"at": {"node": 1}, "to": {"node": 2}, "stiffness": {"ux": 500}}]
    });
    assert_rejected(&pretty(&m), &["check", "design"], &["no mass", "point_masses"]);
}

#[test]
fn rejects_unsupported_mechanism() {
    // Both ends hold only uy and uz: the shaft can slide along x and spin about x.
    let mut m = base();
    m["supports"] = json!([
        {"at": {"line": "shaft", "at": 0.0}, "fixed": ["uy", "uz"]},
        {"at": {"line": "shaft", "at": 1.0}, "fixed": ["uy", "uz"]}
    ]);
    assert_rejected(
        &pretty(&m),
        &["check", "modes", "respond", "design"],
        &["2 independent way(s)", "0 expected", "ux", "rx", "rigid_body_modes"],
    );
    // Only the axial slide is free.
    m["supports"][0]["fixed"] = json!(["uy", "uz", "rx"]);
    assert_rejected(
        &pretty(&m),
        &["check", "modes", "respond", "design"],
        &["1 independent way(s)", "0 expected", "ux", "rigid_body_modes"],
    );
    // Only the spin is free.
    m["supports"][0]["fixed"] = json!(["ux", "uy", "uz"]);
    assert_rejected(
        &pretty(&m),
        &["check", "modes", "respond", "design"],
        &["1 independent way(s)", "0 expected", "rx", "rigid_body_modes"],
    );
}

#[test]
fn accepts_stated_rigid_body_modes() {
    // The same shaft free to slide and spin is accepted when the model says so.
    let mut m = base();
    m["supports"] = json!([
        {"at": {"line": "shaft", "at": 0.0}, "fixed": ["uy", "uz"]},
        {"at": {"line": "shaft", "at": 1.0}, "fixed": ["uy", "uz"]}
    ]);
    m["rigid_body_modes"] = json!(2);
    let tmp = temp();
    let dir = tmp.path();
    let model = dir.join("model.json");
    std::fs::write(&model, pretty(&m)).expect("model written");
    let r = antinode(dir, [OsStr::new("check"), model.as_os_str(), "--json".as_ref()]);
    r.assert_success("check with rigid_body_modes 2");
    assert_eq!(r.json()["zero_energy_modes"].as_u64(), Some(2));
}

/// A failed write leaves none of the command's other files behind.
#[test]
fn failed_write_leaves_no_partial_output() {
    for (command, blocked, others) in [
        ("respond", "frf.svg", &["response.csv", "response.json"][..]),
        ("design", "frf.svg", &["design.json", "design-result.json", "design.csv", "design.vtu"][..]),
        ("modes", "modes.json", &["modes.csv", "modes.vtu"][..]),
    ] {
        let tmp = temp();
        let dir = tmp.path();
        let out = dir.join("out");
        // A folder where one output file should go makes its write fail.
        std::fs::create_dir_all(out.join(blocked)).expect("folder made");
        let model = example("interface-example.json");
        let r = antinode(dir, [OsStr::new(command), model.as_os_str(), "--out".as_ref(), out.as_os_str()]);
        let context =
            format!("`antinode {command}` with {blocked} blocked\n--- stdout\n{}\n--- stderr\n{}", r.stdout, r.stderr);
        assert!(!r.stderr.contains("panicked"), "panic: {context}");
        assert_eq!(r.code, Some(ERROR_EXIT_CODE), "exit code: {context}");
        assert!(r.stderr.contains(blocked), "the message names {blocked}: {context}");
        assert_eq!(entries(&out), set(&[blocked]), "only the blocking folder is left, none of {others:?}: {context}");
    }
}

#[test]
fn rejects_malformed_json_with_line_and_column() {
    // The nodes list lacks its closing bracket; the parser notices on line 4.
    let text = "{\n  \"title\": \"Invented test model: a missing bracket\",\n  \"nodes\": [{\"id\": 1, \"xyz\": [0, 0, 0]},\n  \"springs\": []\n}\n";
    assert_rejected(text, &["check", "design"], &["line 4, column"]);
    // A document cut short.
    let full = pretty(&base());
    let cut = &full[..full.len() - 1];
    assert_rejected(cut, &["check", "design"], &["line", "column", "EOF"]);
}

/// The line (from 1) of the first line of `text` containing `what`.
fn line_of(text: &str, what: &str) -> usize {
    text.lines().position(|l| l.contains(what)).map(|i| i + 1).unwrap_or_else(|| panic!("{what} is not in the text"))
}

#[test]
fn rejects_unknown_field() {
    let mut m = base();
    let materials = m["materials"].take();
    let obj = m.as_object_mut().expect("object");
    obj.remove("materials");
    obj.insert("matrials".into(), materials);
    let text = pretty(&m);
    let line = format!("line {}, column", line_of(&text, "\"matrials\""));
    assert_rejected(&text, &["check", "design"], &["unknown field `matrials`", "`materials`", &line]);
    // Nested: the JSON path names the item.
    let mut m = base();
    m["absorbers"][0]["stifness"] = json!(1.0);
    let text = pretty(&m);
    let line = format!("line {}, column", line_of(&text, "\"stifness\""));
    assert_rejected(&text, &["check", "design"], &["absorbers[0]", "unknown field `stifness`", &line]);
}

#[test]
fn rejects_band_with_low_above_high() {
    assert_edit_rejected(|m| m["study"]["band_hz"] = json!([400, 20]), &["study.band_hz", "[400, 20]", "low < high"]);
}

#[test]
fn respond_rejects_study_without_excitation() {
    let mut m = base();
    m["study"].as_object_mut().expect("study").remove("excitation");
    assert_rejected(&pretty(&m), &["respond", "design"], &["study.excitation", "no excitation"]);
}

/// Runs `antinode modes <args> --out <tmp>/out` and checks a clean rejection: exit code 1, every
/// `expect` fragment in the message, nothing written.
fn assert_modes_rejected(args: &[&OsStr], expect: &[&str]) {
    let tmp = temp();
    let dir = tmp.path();
    let out = dir.join("out");
    let mut all = vec![OsStr::new("modes")];
    all.extend_from_slice(args);
    all.extend([OsStr::new("--out"), out.as_os_str()]);
    let r = antinode(dir, &all);
    let context = format!("`antinode {all:?}`\n--- exit code {:?}\n--- stderr\n{}", r.code, r.stderr);
    assert!(!r.stderr.contains("panicked"), "panic: {context}");
    assert_eq!(r.code, Some(ERROR_EXIT_CODE), "exit code: {context}");
    assert!(r.stderr.starts_with("error: "), "the message starts with `error: `: {context}");
    for e in expect {
        assert!(r.stderr.contains(e), "the message lacks {e:?}: {context}");
    }
    assert!(entries(&out).is_empty(), "files left in the out folder: {context}");
}

#[test]
fn modes_rejects_impossible_requests() {
    let model = example("fan-shaft.json");
    let m = model.as_os_str();
    let cases: [(&[&str], &[&str]); 5] = [
        (&["--count", "0"], &["zero modes requested"]),
        (&["--max-frequency", "0"], &["[0, 0] Hz is not a band", "low < high"]),
        (&["--min-frequency", "400", "--max-frequency", "50"], &["[400, 50] Hz is not a band"]),
        (&["--min-frequency", "5000", "--max-frequency", "5001"], &["no mode lies in the band [5000, 5001] Hz"]),
        (&["--min-frequency", "20"], &["--min-frequency needs --max-frequency"]),
    ];
    for (extra, expect) in cases {
        let mut args = vec![m];
        args.extend(extra.iter().map(OsStr::new));
        assert_modes_rejected(&args, expect);
    }
}

/// A count above the number of free DOFs is capped at every mode, with a note.
#[test]
fn modes_caps_a_huge_count() {
    let tmp = temp();
    let dir = tmp.path();
    let model = example("fan-shaft.json");
    let out = dir.join("out");
    let r = antinode(
        dir,
        [
            OsStr::new("modes"),
            model.as_os_str(),
            "--count".as_ref(),
            "100000".as_ref(),
            "--json".as_ref(),
            "--out".as_ref(),
            out.as_os_str(),
        ],
    );
    r.assert_success("modes --count 100000");
    assert!(r.stderr.contains("note: --count 100000 capped at 384 (the model has 384 free DOFs"), "{}", r.stderr);
    assert_eq!(r.json()["modes"].as_array().map(Vec::len), Some(384));
}

/// `export-matrices` then `modes --stiffness --mass` reproduces the model's frequencies: the two
/// routes factor the same matrices (the MatrixMarket text keeps 17 significant digits).
#[test]
fn exported_matrices_give_the_same_modes() {
    let tmp = temp();
    let dir = tmp.path();
    let model = example("fan-shaft.json");
    let mats = dir.join("mats");
    antinode(dir, [OsStr::new("export-matrices"), model.as_os_str(), "--out".as_ref(), mats.as_os_str()])
        .assert_success("export-matrices");
    assert_files(&mats, &["K.mtx", "M.mtx"]);
    let count = ["--count".as_ref(), OsStr::new("12"), "--json".as_ref()];
    let out = dir.join("a");
    let mut args = vec![OsStr::new("modes"), model.as_os_str(), "--out".as_ref(), out.as_os_str()];
    args.extend(count);
    let from_model = antinode(dir, &args);
    from_model.assert_success("modes on the model");
    let (k, m) = (mats.join("K.mtx"), mats.join("M.mtx"));
    let out = dir.join("b");
    let mut args = vec![
        OsStr::new("modes"),
        "--stiffness".as_ref(),
        k.as_os_str(),
        "--mass".as_ref(),
        m.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
    ];
    args.extend(count);
    let from_files = antinode(dir, &args);
    from_files.assert_success("modes on the matrices");
    assert_files(&out, &["modes.json", "modes.csv"]);
    let (a, b) = (from_model.json(), from_files.json());
    assert_eq!(b["sturm_check"]["passed"].as_bool(), Some(true), "sturm_check: {}", b["sturm_check"]);
    let (ma, mb) = (a["modes"].as_array().expect("modes[]"), b["modes"].as_array().expect("modes[]"));
    assert_eq!(ma.len(), 12);
    assert_eq!(mb.len(), 12);
    for (i, (x, y)) in ma.iter().zip(mb).enumerate() {
        let (fx, fy) = (num(&x["frequency_hz"], "frequency_hz"), num(&y["frequency_hz"], "frequency_hz"));
        // Same matrices, same algorithm: agreement to the solver's accuracy (residual ≤ 1e-8).
        assert!((fx - fy).abs() <= 1e-9 * fx, "mode {}: {fx} Hz from the model, {fy} Hz from the files", i + 1);
    }
}

#[test]
fn modes_rejects_bad_matrix_files() {
    let tmp = temp();
    let dir = tmp.path();
    let mats = dir.join("mats");
    antinode(
        dir,
        [OsStr::new("export-matrices"), example("fan-shaft.json").as_os_str(), "--out".as_ref(), mats.as_os_str()],
    )
    .assert_success("export-matrices");
    let general = dir.join("general.mtx");
    std::fs::write(&general, "%%MatrixMarket matrix coordinate real general\n2 2 2\n1 1 1.0\n1 2 3.0\n")
        .expect("written");
    let small = dir.join("small.mtx");
    std::fs::write(&small, "%%MatrixMarket matrix coordinate real symmetric\n3 3 1\n1 1 1.0\n").expect("written");
    let garbage = dir.join("garbage.mtx");
    std::fs::write(&garbage, "this is not a matrix\n").expect("written");
    let (k, m) = (mats.join("K.mtx"), mats.join("M.mtx"));
    let missing = dir.join("missing.mtx");
    let cases: [(&Path, &Path, &[&str]); 4] = [
        (&general, &m, &["general.mtx", "not symmetric"]),
        (&k, &small, &["small.mtx", "3 × 3", "384 × 384"]),
        (&garbage, &m, &["garbage.mtx", "MatrixMarket"]),
        (&missing, &m, &["missing.mtx", "No such file"]),
    ];
    for (kk, mm, expect) in cases {
        assert_modes_rejected(&["--stiffness".as_ref(), kk.as_os_str(), "--mass".as_ref(), mm.as_os_str()], expect);
    }
}

#[test]
fn happy_path_enclosure_panel() {
    happy_path("enclosure-panel.json", false);
}

/// The base model with a small shell fin on the stub's top node: a quadrilateral (shell 1) and a
/// triangle (shell 2). Nodes: [0] 1, [1] 2, [2] 10, [3] 11, [4] 12, [5] 13.
fn with_shells() -> Value {
    let mut m = base();
    let nodes = m["nodes"].as_array_mut().expect("nodes");
    nodes.extend([
        json!({"id": 10, "xyz": [0.6, 0, 0.1]}),
        json!({"id": 11, "xyz": [0.6, 0.1, 0.1]}),
        json!({"id": 12, "xyz": [0.5, 0.1, 0.1]}),
        json!({"id": 13, "xyz": [0.7, 0.05, 0.1]}),
    ]);
    m["shells"] = json!([
        {"id": 1, "nodes": [2, 10, 11, 12], "thickness": 0.002, "material": "al"},
        {"id": 2, "nodes": [10, 13, 11], "thickness": 0.002, "material": "al"}
    ]);
    m
}

fn assert_shell_edit_rejected(edit: impl FnOnce(&mut Value), expect: &[&str]) {
    let mut m = with_shells();
    edit(&mut m);
    assert_rejected(&pretty(&m), &["check", "design"], expect);
}

#[test]
fn shell_model_of_bad_input_tests_is_valid_and_checked() {
    let tmp = temp();
    let dir = tmp.path();
    let model = dir.join("model.json");
    std::fs::write(&model, pretty(&with_shells())).expect("model written");
    let r = antinode(dir, [OsStr::new("check"), model.as_os_str(), "--json".as_ref()]);
    r.assert_success("check of the shell model");
    let j = r.json();
    assert_eq!(j["shells"].as_u64(), Some(2));
    assert_eq!(j["shell_quality"]["quadrilaterals"].as_u64(), Some(1));
    assert_eq!(j["shell_quality"]["triangles"].as_u64(), Some(1));
    assert_eq!(j["zero_energy_modes"].as_u64(), Some(0), "the fin is held through the stub");
}

#[test]
fn rejects_non_positive_shell_thickness() {
    for t in [0.0, -0.002] {
        assert_shell_edit_rejected(
            |m| m["shells"][0]["thickness"] = json!(t),
            &["shells[0] (shell 1)", "thickness", "positive"],
        );
    }
}

#[test]
fn rejects_shell_without_material() {
    assert_shell_edit_rejected(
        |m| m["shells"][1]["material"] = json!("steel"),
        &["shells[1] (shell 2).material", "material \"steel\" is not defined"],
    );
}

#[test]
fn rejects_shell_with_wrong_node_count_or_repeated_node() {
    assert_shell_edit_rejected(
        |m| m["shells"][0]["nodes"] = json!([2, 10]),
        &["shells[0] (shell 1).nodes", "3 (triangle) or 4"],
    );
    assert_shell_edit_rejected(
        |m| m["shells"][0]["nodes"] = json!([2, 10, 10, 12]),
        &["shells[0] (shell 1).nodes", "node 10 appears twice"],
    );
    assert_shell_edit_rejected(
        |m| m["shells"][1]["nodes"] = json!([10, 13, 99]),
        &["shells[1] (shell 2).nodes[2]", "node 99 does not exist"],
    );
}

#[test]
fn rejects_degenerate_and_inverted_shells() {
    // Coincident corners: node 12 moved onto node 2.
    assert_shell_edit_rejected(|m| m["nodes"][4]["xyz"] = json!([0.5, 0, 0.1]), &["shells[0] (shell 1)", "same point"]);
    // Collinear quadrilateral: every corner on the line y = 0, z = 0.1.
    assert_shell_edit_rejected(
        |m| {
            m["nodes"][2]["xyz"] = json!([0.7, 0, 0.1]);
            m["nodes"][3]["xyz"] = json!([0.8, 0, 0.1]);
            m["nodes"][4]["xyz"] = json!([0.9, 0, 0.1]);
        },
        &["shells[0] (shell 1)", "on one line"],
    );
    // Bow-tie: the node order crosses the element.
    assert_shell_edit_rejected(
        |m| m["shells"][0]["nodes"] = json!([2, 10, 12, 11]),
        &["shells[0] (shell 1)", "inverted"],
    );
}

#[test]
fn warns_about_thick_and_distorted_shells() {
    let tmp = temp();
    let dir = tmp.path();
    let mut m = with_shells();
    m["shells"][0]["thickness"] = json!(0.2);
    m["nodes"][4]["xyz"] = json!([0.5, 0.1, 0.13]);
    let model = dir.join("model.json");
    std::fs::write(&model, pretty(&m)).expect("model written");
    let r = antinode(dir, [OsStr::new("check"), model.as_os_str(), "--json".as_ref()]);
    r.assert_success("check of a thick, warped shell");
    let warnings = r.json()["warnings"].to_string();
    assert!(warnings.contains("thickness / shortest side") && warnings.contains("shell 1"), "{warnings}");
    assert!(warnings.contains("warp") && warnings.contains("mean plane"), "{warnings}");
}

// ---------------------------------------------------------------------------------------------
// Starter models (`init`) and the generators (`tubes`, `panels`, `regions`)
// ---------------------------------------------------------------------------------------------

/// `init <kind>` in an empty folder writes `<kind>.json` and nothing else; the model passes `check`
/// (held: no zero-energy mode) and `design --json` (the absorber contract of `design_example`).
fn init_then_check_and_design(kind: &str) {
    let tmp = temp();
    let dir = tmp.path();
    let r = antinode(dir, ["init", kind]);
    r.assert_success(&format!("init {kind}"));
    let file = format!("{kind}.json");
    assert_files(dir, &[&file]);
    assert!(r.stdout.contains(&file), "init names the file it wrote: {}", r.stdout);
    let model = dir.join(&file);
    let text = std::fs::read_to_string(&model).expect("starter model readable");
    let m: Value = serde_json::from_str(&text).expect("starter model is JSON");
    assert!(
        m["title"].as_str().is_some_and(|t| t.to_lowercase().contains("invented")),
        "the starter model says its scenario is invented: {}",
        m["title"]
    );
    let check = antinode(dir, [OsStr::new("check"), model.as_os_str(), "--json".as_ref()]);
    check.assert_success(&format!("check of the {kind} starter"));
    let j = check.json();
    assert_eq!(j["zero_energy_modes"].as_u64(), Some(0), "the {kind} starter is held");
    assert_eq!(j["warnings"].as_array().map(Vec::len), Some(0), "no warnings: {}", j["warnings"]);
    design_example(dir, &model, &dir.join("design-out"));
}

#[test]
fn init_tube_writes_a_model_that_checks_and_designs() {
    init_then_check_and_design("tube");
}

#[test]
fn init_panel_writes_a_model_that_checks_and_designs() {
    init_then_check_and_design("panel");
}

#[test]
fn init_beam_writes_a_model_that_checks_and_designs() {
    init_then_check_and_design("beam");
}

#[test]
fn init_writes_to_out_and_refuses_to_overwrite() {
    let tmp = temp();
    let dir = tmp.path();
    antinode(dir, ["init", "panel", "--out", "cover.json"]).assert_success("init panel --out cover.json");
    assert_files(dir, &["cover.json"]);
    let written = std::fs::read_to_string(dir.join("cover.json")).expect("written");
    for (args, file) in
        [(&["init", "panel", "--out", "cover.json"][..], "cover.json"), (&["init", "tube"][..], "tube.json")]
    {
        std::fs::write(dir.join("tube.json"), "keep me").expect("written");
        let r = antinode(dir, args);
        assert_eq!(r.code, Some(ERROR_EXIT_CODE), "init over an existing file fails: {}", r.stderr);
        assert!(
            r.stderr.starts_with("error: ") && r.stderr.contains(file) && r.stderr.contains("already exists"),
            "{}",
            r.stderr
        );
        assert!(!r.stderr.contains("panicked"), "{}", r.stderr);
    }
    assert_eq!(std::fs::read_to_string(dir.join("cover.json")).expect("readable"), written, "cover.json unchanged");
    assert_eq!(std::fs::read_to_string(dir.join("tube.json")).expect("readable"), "keep me", "tube.json unchanged");
    let r = antinode(dir, ["init", "beam", "--out", "missing/beam.json"]);
    assert_eq!(r.code, Some(ERROR_EXIT_CODE), "{}", r.stderr);
    assert!(r.stderr.contains("cannot create") && r.stderr.contains("missing/beam.json"), "{}", r.stderr);
    assert_eq!(entries(dir), set(&["cover.json", "tube.json"]), "nothing else written");
    let r = antinode(dir, ["init", "bridge"]);
    assert_eq!(r.code, Some(2), "an unknown kind is a usage error: {}", r.stderr);
    assert!(r.stderr.contains("tube") && r.stderr.contains("panel") && r.stderr.contains("beam"), "{}", r.stderr);
}

#[test]
fn happy_path_gantry_boom() {
    happy_path("gantry-boom.json", false);
}

/// A small valid model of the generators: a shell tube on two bearings with regions, and a
/// separate panel simply supported on two edges; the study uses regions for every place.
fn generators_base() -> Value {
    json!({
        "title": "Invented test model: aluminium shell tube on two bearings beside a cover panel",
        "materials": {"al": {"youngs_modulus": 7.0e10, "poisson_ratio": 0.33, "density": 2700}},
        "tubes": [{"name": "shaft", "length": 0.8, "outer_diameter": 0.05, "wall_thickness": 0.002, "material": "al",
                   "fidelity": "shell", "around": 16, "along": 20,
                   "ends": {"start": {"bearing": {"ux": 1e7, "uy": 5e6, "uz": 5e6}},
                            "end": {"bearing": {"uy": 5e6, "uz": 5e6}}}}],
        "panels": [{"name": "lid", "size": [0.4, 0.3], "thickness": 0.002, "material": "al", "origin": [0, 0.2, 0],
                    "divisions": [8, 6], "edges": {"x0": "simply_supported", "x1": "simply_supported"}}],
        "regions": {
            "top": {"tube": "shaft", "from": 0.1, "to": 0.9, "angle_deg": [90, 90]},
            "drive": {"tube": "shaft", "from": 0.3, "to": 0.3, "angle_deg": [90, 90]},
            "lid middle": {"panel": "lid", "point": [0.2, 0.15]}
        },
        "study": {
            "band_hz": [50, 800],
            "excitation": [{"at": {"region": "drive"}, "direction": "z", "amplitude": 1.0}],
            "response_points": [{"at": {"region": "drive"}, "direction": "z"},
                                {"at": {"region": "lid middle"}, "direction": "z"}],
            "absorber_design": {"count": 1, "mass_each": 0.01, "candidates": [{"region": "top"}], "directions": ["z"]}
        }
    })
}

fn assert_generator_edit_rejected(edit: impl FnOnce(&mut Value), expect: &[&str]) {
    let mut m = generators_base();
    edit(&mut m);
    assert_rejected(&pretty(&m), &["check", "design"], expect);
}

#[test]
fn generator_model_of_bad_input_tests_is_valid() {
    let tmp = temp();
    let dir = tmp.path();
    let model = dir.join("model.json");
    std::fs::write(&model, pretty(&generators_base())).expect("model written");
    let r = antinode(dir, [OsStr::new("check"), model.as_os_str(), "--json".as_ref()]);
    r.assert_success("check of the generator model");
    let j = r.json();
    assert_eq!(j["nodes"].as_u64(), Some(21 * 16 + 9 * 7));
    assert_eq!(j["shells"].as_u64(), Some(20 * 16 + 8 * 6));
    assert_eq!(j["springs"].as_u64(), Some(2 * 16), "each bearing spread over its ring's 16 nodes");
    assert_eq!(j["zero_energy_modes"].as_u64(), Some(0));
    let out = dir.join("out");
    let r =
        antinode(dir, [OsStr::new("design"), model.as_os_str(), "--json".as_ref(), "--out".as_ref(), out.as_os_str()]);
    r.assert_success("design of the generator model");
    assert!(num(&r.json()["peak_after"], "peak_after") < num(&r.json()["peak_before"], "peak_before"));
}

#[test]
fn links_and_fittings_show_in_check_and_feed_the_design() {
    let tmp = temp();
    let dir = tmp.path();
    let mut m = generators_base();
    m["tubes"][0]["fittings"] = json!({"start": {"mass": 0.2}, "end": {"mass": 0.2, "axial_inertia": 1e-4}});
    // Bearings on the fitting centres leave the spin free; a drive coupling holds it.
    m["tubes"][0]["ends"]["start"]["bearing"]["rx"] = json!(2e3);
    m["regions"]["mid ring"] = json!({"tube": "shaft", "from": 0.5, "to": 0.5});
    m["links"] = json!([{"name": "insert", "kind": "average", "reference_point": [0.4, 0, 0],
                          "members": {"region": "mid ring"}}]);
    m["point_masses"] = json!([{"at": {"link": "insert"}, "mass": 0.05}]);
    let model = dir.join("model.json");
    std::fs::write(&model, pretty(&m)).expect("model written");
    let r = antinode(dir, [OsStr::new("check"), model.as_os_str(), "--json".as_ref()]);
    r.assert_success("check with links");
    let j = r.json();
    let links = j["links"].as_array().cloned().unwrap_or_default();
    let names: Vec<&str> = links.iter().filter_map(|l| l["name"].as_str()).collect();
    assert_eq!(names, ["shaft start fitting", "shaft end fitting", "insert"], "{links:?}");
    assert_eq!(links[0]["kind"], "rigid");
    assert_eq!(links[0]["members"].as_u64(), Some(16), "a fitting ties its whole end ring");
    assert_eq!(links[2]["kind"], "average");
    // Tube wall + two fittings + the insert: three more nodes than without them.
    assert_eq!(j["nodes"].as_u64(), Some(21 * 16 + 9 * 7 + 3));
    assert_eq!(j["springs"].as_u64(), Some(2), "each bearing acts on its fitting's centre");
    assert_eq!(j["zero_energy_modes"].as_u64(), Some(0));
    let human = antinode(dir, [OsStr::new("check"), model.as_os_str()]);
    human.assert_success("check (human) with links");
    assert!(human.stdout.contains("insert average (16)"), "{}", human.stdout);
    let out = dir.join("out");
    let r =
        antinode(dir, [OsStr::new("design"), model.as_os_str(), "--json".as_ref(), "--out".as_ref(), out.as_os_str()]);
    r.assert_success("design with links");
    assert!(num(&r.json()["peak_after"], "peak_after") < num(&r.json()["peak_before"], "peak_before"));
}

#[test]
fn rejects_bad_links() {
    assert_generator_edit_rejected(
        |m| {
            m["links"] = json!([{"name": "hub", "kind": "rigid", "reference": {"region": "drive"}, "members": {"region": "drive"}}])
        },
        &["links[0] (\"hub\").members", "at least one member node besides its reference"],
    );
    assert_generator_edit_rejected(
        |m| {
            m["links"] = json!([{"name": "bar", "kind": "average", "reference_point": [0.4, 0, 0], "members": {"region": "top"}}])
        },
        &["links[0] (\"bar\").members", "not on one line", "use a rigid link"],
    );
    assert_generator_edit_rejected(
        |m| {
            m["tubes"][0]["fittings"] = json!({"start": {"mass": 0.1}});
            m["links"] = json!([{"name": "shaft start fitting", "kind": "rigid", "reference_point": [0.4, 0, 0],
                                  "members": {"region": "drive"}}]);
        },
        &["links[0]", "defined twice", "generated link \"shaft start fitting\""],
    );
    assert_generator_edit_rejected(
        |m| m["tubes"][0]["fittings"] = json!({"end": {"mass": -0.1}}),
        &["tubes[0] (\"shaft\").fittings.end.mass", "zero or a positive finite number"],
    );
    assert_generator_edit_rejected(
        |m| m["study"]["excitation"][0]["at"] = json!({"link": "hub"}),
        &["study.excitation[0].at.link", "link \"hub\" is not defined"],
    );
}

#[test]
fn rejects_tube_wall_not_thinner_than_its_radius() {
    assert_generator_edit_rejected(
        |m| m["tubes"][0]["wall_thickness"] = json!(0.025),
        &["tubes[0] (\"shaft\").wall_thickness", "not less than the outer radius 0.025 m"],
    );
    assert_generator_edit_rejected(
        |m| {
            m["tubes"][0]["segments"] =
                json!([{"to": 0.5}, {"to": 1.0, "outer_diameter": 0.03, "wall_thickness": 0.016}])
        },
        &["tubes[0] (\"shaft\").segments[1].wall_thickness", "outer radius"],
    );
}

#[test]
fn rejects_zero_divisions() {
    assert_generator_edit_rejected(
        |m| m["tubes"][0]["along"] = json!(0),
        &["tubes[0] (\"shaft\").along", "0 elements along"],
    );
    assert_generator_edit_rejected(
        |m| m["tubes"][0]["around"] = json!(2),
        &["tubes[0] (\"shaft\").around", "at least 3"],
    );
    assert_generator_edit_rejected(
        |m| m["panels"][0]["divisions"] = json!([0, 6]),
        &["panels[0] (\"lid\").divisions", "zero divisions"],
    );
}

#[test]
fn rejects_segments_that_do_not_fit_the_length() {
    assert_generator_edit_rejected(
        |m| m["tubes"][0]["segments"] = json!([{"to": 0.6}, {"to": 0.4}, {"to": 1.0}]),
        &["tubes[0] (\"shaft\").segments[1].to", "must increase"],
    );
    assert_generator_edit_rejected(
        |m| m["tubes"][0]["segments"] = json!([{"to": 0.3}, {"to": 0.9}]),
        &["tubes[0] (\"shaft\").segments", "ends at 0.9", "must be 1"],
    );
    assert_generator_edit_rejected(
        |m| m["tubes"][0]["segments"] = json!([{"to": 0.5}, {"to": 1.2}]),
        &["tubes[0] (\"shaft\").segments[1].to", "at most 1"],
    );
}

#[test]
fn rejects_unknown_tube_or_panel_in_a_region() {
    assert_generator_edit_rejected(
        |m| m["regions"]["top"]["tube"] = json!("boom"),
        &["regions.top.tube", "tube \"boom\" is not defined", "(defined: \"shaft\")"],
    );
    assert_generator_edit_rejected(
        |m| m["regions"]["lid middle"]["panel"] = json!("door"),
        &["regions.lid middle.panel", "panel \"door\" is not defined", "(defined: \"lid\")"],
    );
    assert_generator_edit_rejected(
        |m| m["study"]["excitation"][0]["at"] = json!({"region": "nowhere"}),
        &["study.excitation[0].at.region", "region \"nowhere\" is not defined"],
    );
}

#[test]
fn rejects_a_region_that_selects_nothing() {
    // No station lies between 0.31 and 0.34 (stations every 0.04).
    assert_generator_edit_rejected(
        |m| m["regions"]["drive"] = json!({"tube": "shaft", "from": 0.31, "to": 0.34}),
        &["regions.drive", "selects no node"],
    );
    assert_generator_edit_rejected(
        |m| m["regions"]["far"] = json!({"box": [[5, 5, 5], [6, 6, 6]]}),
        &["regions.far", "selects no node"],
    );
}

#[test]
fn rejects_non_positive_generator_sizes() {
    assert_generator_edit_rejected(
        |m| m["tubes"][0]["length"] = json!(0.0),
        &["tubes[0] (\"shaft\").length", "positive"],
    );
    assert_generator_edit_rejected(
        |m| m["tubes"][0]["outer_diameter"] = json!(-0.05),
        &["tubes[0] (\"shaft\").outer_diameter", "positive"],
    );
    assert_generator_edit_rejected(
        |m| m["panels"][0]["size"] = json!([0.4, -0.3]),
        &["panels[0] (\"lid\").size[1]", "positive"],
    );
    assert_generator_edit_rejected(
        |m| m["panels"][0]["thickness"] = json!(0),
        &["panels[0] (\"lid\").thickness", "positive"],
    );
}

#[test]
fn rejects_duplicate_tube_and_panel_names() {
    assert_generator_edit_rejected(
        |m| {
            let mut t = m["tubes"][0].clone();
            t["start"] = json!([0, -1, 0]);
            m["tubes"].as_array_mut().expect("tubes").push(t);
        },
        &["tubes[1]", "tube \"shaft\" is defined twice (first at tubes[0])"],
    );
    assert_generator_edit_rejected(
        |m| {
            let mut p = m["panels"][0].clone();
            p["origin"] = json!([0, 1, 0]);
            m["panels"].as_array_mut().expect("panels").push(p);
        },
        &["panels[1]", "panel \"lid\" is defined twice (first at panels[0])"],
    );
}

#[test]
fn rejects_misused_generator_fields() {
    assert_generator_edit_rejected(
        |m| {
            m["tubes"][0]["fidelity"] = json!("beam");
            m["tubes"][0].as_object_mut().expect("tube").remove("around");
        },
        &["regions.drive.angle_deg", "meshed as beams"],
    );
    assert_generator_edit_rejected(
        |m| m["tubes"][0]["fidelity"] = json!("beam"),
        &["tubes[0] (\"shaft\").around", "shell"],
    );
    assert_generator_edit_rejected(
        |m| m["tubes"][0]["ends"]["end"] = json!({"bearing": {"uy": 0.0}}),
        &["tubes[0] (\"shaft\").ends.end.bearing", "at least one positive stiffness"],
    );
    assert_generator_edit_rejected(
        |m| m["panels"][0]["mounts"] = json!([{"at": [0.5, 0.1], "stiffness": {"uz": 1e4}}]),
        &["panels[0] (\"lid\").mounts[0].at", "outside the panel"],
    );
    assert_generator_edit_rejected(
        |m| m["regions"]["top"]["fom"] = json!(0.1),
        &["regions.top", "unknown field `fom`"],
    );
    assert_generator_edit_rejected(
        |m| m["springs"] = json!([{"at": {"region": "top"}, "to": {"region": "drive"}, "stiffness": {"uz": 1e3}}]),
        &["springs[0].to", "one spring to ground per node"],
    );
}

// ---------------------------------------------------------------------------------------------
// Mode insight and correlation
// ---------------------------------------------------------------------------------------------

/// `modes` on the shell-tube example with an animation: the insight fields, the files and the
/// animation series.
#[test]
fn modes_insight_fields_and_animation() {
    let tmp = temp();
    let dir = tmp.path();
    let out = dir.join("out");
    let model = example("gantry-boom.json");
    let r = antinode(
        dir,
        [
            OsStr::new("modes"),
            model.as_os_str(),
            "--count".as_ref(),
            "10".as_ref(),
            "--animate".as_ref(),
            "9".as_ref(),
            "--frames".as_ref(),
            "4".as_ref(),
            "--reference-point".as_ref(),
            "1.2,0,0".as_ref(),
            "--json".as_ref(),
            "--out".as_ref(),
            out.as_os_str(),
        ],
    );
    r.assert_success("modes --animate");
    let j = r.json();
    assert_eq!(j["reference_point_m"], json!([1.2, 0.0, 0.0]));
    let modes = j["modes"].as_array().expect("modes[]");
    for m in modes {
        for d in ["x", "y", "z", "rx", "ry", "rz"] {
            let e = num(&m["effective_mass_fraction"][d], "effective_mass_fraction");
            assert!((0.0..=1.0 + 1e-12).contains(&e), "fraction {d} = {e}");
            num(&m["participation"][d], "participation");
            num(&m["effective_mass_kg"][d], "effective_mass_kg");
            num(&m["cumulative_fraction"][d], "cumulative_fraction");
        }
        assert!(num(&m["generalised_mass"], "generalised_mass") > 0.0);
        assert!(m["class"]["kind"].is_string(), "class.kind: {}", m["class"]);
        let kinetic: f64 = m["energy_fractions"]
            .as_array()
            .expect("energy_fractions")
            .iter()
            .map(|p| num(&p["kinetic"], "kinetic"))
            .sum();
        assert!((kinetic - 1.0).abs() < 1e-9, "kinetic shares add up to 1: {kinetic}");
    }
    // The first pair of the boom on its bearings is n = 1 bending, labelled as a pair (the
    // classification itself is checked against theory in tests/mode_insight.rs).
    assert_eq!(modes[0]["class"]["kind"], "bending");
    assert_eq!(modes[0]["class"]["pair"], 2);
    assert_eq!(modes[8]["class"]["kind"], "ovaling");
    assert_eq!(modes[8]["class"]["n"], 2);
    let mut files = vec!["modes.json", "modes.csv", "modes.vtu", "modes.svg", "mac.svg", "shape.svg", "mode-9.pvd"];
    let frames: Vec<String> = (0..4).map(|k| format!("mode-9-{k:03}.vtu")).collect();
    files.extend(frames.iter().map(String::as_str));
    assert_files(&out, &files);
    let pvd = std::fs::read_to_string(out.join("mode-9.pvd")).expect("pvd");
    assert!(frames.iter().all(|f| pvd.contains(f.as_str())), "the collection lists every frame: {pvd}");
    let csv = std::fs::read_to_string(out.join("modes.csv")).expect("csv");
    assert!(csv.lines().next().is_some_and(
        |h| h.starts_with("number,frequency_hz,effective_mass_fraction_x") && h.contains(",class,n,m,plane,pair")
    ));
    // The human table names the class and the largest effective-mass direction.
    let r = antinode(
        dir,
        [OsStr::new("modes"), model.as_os_str(), "--count".as_ref(), "4".as_ref(), "--out".as_ref(), out.as_os_str()],
    );
    r.assert_success("modes (table)");
    assert!(
        r.stdout.contains("class")
            && r.stdout.contains("largest m_eff")
            && r.stdout.contains("bending y n=1 m=1, pair 2"),
        "{}",
        r.stdout
    );
}

#[test]
fn modes_rejects_bad_insight_options() {
    let model = example("fan-shaft.json");
    let m = model.as_os_str();
    let cases: [(&[&str], &[&str]); 4] = [
        (&["--reference-point", "1,2"], &["--reference-point needs three finite coordinates"]),
        (&["--animate", "0"], &["--animate 0", "modes 1 to"]),
        (&["--animate", "3", "--frames", "1"], &["--frames 1", "at least 2"]),
        (&["--animate", "3", "--amplitude", "0"], &["--amplitude 0", "positive length"]),
    ];
    for (extra, expect) in cases {
        let mut args = vec![m];
        args.extend(extra.iter().map(OsStr::new));
        assert_modes_rejected(&args, expect);
    }
}

/// Runs `antinode correlate <args> --out <tmp>/out`.
fn correlate(dir: &Path, args: &[&OsStr]) -> (Run, PathBuf) {
    let out = dir.join("out");
    let mut all = vec![OsStr::new("correlate")];
    all.extend_from_slice(args);
    all.extend([OsStr::new("--out"), out.as_os_str()]);
    (antinode(dir, &all), out)
}

#[test]
fn correlate_pairs_the_invented_measured_modes() {
    let tmp = temp();
    let dir = tmp.path();
    let model = example("fan-shaft.json");
    let measured = example("fan-shaft-measured.csv");
    let (r, out) = correlate(dir, &[model.as_os_str(), "--measured".as_ref(), measured.as_os_str(), "--json".as_ref()]);
    r.assert_success("correlate --measured");
    let j = r.json();
    let pairs = j["pairs"].as_array().expect("pairs[]");
    assert_eq!(pairs.len(), 4);
    // The file was made from the z bending modes 2, 5, 7, 10 with shifts below 5 % and 3 % noise
    // (its header): each pairs with its source mode, MAC above 0.9, not flagged.
    for (p, want) in pairs.iter().zip([2, 5, 7, 10]) {
        assert_eq!(p["model_mode"], want, "{p}");
        assert!(num(&p["mac"], "mac") > 0.9, "{p}");
        assert_eq!(p["poor"], false, "{p}");
    }
    assert_eq!(j["thresholds"]["source"], "common practice");
    assert_files(&out, &["correlation.json", "correlation.svg"]);
}

#[test]
fn correlate_against_itself_gives_the_identity() {
    let tmp = temp();
    let model = example("fan-shaft.json");
    let (r, _) = correlate(
        tmp.path(),
        &[
            model.as_os_str(),
            "--against".as_ref(),
            model.as_os_str(),
            "--count".as_ref(),
            "8".as_ref(),
            "--json".as_ref(),
        ],
    );
    r.assert_success("correlate --against");
    for (i, p) in r.json()["pairs"].as_array().expect("pairs[]").iter().enumerate() {
        // MAC(φ, φ) = 1 (definition), frequency error 0.
        assert_eq!(p["model_mode"], i + 1, "{p}");
        assert!((num(&p["mac"], "mac") - 1.0).abs() < 1e-9, "{p}");
        assert!(num(&p["frequency_error"], "frequency_error").abs() < 1e-12, "{p}");
    }
}

/// Checks a clean rejection of `correlate`: exit code 1, the fragments, nothing written.
fn assert_correlate_rejected(csv: Option<&str>, against: Option<&Path>, expect: &[&str]) {
    let tmp = temp();
    let dir = tmp.path();
    let model = example("fan-shaft.json");
    let file = dir.join("measured.csv");
    let mut args = vec![model.as_os_str()];
    if let Some(text) = csv {
        std::fs::write(&file, text).expect("write the CSV");
        args.extend([OsStr::new("--measured"), file.as_os_str()]);
    }
    if let Some(b) = against {
        args.extend([OsStr::new("--against"), b.as_os_str()]);
    }
    let (r, out) = correlate(dir, &args);
    let context = format!("--- exit code {:?}\n--- stderr\n{}", r.code, r.stderr);
    assert!(!r.stderr.contains("panicked"), "panic: {context}");
    assert_eq!(r.code, Some(ERROR_EXIT_CODE), "exit code: {context}");
    for e in expect {
        assert!(r.stderr.contains(e), "the message lacks {e:?}: {context}");
    }
    assert!(entries(&out).is_empty(), "files left: {context}");
}

const CSV_HEADER: &str = "point,x,y,z,direction_x,direction_y,direction_z,mode_a\nfrequency_hz,,,,,,,60\n";

#[test]
fn correlate_rejects_bad_measured_files() {
    assert_correlate_rejected(
        Some("point,x,y,z,direction_x,direction_y,direction_z,mode_a,colour\nfrequency_hz,,,,,,,60,1\n"),
        None,
        &["measured.csv", "column 9 \"colour\" is not known", "mode_<name>"],
    );
    assert_correlate_rejected(
        Some("point,x,y,z,dx,dy,dz,mode_a\n"),
        None,
        &["measured.csv", "column 5 of the header is \"dx\""],
    );
    assert_correlate_rejected(
        Some(&format!("{CSV_HEADER}p1,0.1,0,0,0,0,1,0.2\np2,0.5,0.3,0,0,0,1,0.5\np3,0.9,0,0,0,0,1,0.9\n")),
        None,
        &["measured point \"p2\"", "0.3000 m from the nearest node", "within 0.0160 m"],
    );
    assert_correlate_rejected(
        Some(&format!("{CSV_HEADER}p1,0.1,0,0,0,0,1,0.2\np2,0.5,0,0,0,0,1,0.5\n")),
        None,
        &["2 measured point(s)", "at least 3"],
    );
    assert_correlate_rejected(
        Some(&format!("{CSV_HEADER}p1,0.1,0,0,0,0,1,0.2\np2,0.5,0,0,0,0,1,NaN\np3,0.9,0,0,0,0,1,0.9\n")),
        None,
        &["line 4, column 8 (mode_a)", "NaN is not a finite number"],
    );
    assert_correlate_rejected(
        Some(
            "point,x,y,z,direction_x,direction_y,direction_z,mode_a\np1,0.1,0,0,0,0,1,0.2\np2,0.5,0,0,0,0,1,0.5\np3,0.9,0,0,0,0,1,0.9\n",
        ),
        None,
        &["no frequency_hz row"],
    );
}

#[test]
fn correlate_refuses_a_second_model_with_another_mesh() {
    assert_correlate_rejected(
        None,
        Some(&example("gantry-boom.json")),
        &["the meshes differ", "node 1", "has no node of", "same mesh"],
    );
}

// ---------------------------------------------------------------------------------------------
// Mesh import and export
// ---------------------------------------------------------------------------------------------

/// A legacy ASCII VTK file: two quads (property 1) of a 0.2 × 0.1 m plate and one line
/// (property 2) hanging below; `cell_types` and `cell_data` replace those sections.
fn plate_vtk(cell_types: &str, cell_data: &str) -> String {
    format!(
        "# vtk DataFile Version 4.2\nInvented test plate\nASCII\nDATASET UNSTRUCTURED_GRID\n\
         POINTS 7 double\n0 0 0 0.1 0 0 0.2 0 0 0 0.1 0 0.1 0.1 0 0.2 0.1 0 0.1 0.1 -0.1\n\
         CELLS 3 13\n4 0 1 4 3\n4 1 2 5 4\n2 4 6\nCELL_TYPES 3\n{cell_types}\n{cell_data}"
    )
}

const PLATE_TYPES: &str = "9\n9\n3";
const PLATE_DATA: &str = "CELL_DATA 3\nSCALARS property int 1\nLOOKUP_TABLE default\n1 1 2\n";

/// A model importing `plate.vtk`, clamped along x = 0.
fn mesh_model() -> Value {
    json!({
        "title": "Invented test model: a small plate with a hanging rod, imported from VTK",
        "materials": {"s": {"youngs_modulus": 2.0e11, "poisson_ratio": 0.3, "density": 7800}},
        "sections": {"rod": {"circle": {"diameter": 0.01}}},
        "meshes": [{"name": "plate", "file": "plate.vtk", "properties": {
            "1": {"shell": {"thickness": 0.002, "material": "s"}},
            "2": {"beam": {"section": "rod", "material": "s"}}}}],
        "regions": {"edge": {"box": [[0, 0, -1], [0, 1, 1]]}},
        "supports": [{"at": {"region": "edge"}, "fixed": "clamped"}]
    })
}

/// Writes `model.json` and `plate.vtk`, runs `check`, `modes` and `export-mesh` on them and checks
/// that each fails cleanly, naming the model file and every `expect` fragment, writing nothing.
fn assert_mesh_rejected(model: &Value, vtk: &str, expect: &[&str]) {
    for command in ["check", "modes", "export-mesh"] {
        let tmp = temp();
        let dir = tmp.path();
        let path = dir.join("model.json");
        std::fs::write(&path, pretty(model)).expect("model written");
        std::fs::write(dir.join("plate.vtk"), vtk).expect("mesh written");
        let out = dir.join("out");
        let mut args = vec![OsStr::new(command), path.as_os_str()];
        if command != "check" {
            args.extend([OsStr::new("--out"), out.as_os_str()]);
        }
        let r = antinode(dir, &args);
        let context =
            format!("`antinode {command}`\n--- exit {:?}\n--- stdout\n{}\n--- stderr\n{}", r.code, r.stdout, r.stderr);
        assert!(!r.stderr.contains("panicked"), "panic: {context}");
        assert_eq!(r.code, Some(ERROR_EXIT_CODE), "exit code: {context}");
        assert!(r.stderr.starts_with("error: ") && r.stderr.contains("model.json"), "{context}");
        for e in expect {
            assert!(r.stderr.contains(e), "the message lacks {e:?}: {context}");
        }
        assert_eq!(entries(dir), set(&["model.json", "plate.vtk"]), "files left behind; {context}");
    }
}

#[test]
fn imported_mesh_model_checks_and_exports_to_the_same_modes() {
    let tmp = temp();
    let dir = tmp.path();
    let path = dir.join("model.json");
    std::fs::write(&path, pretty(&mesh_model())).expect("model written");
    std::fs::write(dir.join("plate.vtk"), plate_vtk(PLATE_TYPES, PLATE_DATA)).expect("mesh written");
    let r = antinode(dir, [OsStr::new("check"), path.as_os_str(), "--json".as_ref()]);
    r.assert_success("check of the imported model");
    let j = r.json();
    assert_eq!(j["nodes"].as_u64(), Some(7));
    assert_eq!(j["shells"].as_u64(), Some(2));
    assert_eq!(j["beams"].as_u64(), Some(1));
    // Export the imported model again and compare the modes of both.
    let out = dir.join("exported");
    let r = antinode(dir, [OsStr::new("export-mesh"), path.as_os_str(), "--out".as_ref(), out.as_os_str()]);
    r.assert_success("export-mesh");
    assert_files(&out, &["model-mesh.json", "model-mesh.vtu"]);
    let freqs = |model: &Path, out: &Path| -> Vec<f64> {
        let r = antinode(
            dir,
            [
                OsStr::new("modes"),
                model.as_os_str(),
                "--count".as_ref(),
                "4".as_ref(),
                "--json".as_ref(),
                "--out".as_ref(),
                out.as_os_str(),
            ],
        );
        r.assert_success("modes");
        r.json()["modes"]
            .as_array()
            .expect("modes array")
            .iter()
            .map(|m| num(&m["frequency_hz"], "frequency_hz"))
            .collect()
    };
    let a = freqs(&path, &dir.join("m1"));
    let b = freqs(&out.join("model-mesh.json"), &dir.join("m2"));
    assert_eq!(a.len(), 4);
    for (x, y) in a.iter().zip(&b) {
        // Same K and M (tests/mesh_round_trip.rs), so the same frequencies to round-off.
        assert!((x - y).abs() <= 1e-12 * x, "{x} Hz vs {y} Hz");
    }
}

#[test]
fn rejects_unsupported_cell_type() {
    let vtk = plate_vtk("9\n9\n10", PLATE_DATA).replace("2 4 6\n", "4 0 1 4 6\n").replace("CELLS 3 13", "CELLS 3 15");
    assert_mesh_rejected(&mesh_model(), &vtk, &["plate.vtk", "cell 2", "VTK cell type 10 (tetra)"]);
}

#[test]
fn rejects_mesh_without_property_tags() {
    assert_mesh_rejected(
        &mesh_model(),
        &plate_vtk(PLATE_TYPES, ""),
        &["plate.vtk", "cell data \"property\" is missing"],
    );
    let other = PLATE_DATA.replace("property", "tag");
    assert_mesh_rejected(&mesh_model(), &plate_vtk(PLATE_TYPES, &other), &["its cell arrays are \"tag\""]);
    let float = PLATE_DATA.replace("int", "float");
    assert_mesh_rejected(&mesh_model(), &plate_vtk(PLATE_TYPES, &float), &["not integers"]);
}

#[test]
fn rejects_unknown_mesh_property_id() {
    let data = PLATE_DATA.replace("1 1 2", "1 5 2");
    assert_mesh_rejected(
        &mesh_model(),
        &plate_vtk(PLATE_TYPES, &data),
        &["plate.vtk", "cell 1 (a quad) has property 5", "defined: 1, 2"],
    );
    let data = PLATE_DATA.replace("1 1 2", "1 1 1");
    assert_mesh_rejected(
        &mesh_model(),
        &plate_vtk(PLATE_TYPES, &data),
        &["cell 2 is a line with property 1, which is a shell property"],
    );
}

#[test]
fn rejects_missing_mesh_file_and_unknown_mesh_region() {
    let mut m = mesh_model();
    m["meshes"][0]["file"] = json!("elsewhere.vtu");
    assert_mesh_rejected(&m, &plate_vtk(PLATE_TYPES, PLATE_DATA), &["elsewhere.vtu", "does not exist"]);
    let mut m = mesh_model();
    m["regions"]["rod"] = json!({"mesh": "plate", "property": 3});
    assert_mesh_rejected(&m, &plate_vtk(PLATE_TYPES, PLATE_DATA), &["regions.rod.property", "selects no node"]);
}

/// Existing files in a folder antinode did not write are replaced only with --force; a folder
/// antinode wrote before is its own.
#[test]
fn outputs_replace_foreign_files_only_with_force() {
    let tmp = temp();
    let dir = tmp.path();
    let model = example("fan-shaft.json");
    let out = dir.join("results");
    std::fs::create_dir_all(&out).expect("folder");
    std::fs::write(out.join("modes.json"), "someone else's file").expect("file");
    let args =
        [OsStr::new("modes"), model.as_os_str(), "--count".as_ref(), "3".as_ref(), "--out".as_ref(), out.as_os_str()];
    let r = antinode(dir, args);
    assert_eq!(r.code, Some(ERROR_EXIT_CODE), "{}", r.stderr);
    assert!(r.stderr.contains("modes.json exists") && r.stderr.contains("--force"), "{}", r.stderr);
    assert_eq!(std::fs::read_to_string(out.join("modes.json")).expect("kept"), "someone else's file");
    assert_eq!(entries(&out), set(&["modes.json"]), "nothing else written");
    let mut forced = args.to_vec();
    forced.push("--force".as_ref());
    antinode(dir, &forced).assert_success("modes --force");
    assert!(out.join(OUTPUT_MARKER).is_file(), "the folder is marked as antinode's");
    // Now the folder is antinode's own: a second run replaces its files without --force.
    antinode(dir, args).assert_success("modes again into its own folder");
}

/// A stroke limit no design can meet: `design` writes its files with `"constraints_met": false`,
/// the best achievable stroke above the limit, and exits non-zero with the reason on standard
/// error (never a silent best effort). With a robust request the worst case is reported too, and
/// the trade-off masses give one point each and `trade-off.svg`.
#[test]
fn design_reports_an_unmet_stroke_limit() {
    let tmp = temp();
    let dir = tmp.path();
    let mut m = base();
    m["study"]["absorber_design"]["stroke_limit"] = json!(1e-12);
    m["study"]["absorber_design"]["uncertainty"] = json!({"frequency_scatter": 0.05});
    m["study"]["absorber_design"]["trade_off_masses"] = json!([0.02, 0.05]);
    let model = dir.join("model.json");
    std::fs::write(&model, pretty(&m)).expect("model written");
    let out = dir.join("out");
    let r =
        antinode(dir, [OsStr::new("design"), model.as_os_str(), "--json".as_ref(), "--out".as_ref(), out.as_os_str()]);
    assert_eq!(r.code, Some(1), "non-zero exit:\n{}\n{}", r.stdout, r.stderr);
    assert!(r.stderr.contains("constraints not met") && r.stderr.contains("stroke limit"), "{}", r.stderr);
    let j = r.json();
    assert_eq!(j["constraints_met"], json!(false));
    let best = num(&j["constraints"]["best_achievable_stroke_m"], "best achievable stroke");
    assert!(best > 1e-12, "{best}");
    assert_eq!(j["scenarios"].as_array().map(Vec::len), Some(3), "three frequency levels");
    assert!(num(&j["worst_case_peak_after"], "worst case") >= num(&j["peak_after"], "nominal") * (1.0 - 1e-9));
    let a = &j["absorbers"][0];
    for f in ["max_stroke_m", "max_spring_force_n", "worst_case_stroke_m", "static_sag_m"] {
        assert!(num(&a[f], f) > 0.0, "{f}");
    }
    let written: Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("design-result.json")).expect("result"))
            .expect("result is JSON");
    assert_eq!(written["constraints_met"], json!(false));
    // The trade-off curve: one point per mass, and its plot.
    assert_eq!(j["trade_off"].as_array().map(Vec::len), Some(2));
    assert!(out.join("trade-off.svg").is_file(), "trade-off.svg written");
}

#[test]
fn respond_verify_checks_against_the_direct_solve() {
    // `respond --verify`: the modal result against the direct sparse solve, with and without the
    // model's absorber, at the requested number of band frequencies plus natural frequencies and
    // peaks. The base model keeps modes to twice the band top: 1 % acceptance (issue 7).
    let tmp = temp();
    let dir = tmp.path();
    let model = dir.join("model.json");
    std::fs::write(&model, pretty(&base())).expect("model written");
    let out = dir.join("out");
    let r = antinode(
        dir,
        [
            OsStr::new("respond"),
            model.as_os_str(),
            "--json".as_ref(),
            "--verify".as_ref(),
            "--verify-count".as_ref(),
            "20".as_ref(),
            "--out".as_ref(),
            out.as_os_str(),
        ],
    );
    r.assert_success("respond --verify");
    let j = r.json();
    let v = &j["verification"];
    assert!(num(&v["frequencies_checked"], "frequencies_checked") >= 20.0);
    let cases = v["cases"].as_array().expect("verification.cases[]");
    assert_eq!(cases.len(), 2, "without and with the absorber");
    for c in cases {
        assert!(num(&c["max_relative_difference"], "max_relative_difference") < 0.01, "{c}");
        assert!(num(&c["max_direct_residual"], "max_direct_residual") < 1e-8, "{c}");
        assert!(c["points"].as_array().map(Vec::len).unwrap_or(0) >= 20);
    }
    assert!(j["peak_before"].is_number(), "the existing fields stay");
    // --verify-count needs --verify, and at least 2.
    let r = antinode(dir, [OsStr::new("respond"), model.as_os_str(), "--verify-count".as_ref(), "5".as_ref()]);
    assert_eq!(r.code, Some(2), "clap usage error: {}", r.stderr);
    let r = antinode(
        dir,
        [OsStr::new("respond"), model.as_os_str(), "--verify".as_ref(), "--verify-count".as_ref(), "1".as_ref()],
    );
    assert_eq!(r.code, Some(2), "clap usage error: {}", r.stderr);
}

/// The base model with a rubber elastomer on its absorber, evaluated at 20 °C.
fn with_elastomer(m: &mut Value) {
    m["absorbers"][0].as_object_mut().expect("absorber").remove("damping");
    m["absorbers"][0]["elastomer"] = json!("rubber");
    m["study"]["elastomers"] = json!({"rubber": {
        "frequency_hz": [10, 100, 1000], "temperatures_c": [-20, 20, 60],
        "storage_factor": [[1.5, 1.8, 2.2], [1.0, 1.1, 1.3], [0.8, 0.85, 0.9]],
        "loss_factor": [[0.4, 0.45, 0.5], [0.2, 0.25, 0.3], [0.1, 0.12, 0.15]]}});
    m["study"]["temperatures_c"] = json!([20, -10, 50]);
}

#[test]
fn respond_runs_elastomer_temperature_cases_and_design_declines_them() {
    let tmp = temp();
    let dir = tmp.path();
    let mut m = base();
    with_elastomer(&mut m);
    let model = dir.join("model.json");
    std::fs::write(&model, pretty(&m)).expect("model written");
    let out = dir.join("out");
    let r = antinode(
        dir,
        [
            OsStr::new("respond"),
            model.as_os_str(),
            "--json".as_ref(),
            "--verify".as_ref(),
            "--out".as_ref(),
            out.as_os_str(),
        ],
    );
    r.assert_success("respond with an elastomer");
    let j = r.json();
    let cases = j["temperature_cases"].as_array().expect("temperature_cases[]");
    assert_eq!(cases.len(), 3);
    assert!((num(&cases[0]["peak_after"], "peak_after") - num(&j["peak_after"], "peak_after")).abs() < 1e-12);
    // The modal route with the frequency-dependent spring against the direct solve (issue 7: 1 %).
    assert!(num(&j["verification"]["max_relative_difference"], "max_relative_difference") < 0.01);
    assert_rejected(&pretty(&m), &["design"], &["elastomer", "respond"]);
}

#[test]
fn bad_damping_elastomer_and_excitation_are_rejected() {
    // Elastomer tables: frequencies not ascending, a negative loss factor, a row of the wrong
    // length; a temperature outside the table; an elastomer that does not exist; an absorber with
    // an elastomer and a damping too.
    type Edit = Box<dyn Fn(&mut Value)>;
    let cases: Vec<(Edit, Vec<&str>)> = vec![
        (
            Box::new(|m| m["study"]["elastomers"]["rubber"]["frequency_hz"] = json!([10, 1000, 100])),
            vec!["study.elastomers.rubber.frequency_hz[2]", "ascending"],
        ),
        (
            Box::new(|m| m["study"]["elastomers"]["rubber"]["loss_factor"][1][2] = json!(-0.1)),
            vec!["study.elastomers.rubber.loss_factor[1][2]", "-0.1", "0 or more"],
        ),
        (
            Box::new(|m| m["study"]["elastomers"]["rubber"]["storage_factor"][0] = json!([1.0, 2.0])),
            vec!["study.elastomers.rubber.storage_factor[0]", "one value per frequency"],
        ),
        (
            Box::new(|m| m["study"]["temperatures_c"] = json!([20, 80])),
            vec!["study.temperatures_c[1]", "80", "-20 to 60"],
        ),
        (
            Box::new(|m| m["absorbers"][0]["elastomer"] = json!("cork")),
            vec!["absorbers[0].elastomer", "cork", "rubber"],
        ),
        (Box::new(|m| m["absorbers"][0]["loss_factor"] = json!(0.1)), vec!["absorbers[0]", "elastomer"]),
        (
            Box::new(|m| m["study"].as_object_mut().expect("study").remove("temperatures_c").map(|_| ()).unwrap_or(())),
            vec!["study.temperatures_c", "temperatures"],
        ),
    ];
    for (edit, expect) in cases {
        let mut m = base();
        with_elastomer(&mut m);
        edit(&mut m);
        assert_rejected(&pretty(&m), &["check", "respond"], &expect);
    }
    // Structure damping out of range.
    assert_edit_rejected(
        |m| m["study"]["damping"] = json!({"modal_ratio_table": [[100, 0.02], [50, 0.01]]}),
        &["study.damping.modal_ratio_table[1]", "ascending"],
    );
    assert_edit_rejected(
        |m| m["study"]["damping"] = json!({"loss_factor": -0.02}),
        &["study.damping", "loss_factor", "-0.02"],
    );
    assert_edit_rejected(
        |m| m["study"]["damping"] = json!({"modal_ratio_per_mode": [0.01, 1.5]}),
        &["study.damping.modal_ratio_per_mode[1]", "1.5"],
    );
    // A force where every DOF along it is fixed, zero or negative band frequencies.
    assert_edit_rejected(
        |m| m["study"]["excitation"][0]["at"] = json!({"line": "shaft", "at": 0.0}),
        &["study.excitation[0].at", "fixed"],
    );
    assert_edit_rejected(|m| m["study"]["band_hz"] = json!([-5, 100]), &["study.band_hz", "[-5, 100]"]);
    assert_edit_rejected(|m| m["study"]["band_hz"] = json!([0, 0]), &["study.band_hz", "[0, 0]"]);
    // spread needs a region.
    assert_edit_rejected(|m| m["study"]["excitation"][0]["spread"] = json!(true), &["study.excitation[0]", "region"]);
}

#[test]
fn structure_damping_block_is_verified_against_the_direct_solve() {
    // Rayleigh damping and a loss factor are exact in the direct solve (sparse C); the modal
    // route agrees within 1 % (issue 7).
    let tmp = temp();
    let dir = tmp.path();
    let mut m = base();
    m["study"]["damping"] = json!({"rayleigh_alpha": 3.0, "rayleigh_beta": 1e-6, "loss_factor": 0.01});
    let model = dir.join("model.json");
    std::fs::write(&model, pretty(&m)).expect("model written");
    let out = dir.join("out");
    let r = antinode(
        dir,
        [
            OsStr::new("respond"),
            model.as_os_str(),
            "--json".as_ref(),
            "--verify".as_ref(),
            "--out".as_ref(),
            out.as_os_str(),
        ],
    );
    r.assert_success("respond with a damping block");
    assert!(num(&r.json()["verification"]["max_relative_difference"], "max_relative_difference") < 0.01);
}

/// An invented pinned-pinned aluminium tube shaft (1 m, 50 × 2 mm) with two running-speed orders.
fn shaft_with_orders(top_rpm: f64) -> Value {
    json!({
        "title": "Invented test shaft: aluminium tube on two pins with unbalance and a four-blade rotor",
        "materials": {"al": {"youngs_modulus": 7.0e10, "poisson_ratio": 0.33, "density": 2700}},
        "sections": {"tube": {"circular_tube": {"outer_diameter": 0.05, "wall_thickness": 0.002}}},
        "lines": [{"name": "shaft", "from": [0, 0, 0], "to": [1, 0, 0], "elements": 30,
                   "section": "tube", "material": "al"}],
        "supports": [{"at": {"line": "shaft", "at": 0.0}, "fixed": ["ux", "uy", "uz", "rx"]},
                     {"at": {"line": "shaft", "at": 1.0}, "fixed": ["uy", "uz"]}],
        "absorbers": [{"name": "insert", "at": {"line": "shaft", "at": 0.5}, "direction": "z",
                       "mass": 0.05, "stiffness": 2.0e4, "damping": 2.0}],
        "study": {
            "modal_damping_ratio": 0.01,
            "rpm_range": [600, top_rpm],
            "orders": [
                {"name": "unbalance", "order": 1, "at": {"line": "shaft", "at": 0.4}, "direction": "z",
                 "amplitude": 2.0, "amplitude_law": "rpm_squared"},
                {"name": "blades", "order": 4, "at": {"line": "shaft", "at": 0.4}, "direction": "z",
                 "amplitude_table": [[0, 0.5], [10000, 1.5]]}
            ],
            "response_points": [{"name": "middle", "at": {"line": "shaft", "at": 0.5}, "direction": "z"}]
        }
    })
}

#[test]
fn respond_sweeps_orders_lists_crossings_and_states_the_critical_speed_margin() {
    // Pinned-pinned Euler–Bernoulli tube: f₁ = (π/2L²)√(EI/ρA) (Blevins, Formulas for Natural
    // Frequency and Mode Shape, table 8-1). Top speed 0.9 × 60 f₁: the margin (n_c − n_max)/n_max
    // is 1/0.9 − 1 = 11.1 %, below the 20 % of common practice, so the text output warns.
    let (e, rho, d, t) = (7.0e10_f64, 2700.0_f64, 0.05_f64, 0.002_f64);
    let di = d - 2.0 * t;
    let i = std::f64::consts::PI / 64.0 * (d.powi(4) - di.powi(4));
    let a = std::f64::consts::PI / 4.0 * (d * d - di * di);
    let f1 = std::f64::consts::PI / 2.0 * (e * i / (rho * a)).sqrt();
    let top = (0.9 * 60.0 * f1).round();
    let tmp = temp();
    let dir = tmp.path();
    let model = dir.join("shaft.json");
    std::fs::write(&model, pretty(&shaft_with_orders(top))).expect("model written");
    let out = dir.join("out");
    let r =
        antinode(dir, [OsStr::new("respond"), model.as_os_str(), "--json".as_ref(), "--out".as_ref(), out.as_os_str()]);
    r.assert_success("respond with orders");
    let j = r.json();
    let s = &j["speed"];
    let c = &s["critical_speed"];
    let critical = num(&c["critical_rpm"], "critical_rpm");
    assert!((critical / (60.0 * f1) - 1.0).abs() < 2e-3, "critical speed {critical} against 60 f1 = {}", 60.0 * f1);
    let margin = num(&c["margin"], "margin");
    assert!((margin - (critical - top) / top).abs() < 1e-12, "margin {margin}");
    assert_eq!(c["inside_range"], json!(false));
    assert_eq!(num(&c["mode"], "mode"), 1.0);
    // Crossings: order 4 meets the first bending pair at 15 f₁ rpm; order 1 meets nothing below the top.
    let crossings = s["crossings"].as_array().expect("crossings");
    assert!(!crossings.is_empty());
    for x in crossings {
        let (k, f, n) = (num(&x["order"], "order"), num(&x["frequency_hz"], "f"), num(&x["rpm"], "rpm"));
        assert!((k * n / 60.0 - f).abs() < 1e-9 * f, "crossing {x}");
        assert!((600.0..=top).contains(&n), "crossing outside the range: {x}");
    }
    assert!(crossings.iter().any(|x| x["order_name"] == json!("blades") && num(&x["mode"], "mode") == 1.0));
    // The blade order peaks at its crossing with mode 1 and the absorber lowers it.
    let blades = &s["orders"][1];
    let before = num(&blades["peak_before"]["value"], "peak_before");
    let after = num(&blades["peak_after"]["value"], "peak_after");
    assert!((num(&blades["peak_before"]["rpm"], "rpm") / (critical / 4.0) - 1.0).abs() < 2e-3);
    assert!(after < before, "absorber lowers the blade order peak: {after} vs {before}");
    assert!(num(&blades["absorbers"][0]["max_stroke_m"], "stroke") > 0.0);
    assert_files(&out, &["response.csv", "frf.svg", "response.json", "speed.csv", "speed.svg", "interference.svg"]);
    let csv = std::fs::read_to_string(out.join("speed.csv")).expect("speed.csv");
    assert!(csv.starts_with("rpm,unbalance frequency [Hz],unbalance middle before [m],unbalance middle after [m]"));
    // Text output: the warning and the caution.
    let r = antinode(dir, [OsStr::new("respond"), model.as_os_str(), "--out".as_ref(), out.as_os_str()]);
    r.assert_success("respond with orders, text");
    assert!(r.stdout.contains("critical speed: WARNING"), "{}", r.stdout);
    assert!(r.stdout.contains("Caution"), "{}", r.stdout);
    // --quantity accelerance: peak values are ω² times the displacement at the same speed.
    let r = antinode(
        dir,
        [
            OsStr::new("respond"),
            model.as_os_str(),
            "--json".as_ref(),
            "--quantity".as_ref(),
            "accelerance".as_ref(),
            "--out".as_ref(),
            out.as_os_str(),
        ],
    );
    r.assert_success("respond --quantity accelerance");
    let p = &r.json()["speed"]["orders"][0]["peak_before"];
    let w = 2.0 * std::f64::consts::PI * num(&p["frequency_hz"], "f");
    assert!((num(&p["value"], "value") / (w * w * num(&p["displacement_m"], "x")) - 1.0).abs() < 1e-12);
}

#[test]
fn bad_speed_ranges_and_orders_are_rejected() {
    let order = json!({"order": 1, "at": {"line": "shaft", "at": 0.3}, "direction": "z", "amplitude": 1});
    let o = order.clone();
    assert_edit_rejected(
        move |m| {
            m["study"]["rpm_range"] = json!([3000, 600]);
            m["study"]["orders"] = json!([o]);
        },
        &["study.rpm_range", "[3000, 600] is reversed", "0 < low < high"],
    );
    let o = order.clone();
    assert_edit_rejected(move |m| m["study"]["orders"] = json!([o]), &["study.orders", "give study.rpm_range"]);
    assert_edit_rejected(
        |m| m["study"]["rpm_range"] = json!([600, 3000]),
        &["study.orders", "rpm_range is given but no order"],
    );
    let mut o = order.clone();
    o["amplitude_table"] = json!([[1000, 1], [3000, 2]]);
    o.as_object_mut().expect("order").remove("amplitude");
    assert_edit_rejected(
        move |m| {
            m["study"]["rpm_range"] = json!([600, 3000]);
            m["study"]["orders"] = json!([o]);
        },
        &["study.orders[0].amplitude_table", "covers 1000-3000 rpm", "600-3000", "not extrapolated"],
    );
    let mut o = order.clone();
    o["at"] = json!({"line": "shaft", "at": 0.0});
    assert_edit_rejected(
        move |m| {
            m["study"]["rpm_range"] = json!([600, 3000]);
            m["study"]["orders"] = json!([o]);
        },
        &["study.orders[0].at", "every DOF along its direction is fixed"],
    );
    let mut o = order.clone();
    o["order"] = json!(0);
    assert_edit_rejected(
        move |m| {
            m["study"]["rpm_range"] = json!([600, 3000]);
            m["study"]["orders"] = json!([o]);
        },
        &["study.orders[0]", "order"],
    );
    let mut o = order;
    o["amplitude_table"] = json!([[0, 1], [5000, 2]]);
    assert_edit_rejected(
        move |m| {
            m["study"]["rpm_range"] = json!([600, 3000]);
            m["study"]["orders"] = json!([o]);
        },
        &["study.orders[0]", "amplitude (with amplitude_law) or as amplitude_table"],
    );
}

#[test]
fn design_and_respond_use_a_measured_frequency() {
    // Mode 1 of the base model is given a test value 5 % above the computed one: both reports list
    // the override, the design's target mode carries the measured frequency, and the text output
    // shows the table.
    let tmp = temp();
    let dir = tmp.path();
    let model = dir.join("model.json");
    std::fs::write(&model, pretty(&base())).expect("model written");
    let out = dir.join("out");
    let plain =
        antinode(dir, [OsStr::new("design"), model.as_os_str(), "--json".as_ref(), "--out".as_ref(), out.as_os_str()]);
    plain.assert_success("design without measured frequencies");
    let target = &plain.json()["targets"][0];
    let mode = target["mode"].as_u64().expect("targets[0].mode");
    let f_model = num(&target["frequency_hz"], "targets[0].frequency_hz");
    let mut m = base();
    m["study"]["measured_frequencies"] = json!([{"mode": mode, "frequency_hz": 1.05 * f_model}]);
    std::fs::write(&model, pretty(&m)).expect("model written");
    let r =
        antinode(dir, [OsStr::new("design"), model.as_os_str(), "--json".as_ref(), "--out".as_ref(), out.as_os_str()]);
    r.assert_success("design with a measured frequency");
    let j = r.json();
    let o = &j["measured_frequencies"][0];
    assert_eq!(o["mode"].as_u64(), Some(mode));
    assert!((num(&o["model_hz"], "model_hz") / f_model - 1.0).abs() < 1e-12);
    assert!((num(&o["relative_change"], "relative_change") - 0.05).abs() < 1e-12);
    let t = j["targets"].as_array().expect("targets").iter().find(|t| t["mode"].as_u64() == Some(mode));
    let f_used = t.map(|t| num(&t["frequency_hz"], "frequency_hz")).unwrap_or_default();
    assert!((f_used / (1.05 * f_model) - 1.0).abs() < 1e-12, "target at the measured frequency: {f_used}");
    let text = antinode(dir, [OsStr::new("respond"), model.as_os_str(), "--out".as_ref(), out.as_os_str()]);
    text.assert_success("respond with a measured frequency");
    assert!(text.stdout.contains("measured frequencies used in place of the computed ones"), "{}", text.stdout);
    assert!(text.stdout.contains("+5.00"), "{}", text.stdout);
}

#[test]
fn rejects_bad_measured_frequency_entries() {
    assert_edit_rejected(
        |m| m["study"]["measured_frequencies"] = json!([{"mode": 0, "frequency_hz": 30}]),
        &["study.measured_frequencies[0].mode", "numbered from 1"],
    );
    assert_edit_rejected(
        |m| {
            m["study"]["measured_frequencies"] =
                json!([{"mode": 1, "frequency_hz": 30}, {"mode": 1, "frequency_hz": 31}])
        },
        &["study.measured_frequencies[1].mode", "given twice"],
    );
    assert_edit_rejected(
        |m| m["study"]["measured_frequencies"] = json!([{"mode": 1, "frequency_hz": -3}]),
        &["study.measured_frequencies[0]", "frequency_hz"],
    );
}

#[test]
fn rejects_bad_base_excitations() {
    assert_edit_rejected(
        |m| m["study"]["base_excitation"] = json!({"direction": "z"}),
        &["study.base_excitation", "together with study.excitation"],
    );
    assert_edit_rejected(
        |m| {
            m["study"].as_object_mut().map(|s| s.remove("excitation"));
            m["study"]["base_excitation"] = json!({"direction": "z", "acceleration": 0});
        },
        &["study.base_excitation", "acceleration"],
    );
    assert_edit_rejected(
        |m| {
            m["study"].as_object_mut().map(|s| s.remove("excitation"));
            m["supports"] = json!([]);
            m["rigid_body_modes"] = json!(6);
            m["study"]["base_excitation"] = json!({"direction": "z"});
        },
        &["study.base_excitation", "no support and no spring to ground"],
    );
}

#[test]
fn respond_runs_a_base_excitation() {
    let tmp = temp();
    let dir = tmp.path();
    let model = dir.join("model.json");
    let mut m = base();
    m["study"].as_object_mut().map(|s| s.remove("excitation"));
    m["study"]["base_excitation"] = json!({"direction": "z", "acceleration": 9.81, "psd": [[20, 0.01], [400, 0.01]]});
    std::fs::write(&model, pretty(&m)).expect("model written");
    let out = dir.join("out");
    let r = antinode(
        dir,
        [
            OsStr::new("respond"),
            model.as_os_str(),
            "--json".as_ref(),
            "--verify".as_ref(),
            "--out".as_ref(),
            out.as_os_str(),
        ],
    );
    r.assert_success("respond with a base excitation");
    let j = r.json();
    assert!(j["excitation"].as_str().is_some_and(|e| e.contains("base acceleration")), "{}", j["excitation"]);
    assert!((num(&j["reference_force_n"], "reference amplitude") - 9.81).abs() < 1e-12);
    assert!(num(&j["random"]["rms_before_m"][0], "random RMS") > 0.0);
    assert!(num(&j["verification"]["max_relative_difference"], "verification") < 0.01);
}
