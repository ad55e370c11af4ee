//! Base (support) excitation: a rigid translation of every support and spring to ground, in the
//! relative-motion form, against closed forms for a single-DOF primary, Warburton's optimum
//! absorbers for base acceleration, and the direct sparse solve on a beam with an absorber.

mod common;
use antinode::mesh::AbsorberDamping;
use antinode::placement::StudyModel;
use antinode::solver::{Complex64, EigenParams, ModeRequest, golden_max, solve_modes};
use common::*;

const TWO_PI: f64 = 2.0 * std::f64::consts::PI;
/// Primary: 10 kg on 1e5 N/m to ground, ω_n = 100 rad/s.
const M: f64 = 10.0;
const K: f64 = 1.0e5;

/// The primary on its spring (the spring's ground end is the base), an absorber of mass μM tuned
/// to f·ω_n with viscous damping c, and `study` as the study block's body.
fn model(mu: f64, f: f64, c: f64, study: &str) -> String {
    format!(
        r#"{{
  "nodes": [{{"id": 1, "xyz": [0, 0, 0]}}],
  "supports": [{{"at": {{"node": 1}}, "fixed": ["uy", "uz"]}}],
  "point_masses": [{{"at": {{"node": 1}}, "mass": {M}}}],
  "springs": [{{"at": {{"node": 1}}, "stiffness": {{"ux": {K}}}}}],
  "absorbers": [{{"at": {{"node": 1}}, "direction": "x", "mass": {ma}, "stiffness": {ka}, "damping": {c}}}],
  "study": {{"response_points": [{{"at": {{"node": 1}}, "direction": "x"}}], {study}}}
}}"#,
        ma = mu * M,
        ka = f * f * mu * K,
    )
}

fn study(json: &str) -> StudyModel {
    study_model(json, 1)
}

#[test]
fn sdof_base_excitation_matches_the_closed_forms() {
    // Bare primary (absorber of 1e-9 kg), modal damping ζ = 0.02, base acceleration 2 m/s² along
    // X. Relative displacement per unit base acceleration x_rel/ü_g = −1/(ω_n² − ω² + 2iζω_nω);
    // absolute displacement x/u_g = (ω_n² + 2iζω_nω)/(ω_n² − ω² + 2iζω_nω), the transmissibility
    // (single-DOF support excitation, e.g. Clough & Penzien, Dynamics of Structures, ch. 3).
    let zeta = 0.02;
    let wn: f64 = 100.0;
    for absolute in [false, true] {
        let response = if absolute { "absolute" } else { "relative" };
        let json = model(
            1e-10,
            10.0,
            0.0,
            &format!(
                r#""band_hz": [2, 40], "modal_damping_ratio": {zeta},
                   "base_excitation": {{"direction": "x", "acceleration": 2.0, "response": "{response}"}}"#
            ),
        );
        let sm = study(&json);
        let freq = [3.0, 10.0, 15.0, 15.9155, 17.0, 30.0];
        let c = sm.curves(&freq, &sm.existing);
        for (i, &f) in freq.iter().enumerate() {
            let w = TWO_PI * f;
            let d = Complex64::new(wn * wn - w * w, 2.0 * zeta * wn * w);
            // Per m/s² of base acceleration (the reference amplitude is the acceleration).
            let want = if absolute {
                let ug = -1.0 / (w * w);
                ug * Complex64::new(wn * wn, 2.0 * zeta * wn * w) / d
            } else {
                -1.0 / d
            };
            let got = c.response[0][i];
            assert!((got - want).norm() <= 1e-6 * want.norm(), "{response} at {f} Hz: {got} vs {want}");
        }
    }
}

#[test]
fn white_noise_base_acceleration_h2_optimum_through_the_random_path() {
    // Warburton 1982 (Earthquake Eng. Struct. Dyn. 10:381–401; METHODS.md §2.3): white-noise base
    // acceleration of an undamped primary, smallest variance of the displacement relative to the
    // base at f = √(1 − μ/2)/(1 + μ), ζ_a = √(μ(1 − μ/4)/(4(1 + μ)(1 − μ/2))) (exact). The variance
    // comes from the random path (band integral over 0–1000 Hz); golden sections on f and ζ_a in
    // turn find its minimum: f to 1e-3, ζ_a to 2 % (the variance is flat in ζ_a). The bare primary
    // (ζ = 0.05) gives σ² = M² G/(4 K c) with c = 2ζ√(KM) (white-noise variance of a viscous
    // oscillator, Crandall & Mark 1963, with the inertia load M ü_g), checked to 1e-3.
    let mu: f64 = 0.05;
    let g_psd = 0.5;
    let body = |zeta: f64| {
        format!(
            r#""band_hz": [0, 1000], "modal_damping_ratio": {zeta},
               "base_excitation": {{"direction": "x", "psd": [[0, {g_psd}], [1000, {g_psd}]]}}"#
        )
    };
    {
        let bare = study(&model(1e-10, 10.0, 0.0, &body(0.05)));
        let s = bare.random_rms(&bare.existing)[0];
        let c = 2.0 * 0.05 * (K * M).sqrt();
        assert_rel(s * s, M * M * g_psd / (4.0 * K * c), 1e-3, "bare primary variance");
    }
    let sm = study(&model(mu, 1.0, 1.0, &body(1e-7)));
    let ma = mu * M;
    let var = |f: f64, zeta: f64| -> f64 {
        let wa = f * 100.0;
        let mut link = sm.existing[0];
        link.stiffness = ma * wa * wa;
        link.damping = AbsorberDamping::Viscous(2.0 * zeta * ma * wa);
        sm.random_rms(&[link])[0].powi(2)
    };
    let want_f = (1.0 - mu / 2.0).sqrt() / (1.0 + mu);
    let want_z = (mu * (1.0 - mu / 4.0) / (4.0 * (1.0 + mu) * (1.0 - mu / 2.0))).sqrt();
    let (mut f, mut z) = (1.0 / (1.0 + mu), 0.13);
    for _ in 0..4 {
        f = golden_max(0.9, 1.02, 1e-6, |x| -var(x, z)).0;
        z = golden_max(0.05, 0.2, 1e-5, |x| -var(f, x)).0;
    }
    assert_rel(f, want_f, 1e-3, "optimum tuning for base acceleration");
    assert_rel(z, want_z, 0.02, "optimum damping for base acceleration");
    // The force rule would tune higher: √(1 + μ/2)/(1 + μ) is 2.5 % above; the base optimum is
    // distinct from it (the check can tell the two apart).
    assert!(rel(f, (1.0 + mu / 2.0).sqrt() / (1.0 + mu)) > 0.02);
}

#[test]
fn harmonic_base_design_reproduces_warburtons_tuning() {
    // The design optimiser on harmonic base acceleration, relative displacement, undamped primary:
    // its H∞ tuning lies within 0.3 % of Warburton's √(1 − μ/2)/(1 + μ) (his formula is an
    // approximation within about 0.2 %, METHODS.md §2.3) and its peak within 1 % of the numerical
    // H∞ peak 6.646 (in units of ü_g/ω_n², METHODS.md §2.3, μ = 0.05); the start rule is named.
    let mu = 0.05;
    let json = format!(
        r#"{{
  "nodes": [{{"id": 1, "xyz": [0, 0, 0]}}],
  "supports": [{{"at": {{"node": 1}}, "fixed": ["uy", "uz"]}}],
  "point_masses": [{{"at": {{"node": 1}}, "mass": {M}}}],
  "springs": [{{"at": {{"node": 1}}, "stiffness": {{"ux": {K}}}}}],
  "study": {{"band_hz": [8, 24], "modal_damping_ratio": 1e-7,
            "base_excitation": {{"direction": "x"}},
            "response_points": [{{"at": {{"node": 1}}, "direction": "x"}}],
            "absorber_design": {{"count": 1, "mass_each": {m}, "candidates": [{{"node": 1}}], "directions": ["x"]}}}}
}}"#,
        m = mu * M
    );
    let d = designed(&json).design;
    assert!(d.rule.contains("base"), "{}", d.rule);
    let a = &d.absorbers[0];
    assert_rel(a.frequency_ratio, (1.0 - mu / 2.0).sqrt() / (1.0 + mu), 3e-3, "H-infinity tuning for base motion");
    assert_rel(d.after.receptance * 1e4, 6.646, 0.01, "H-infinity peak for base motion");
}

#[test]
fn beam_base_excitation_agrees_with_the_direct_solve() {
    // A cantilever steel bar shaken at its clamp along Z, an absorber near the tip: the modal
    // route (residual flexibility included) against the direct sparse complex solve of the whole
    // structure in the relative-motion form, relative and absolute responses, within 1 % at 24
    // frequencies across the band (issue's acceptance level; the direct solve is the reference).
    for response in ["relative", "absolute"] {
        let json = format!(
            r#"{{
  "materials": {{"steel": {{"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}}}},
  "sections": {{"bar": {{"rectangle": {{"width": 0.04, "height": 0.01}}}}}},
  "lines": [{{"name": "bar", "from": [0, 0, 0], "to": [0.8, 0, 0], "elements": 24, "section": "bar", "material": "steel"}}],
  "supports": [{{"at": {{"line": "bar", "at": 0}}, "fixed": "clamped"}}],
  "absorbers": [{{"at": {{"line": "bar", "at": 0.9}}, "direction": "z", "mass": 0.05, "stiffness": 2.0e3, "damping": 1.5}}],
  "study": {{"band_hz": [2, 400], "modal_damping_ratio": 0.02,
            "base_excitation": {{"direction": "z", "acceleration": 9.81, "response": "{response}"}},
            "response_points": [{{"at": {{"line": "bar", "at": 1}}, "direction": "z"}},
                                {{"at": {{"line": "bar", "at": 0.5}}, "direction": "z"}}]}}
}}"#
        );
        let s = structure(&json);
        let sys = system(&s);
        let spec = s.study.clone().unwrap_or_else(|| panic!("study"));
        let sol = solve_modes(
            &sys,
            ModeRequest::Band { low_hz: 0.0, high_hz: spec.max_mode_frequency_hz },
            &EigenParams::default(),
        )
        .unwrap_or_else(|e| panic!("{e}"));
        let sm = StudyModel::build(&s, &sys, &sol, &spec, false).unwrap_or_else(|e| panic!("{e}"));
        let freq: Vec<f64> = (0..24).map(|i| 2.0 * (200.0f64).powf(i as f64 / 23.0)).collect();
        let pts = sm.verify(&sys, &sol, &freq, &sm.existing).unwrap_or_else(|e| panic!("{e}"));
        for p in &pts {
            assert!(
                p.relative_difference < 0.01,
                "{response} at {:.2} Hz: modal vs direct {:.2e}",
                p.frequency_hz,
                p.relative_difference
            );
            assert!(p.stroke_difference < 0.01, "{response} stroke at {:.2} Hz", p.frequency_hz);
        }
    }
}
