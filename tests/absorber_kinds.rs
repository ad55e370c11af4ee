//! Absorber kinds: ring inserts on shell tubes (coupling only to n = 0 and n = 1 ring motion, and
//! bending coupling equal to that of the equivalent beam tube) and isotropic lateral absorbers on
//! an axisymmetric tube (both members of a bending pair served alike).

mod common;

use antinode::mesh::{AbsorberKind, Structure};
use antinode::placement::{StudyModel, design, ring_insert_warnings};
use antinode::solver::{EigenParams, ModalSolution, ModeKind, ModeRequest, System, mode_insight, solve_modes};
use common::*;

/// A free-free thin steel tube along X (mid radius 49 mm, wall 2 mm, 1.2 m long) as shells or as
/// beams, with a study whose design block is `design`.
fn tube_json(fidelity: &str, design: &str) -> String {
    let around = if fidelity == "shell" { r#", "around": 32"# } else { "" };
    format!(
        r#"{{
  "title": "Invented scenario: free-free steel tube",
  "materials": {{"steel": {{"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}}}},
  "tubes": [{{"name": "pipe", "length": 1.2, "outer_diameter": 0.1, "wall_thickness": 0.002, "material": "steel",
             "fidelity": "{fidelity}"{around}, "along": 40}}],
  "study": {{
    "band_hz": [50, 1200],
    "max_mode_frequency_hz": 1500,
    "excitation": [{{"at": {{"tube": "pipe", "at": 0.0}}, "direction": "y", "amplitude": 1}}],
    "response_points": [{{"at": {{"tube": "pipe", "at": 0.0}}, "direction": "y"}}],
    "absorber_design": {design}
  }}
}}"#
    )
}

struct Solved {
    structure: Structure,
    system: System,
    modes: ModalSolution,
}

fn solve(json: &str) -> Solved {
    let structure = structure(json);
    let system = system(&structure);
    let study = structure.study.clone().unwrap_or_else(|| panic!("study"));
    let modes = solve_modes(
        &system,
        ModeRequest::Band { low_hz: 0.0, high_hz: study.max_mode_frequency_hz },
        &EigenParams::default(),
    )
    .unwrap_or_else(|e| panic!("{e}"));
    Solved { structure, system, modes }
}

fn study_model(s: &Solved) -> StudyModel {
    let study = s.structure.study.clone().unwrap_or_else(|| panic!("study"));
    StudyModel::build(&s.structure, &s.system, &s.modes, &study, true).unwrap_or_else(|e| panic!("{e}"))
}

/// Largest mass ratio per kilogram over the study's candidates on mode `r`, in 1/kg.
fn best_mu_per_kg(sm: &StudyModel, r: usize) -> f64 {
    sm.candidates.iter().map(|c| c.mass_ratio_per_kg(&sm.model, r)).fold(0.0, f64::max)
}

const RING_DESIGN: &str = r#"{"kind": "ring_insert", "mass_each": 0.1, "targets": [TARGET],
    "candidates": [{"tube": "pipe", "from": 0.1, "to": 0.9}], "directions": ["y", "z"]}"#;

#[test]
fn ring_insert_does_not_couple_to_ovaling_and_says_so() {
    // Classify first (it orients the repeated pairs), then build the study on those shapes.
    let mut s = solve(&tube_json("shell", &RING_DESIGN.replace("TARGET", "7")));
    let insight =
        mode_insight(&s.structure, &s.system, &mut s.modes, &Default::default()).unwrap_or_else(|e| panic!("{e}"));
    let classes: Vec<_> = insight.modes.iter().map(|m| m.class.clone()).collect();
    let r = (0..classes.len())
        .find(|&r| classes[r].kind == ModeKind::Ovaling && classes[r].n == Some(2))
        .unwrap_or_else(|| panic!("no n = 2 ovaling mode below 1500 Hz"));
    let sm = study_model(&s);
    let ring = best_mu_per_kg(&sm, r);
    // A point absorber on the wall, radially at angle 0 of the middle ring, for comparison.
    let t = &s.structure.tubes[0];
    let wall = t.rings[t.nearest_station(0.5)][0];
    let wall_json = tube_json(
        "shell",
        &format!(
            r#"{{"mass_each": 0.1, "candidates": [{{"node": {}}}], "directions": ["y", "z"]}}"#,
            s.structure.nodes[wall].id
        ),
    );
    let mut w = solve(&wall_json);
    mode_insight(&w.structure, &w.system, &mut w.modes, &Default::default()).unwrap_or_else(|e| panic!("{e}"));
    let wall_mu = best_mu_per_kg(&study_model(&w), r);
    // A rigid body on a uniform ring moves with the ring's average motion, which holds only the
    // n = 0 and n = 1 harmonics (the averaged translation of harmonic n is a sum of cos((n ± 1)θ_k)
    // over equally spaced θ_k: zero unless n = 1; derivation in `ring_insert_warnings`, common
    // practice). So the ring insert's coupling is zero up to round-off (1e-10 of the wall's; the
    // mesh is exactly periodic around the axis), while the wall point couples fully.
    assert!(wall_mu > 0.01, "wall point mass ratio per kg {wall_mu}");
    assert!(ring < 1e-10 * wall_mu, "ring insert {ring} 1/kg against wall point {wall_mu} 1/kg on mode {}", r + 1);
    // And the tool says so: a warning naming the mode and its class.
    let mut spec = s.structure.study.clone().and_then(|st| st.design).unwrap_or_else(|| panic!("design"));
    assert_eq!(spec.kind, AbsorberKind::RingInsert);
    spec.targets = antinode::mesh::TargetSpec::Modes(vec![r + 1]);
    let d = design(&sm, &spec, &s.structure).unwrap_or_else(|e| panic!("{e}"));
    let warnings = ring_insert_warnings(&spec, &d, &sm, &classes);
    assert_eq!(warnings.len(), 1, "{warnings:?}");
    assert!(
        warnings[0].contains(&format!("target mode {}", r + 1))
            && warnings[0].contains("ovaling")
            && warnings[0].contains("n = 2"),
        "{}",
        warnings[0]
    );
}

#[test]
fn ring_insert_on_bending_couples_like_a_point_absorber_on_the_beam_tube() {
    let shell = solve(&tube_json("shell", &RING_DESIGN.replace("TARGET", "7")));
    let sm_shell = study_model(&shell);
    let beam = solve(&tube_json(
        "beam",
        r#"{"mass_each": 0.1, "candidates": [{"tube": "pipe", "from": 0.1, "to": 0.9}], "directions": ["y", "z"]}"#,
    ));
    let sm_beam = study_model(&beam);
    // Modes 7 and 8 are the first bending pair of both (six rigid-body modes first). The pair's
    // orientation is arbitrary, so compare the pair sum of φ_y² + φ_z², invariant under rotation.
    let pair_mu = |sm: &StudyModel, at: usize| -> f64 {
        sm.candidates
            .iter()
            .filter(|c| c.node == at)
            .map(|c| (6..8).map(|r| c.mass_ratio_per_kg(&sm.model, r)).sum::<f64>())
            .sum()
    };
    for fraction in [0.5, 0.3] {
        let ring = shell
            .structure
            .study
            .as_ref()
            .and_then(|st| st.design.as_ref())
            .and_then(|d| {
                d.rings.iter().min_by(|a, b| (a.fraction - fraction).abs().total_cmp(&(b.fraction - fraction).abs()))
            })
            .unwrap_or_else(|| panic!("ring"))
            .node;
        let t = &beam.structure.tubes[0];
        let node = t.rings[t.nearest_station(fraction)][0];
        let mu_shell = pair_mu(&sm_shell, ring);
        let mu_beam = pair_mu(&sm_beam, node);
        // The ring's average lateral motion is the beam deflection, and the shell and beam tubes
        // agree on the first bending pair within 1 % in frequency (tests/shell_tubes.rs, Timoshenko
        // beam against shells). The mass ratio per kg φ² carries the shape and the modal mass
        // (same mass per length), so within 3 % (common practice).
        assert_rel(mu_shell, mu_beam, 0.03, &format!("bending pair mass ratio per kg at {fraction} of the length"));
    }
}

/// A pinned-pinned beam tube along X (an axisymmetric section: the bending modes come in exactly
/// repeated pairs) forced and read at 0.4 of its length along `force`, with `absorbers` (JSON).
fn lateral_json(force: &str, absorbers: &str) -> String {
    format!(
        r#"{{
  "title": "Invented scenario: pinned-pinned steel tube",
  "materials": {{"steel": {{"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}}}},
  "tubes": [{{"name": "pipe", "length": 1.2, "outer_diameter": 0.1, "wall_thickness": 0.002, "material": "steel",
             "along": 40, "ends": {{"start": "pinned", "end": "pinned"}}}}],
  "rigid_body_modes": 1,
  "absorbers": {absorbers},
  "study": {{
    "band_hz": [100, 300],
    "max_mode_frequency_hz": 3000,
    "excitation": [{{"at": {{"tube": "pipe", "at": 0.4}}, "direction": "{force}", "amplitude": 1}}],
    "response_points": [{{"at": {{"tube": "pipe", "at": 0.4}}, "direction": "{force}"}}]
  }}
}}"#
    )
}

/// Highest band peak of the study of `json` with the model's absorbers, in m/N.
fn band_peak(json: &str) -> f64 {
    let s = solve(json);
    let study = s.structure.study.clone().unwrap_or_else(|| panic!("study"));
    let sm = StudyModel::build(&s.structure, &s.system, &s.modes, &study, false).unwrap_or_else(|e| panic!("{e}"));
    sm.peak(sm.band_hz[0], sm.band_hz[1], &sm.existing).receptance
}

#[test]
fn lateral_absorber_serves_both_members_of_a_bending_pair() {
    // First bending pair of the tube near 190 Hz; an absorber of 0.2 kg at midspan tuned near it.
    let absorber = |second: &str| {
        format!(
            r#"[{{"at": {{"tube": "pipe", "at": 0.5}}, "direction": "y"{second}, "mass": 0.2, "stiffness": 2.5e5,
                 "damping": 70}}]"#
        )
    };
    let lateral = absorber(r#", "second_direction": "z""#);
    let one = absorber("");
    let (bare_y, bare_z) = (band_peak(&lateral_json("y", "[]")), band_peak(&lateral_json("z", "[]")));
    let (lat_y, lat_z) = (band_peak(&lateral_json("y", &lateral)), band_peak(&lateral_json("z", &lateral)));
    let (one_y, one_z) = (band_peak(&lateral_json("y", &one)), band_peak(&lateral_json("z", &one)));
    // An isotropic spring on an axisymmetric tube: the y and z problems are the same problem
    // rotated by 90° (common practice), so the two members are reduced by the same amount, to the
    // accuracy of the peak search (1e-6).
    assert_rel(bare_z, bare_y, 1e-6, "bare peaks of the two members");
    assert_rel(lat_z, lat_y, 1e-6, "peaks of the two members with the lateral absorber");
    assert!(lat_y < 0.5 * bare_y, "the lateral absorber lowers the pair: {lat_y} against {bare_y}");
    // A one-direction absorber along y does nothing for motion along z: the z member is untouched
    // (the directions decouple, common practice), while the y member gets the lateral absorber's
    // reduction exactly (the second direction does not act on y motion).
    assert_rel(one_z, bare_z, 1e-9, "z member with a y-only absorber");
    assert_rel(one_y, lat_y, 1e-9, "y member with a y-only absorber against the lateral one");
}

#[test]
fn lateral_absorber_mass_counts_once() {
    let s = structure(&lateral_json(
        "y",
        r#"[{"at": {"tube": "pipe", "at": 0.5}, "direction": "y", "second_direction": "z", "mass": 0.2,
             "stiffness": 2.5e5, "damping": 70}]"#,
    ));
    // One body on two decoupled springs: two resolved links, one mass in the budget.
    assert_eq!(s.absorbers.len(), 2);
    assert_eq!(s.absorbers[1].same_body_as, Some(0));
    assert_rel(s.absorber_mass(), 0.2, 1e-12, "absorber mass");
}
