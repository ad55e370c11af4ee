//! Tuning to a measured natural frequency (`study.measured_frequencies`): the design follows the
//! test value, as the published tuning laws say it must (the absorber's frequency is a fixed
//! fraction of the target mode's), and bad entries are refused.

mod common;
use antinode::placement::measured::apply_measured;
use antinode::solver::{EigenParams, ModeRequest, solve_modes};
use common::*;

/// Primary: a 10 kg mass on a 1e5 N/m spring along X (15.915 Hz); one absorber of μ = 0.05 to
/// design at the mass; `spring` replaces the stiffness and `extra` is added to the study block.
fn sdof(spring: f64, extra: &str) -> String {
    format!(
        r#"{{
  "nodes": [{{"id": 1, "xyz": [0, 0, 0]}}],
  "supports": [{{"at": {{"node": 1}}, "fixed": ["uy", "uz"]}}],
  "point_masses": [{{"at": {{"node": 1}}, "mass": 10}}],
  "springs": [{{"at": {{"node": 1}}, "stiffness": {{"ux": {spring}}}}}],
  "study": {{"band_hz": [8, 24], "modal_damping_ratio": 1e-7,
            "excitation": [{{"at": {{"node": 1}}, "direction": "x", "amplitude": 1.0}}],
            "response_points": [{{"at": {{"node": 1}}, "direction": "x"}}],
            "absorber_design": {{"count": 1, "mass_each": 0.5, "candidates": [{{"node": 1}}], "directions": ["x"]}}{extra}}}
}}"#
    )
}

/// Exact H∞ tuning ratio of an absorber on an undamped primary under harmonic force (Nishihara &
/// Asami, J. Vib. Acoust. 124(4):576–582, 2002; METHODS.md §2.2).
fn nishihara_asami_tuning(mu: f64) -> f64 {
    2.0 / (1.0 + mu)
        * (2.0 * (16.0 + 23.0 * mu + 9.0 * mu * mu + 2.0 * (2.0 + mu) * (4.0 + 3.0 * mu).sqrt())
            / (3.0 * (64.0 + 80.0 * mu + 27.0 * mu * mu)))
            .sqrt()
}

#[test]
fn an_sdof_design_is_tuned_to_the_measured_frequency() {
    // The model says 15.915 Hz, the test 4 % more. The absorber must sit at the exact H∞ tuning
    // ratio times the measured frequency (Nishihara & Asami 2002), and the design must equal the
    // one for a spring 1.04² stiffer (the same mass-normalised shape, the measured eigenvalue).
    let f_model = (1e5_f64 / 10.0).sqrt() / (2.0 * std::f64::consts::PI);
    let f_test = 1.04 * f_model;
    let measured =
        designed(&sdof(1e5, &format!(r#", "measured_frequencies": [{{"mode": 1, "frequency_hz": {f_test}}}]"#)));
    let a = &measured.design.absorbers[0];
    assert_rel(
        a.tuned_frequency_hz,
        nishihara_asami_tuning(0.05) * f_test,
        1e-4,
        "exact H-infinity tuning to the test",
    );
    assert_rel(a.frequency_ratio, nishihara_asami_tuning(0.05), 1e-4, "tuning ratio to the measured mode");

    let stiffer = designed(&sdof(1e5 * 1.04 * 1.04, ""));
    let b = &stiffer.design.absorbers[0];
    assert_rel(a.stiffness_n_per_m, b.stiffness_n_per_m, 1e-6, "stiffness as for the stiffer primary");
    assert_rel(a.damping_n_s_per_m, b.damping_n_s_per_m, 1e-6, "damping as for the stiffer primary");
    assert_rel(measured.design.after.receptance, stiffer.design.after.receptance, 1e-6, "peak after");

    let nominal = designed(&sdof(1e5, ""));
    assert_rel(nominal.design.absorbers[0].tuned_frequency_hz, nishihara_asami_tuning(0.05) * f_model, 1e-4, "nominal");
}

#[test]
fn a_beam_absorber_follows_the_measured_mode() {
    // A simply supported steel bar, absorber for its first bending mode. Raising that mode's
    // frequency by 3 % raises the designed absorber's frequency by 3 % (Den Hartog's law
    // f_a = f_1/(1 + μ) with μ unchanged because the shape is kept; the other modes, far above,
    // shift the optimum by much less than the 0.3 % allowed — own check).
    let model = |extra: &str| {
        format!(
            r#"{{
  "materials": {{"m": {{"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}}}},
  "sections": {{"s": {{"rectangle": {{"width": 0.05, "height": 0.01}}}}}},
  "lines": [{{"name": "beam", "from": [0, 0, 0], "to": [1, 0, 0], "elements": 40, "section": "s", "material": "m"}}],
  "supports": [{{"at": {{"line": "beam", "at": 0}}, "fixed": ["ux", "uy", "uz", "rx"]}},
               {{"at": {{"line": "beam", "at": 1}}, "fixed": ["uy", "uz"]}}],
  "study": {{"band_hz": [10, 50], "modal_damping_ratio": 0.01,
            "excitation": [{{"at": {{"line": "beam", "at": 0.5}}, "direction": "z", "amplitude": 1}}],
            "response_points": [{{"at": {{"line": "beam", "at": 0.5}}, "direction": "z"}}],
            "absorber_design": {{"directions": ["z"], "count": 1, "mass_each": 0.08,
                                 "candidates": [{{"line": "beam", "from": 0.5, "to": 0.5}}]}}{extra}}}
}}"#
        )
    };
    let nominal = designed(&model(""));
    let a = &nominal.design.absorbers[0];
    let r = a.target_mode;
    let f_model = nominal.modes.frequency_hz(r - 1);
    let extra = format!(r#", "measured_frequencies": [{{"mode": {r}, "frequency_hz": {}}}]"#, 1.03 * f_model);
    let measured = designed(&model(&extra));
    let b = &measured.design.absorbers[0];
    assert_eq!(b.target_mode, r);
    assert_rel(measured.modes.frequency_hz(r - 1), 1.03 * f_model, 1e-12, "the measured frequency is used");
    assert_rel(b.tuned_frequency_hz / a.tuned_frequency_hz, 1.03, 3e-3, "absorber frequency follows the test");
    assert_rel(b.mass_ratio, a.mass_ratio, 1e-12, "the shape, hence the mass ratio, is kept");
}

#[test]
fn measured_values_that_cannot_be_used_are_refused() {
    let s = structure(&sdof(1e5, ""));
    let sys = system(&s);
    let sol = solve_modes(&sys, ModeRequest::Lowest(1), &EigenParams::default()).unwrap_or_else(|e| panic!("{e}"));
    let err = apply_measured(&mut sol.clone(), &[(1, 20.0)]).expect_err("mode 2 does not exist");
    assert!(err.to_string().contains("mode 2 was not computed"), "{err}");

    // Two modes (two masses on springs along X): a measured mode 1 above mode 2 reorders them.
    let two = r#"{
  "nodes": [{"id": 1, "xyz": [0, 0, 0]}, {"id": 2, "xyz": [1, 0, 0]}],
  "supports": [{"at": {"node": 1}, "fixed": ["uy", "uz"]}, {"at": {"node": 2}, "fixed": ["uy", "uz"]}],
  "point_masses": [{"at": {"node": 1}, "mass": 10}, {"at": {"node": 2}, "mass": 10}],
  "springs": [{"at": {"node": 1}, "stiffness": {"ux": 1e5}}, {"at": {"node": 2}, "stiffness": {"ux": 4e5}}]
}"#;
    let s = structure(two);
    let sys = system(&s);
    let sol = solve_modes(&sys, ModeRequest::Lowest(2), &EigenParams::default()).unwrap_or_else(|e| panic!("{e}"));
    let (f1, f2) = (sol.frequency_hz(0), sol.frequency_hz(1));
    let err = apply_measured(&mut sol.clone(), &[(0, 1.1 * f2)]).expect_err("order change");
    assert!(err.to_string().contains("mode order differs"), "{err}");

    // A 20 % change is applied with a warning; the untouched mode keeps its value.
    let mut changed = sol.clone();
    let (applied, warnings) = apply_measured(&mut changed, &[(0, 1.2 * f1)]).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(applied.len(), 1);
    assert_rel(applied[0].relative_change, 0.2, 1e-12, "relative change");
    assert_eq!(warnings.len(), 1, "{warnings:?}");
    assert_rel(changed.frequency_hz(0), 1.2 * f1, 1e-12, "mode 1 replaced");
    assert_eq!(changed.frequency_hz(1), f2);
    assert_eq!(changed.shape(0), sol.shape(0), "the shape is kept");
}

#[test]
fn a_rigid_body_mode_cannot_take_a_measured_value() {
    // Two masses joined by a spring along X and free to move along it: one zero-frequency mode.
    let free = r#"{
  "nodes": [{"id": 1, "xyz": [0, 0, 0]}, {"id": 2, "xyz": [1, 0, 0]}],
  "supports": [{"at": {"node": 1}, "fixed": ["uy", "uz", "rx", "ry", "rz"]}, {"at": {"node": 2}, "fixed": ["uy", "uz", "rx", "ry", "rz"]}],
  "point_masses": [{"at": {"node": 1}, "mass": 10}, {"at": {"node": 2}, "mass": 10}],
  "springs": [{"at": {"node": 1}, "to": {"node": 2}, "stiffness": {"ux": 1e5}}]
}"#;
    let s = structure(free);
    let sys = system(&s);
    let sol = solve_modes(&sys, ModeRequest::Lowest(2), &EigenParams::default()).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(sol.n_zero_energy, 1);
    let err = apply_measured(&mut sol.clone(), &[(0, 5.0)]).expect_err("rigid-body mode");
    assert!(err.to_string().contains("rigid-body"), "{err}");
}
