//! Absorbers on single-DOF and beam primaries against the classical results, and the design of
//! absorbers for a simply supported beam.

mod common;
use antinode::mesh::{AbsorberDamping, AbsorberSpec, Axis, DirectionSpec};
use antinode::placement::{StudyModel, tuning::den_hartog_brock};
use antinode::solver::{
    AbsorberLink, AssemblyOptions, Complex64, Coordinate, EigenParams, Load, ModalModel, ModeRequest, assemble,
    refined_peaks, solve_modes,
};
use common::*;

const TWO_PI: f64 = 2.0 * std::f64::consts::PI;

/// Primary: a 10 kg point mass on a 1e5 N/m spring along X (other DOFs held), natural frequency
/// ω_n = 100 rad/s, with an absorber along X of mass μM, stiffness f²μK and viscous damping c.
fn sdof_json(mu: f64, f: f64, c: Option<f64>, zeta: f64) -> String {
    let (m, k) = (10.0, 1.0e5);
    let damping = c.map(|c| format!(r#", "damping": {c}"#)).unwrap_or_default();
    format!(
        r#"{{
  "nodes": [{{"id": 1, "xyz": [0, 0, 0]}}],
  "supports": [{{"at": {{"node": 1}}, "fixed": ["uy", "uz"]}}],
  "point_masses": [{{"at": {{"node": 1}}, "mass": {m}}}],
  "springs": [{{"at": {{"node": 1}}, "stiffness": {{"ux": {k}}}}}],
  "absorbers": [{{"at": {{"node": 1}}, "direction": "x", "mass": {ma}, "stiffness": {ka}{damping}}}],
  "study": {{"band_hz": [8, 24], "modal_damping_ratio": {zeta},
            "excitation": [{{"at": {{"node": 1}}, "direction": "x", "amplitude": 1.0}}],
            "response_points": [{{"at": {{"node": 1}}, "direction": "x"}}]}}
}}"#,
        ma = mu * m,
        ka = f * f * mu * k,
    )
}

#[test]
fn two_dof_natural_frequencies() {
    // Undamped primary and absorber: Ω⁴ − [1 + f²(1+μ)]Ω² + f² = 0 with Ω = ω/ω_n, which for f = 1
    // gives Ω² = 1 + μ/2 ± √(μ + μ²/4) (Den Hartog, Mechanical Vibrations, the undamped dynamic
    // absorber — from memory; the frequency equation is the standard two-DOF result). Values for
    // μ = 0.05: Ω = 0.894427, 1.118034. The model is exactly this two-DOF system: 1e-10.
    for (mu, f) in [(0.05, 1.0), (0.10, 1.0), (0.02, 1.0), (0.05, 1.0 / 1.05)] {
        let s = structure(&sdof_json(mu, f, None, 0.01));
        let sys = assemble(&s, AssemblyOptions { include_absorbers: true }).unwrap_or_else(|e| panic!("{e}"));
        let sol = solve_modes(&sys, ModeRequest::Lowest(2), &EigenParams::default()).unwrap_or_else(|e| panic!("{e}"));
        let b = 1.0 + f * f * (1.0 + mu);
        let disc = (b * b - 4.0 * f * f).sqrt();
        let want = [((b - disc) / 2.0).sqrt(), ((b + disc) / 2.0).sqrt()];
        for i in 0..2 {
            let omega = sol.eigenvalues[i].sqrt() / 100.0;
            assert_rel(omega, want[i], 1e-10, &format!("mu {mu}, f {f}, coupled frequency {}", i + 1));
        }
        if f == 1.0 {
            let exact = [
                (1.0 + mu / 2.0 - (mu + mu * mu / 4.0).sqrt()).sqrt(),
                (1.0 + mu / 2.0 + (mu + mu * mu / 4.0).sqrt()).sqrt(),
            ];
            assert_rel(want[0], exact[0], 1e-12, "closed form, lower");
            assert_rel(want[1], exact[1], 1e-12, "closed form, upper");
        }
    }
}

#[test]
fn den_hartog_tuning_with_brock_damping_gives_equal_peaks() {
    // Force on an (almost) undamped primary: with f = 1/(1+μ) and ζ_a = √(3μ/(8(1+μ))) the two
    // resonance peaks are nearly equal and close to the fixed-point height √(1 + 2/μ) (Brock, "A note
    // on the damped vibration absorber", J. Appl. Mech. 1946; Den Hartog, Mechanical Vibrations).
    // For μ = 0.05 the true peaks are 6.408 against the fixed-point 6.403 (reference sheet §6.6).
    for mu in [0.02, 0.05, 0.1] {
        let t = den_hartog_brock(mu);
        let (m, k) = (10.0, 1.0e5);
        let wa = t.frequency_ratio * 100.0;
        let c = 2.0 * t.damping_ratio * mu * m * wa;
        let s = structure(&sdof_json(mu, t.frequency_ratio, Some(c), 1e-7));
        let sys = system(&s);
        let sol = solve_modes(&sys, ModeRequest::Lowest(1), &EigenParams::default()).unwrap_or_else(|e| panic!("{e}"));
        let study = s.study.clone().unwrap_or_else(|| panic!("study"));
        let sm = StudyModel::build(&s, &sys, &sol, &study, false).unwrap_or_else(|e| panic!("{e}"));
        let freq: Vec<f64> = (0..4000).map(|i| 8.0 + 16.0 * i as f64 / 3999.0).collect();
        let curve: Vec<f64> = freq.iter().map(|&f| sm.response_at(f, &sm.existing).0 * k).collect();
        let peaks = refined_peaks(&freq, &curve, |f| sm.response_at(f, &sm.existing).0 * k);
        assert_eq!(peaks.len(), 2, "two resonance peaks, mu {mu}: {peaks:?}");
        let (p1, p2) = (peaks[0].1, peaks[1].1);
        assert!((p1 - p2).abs() / p1.max(p2) < 0.01, "mu {mu}: peaks {p1} and {p2} differ by more than 1 %");
        let fixed_point = (1.0 + 2.0 / mu).sqrt();
        for p in [p1, p2] {
            assert!(
                p >= fixed_point * (1.0 - 1e-6) && p < fixed_point * 1.005,
                "mu {mu}: peak {p} vs fixed point {fixed_point}"
            );
        }
    }
}

const BAR: &str = r#"{"rectangle": {"width": 0.05, "height": 0.01}}"#;
const SS_SUPPORTS: &str = r#"[{"at": {"line": "beam", "at": 0}, "fixed": ["ux", "uy", "uz", "rx"]},
    {"at": {"line": "beam", "at": 1}, "fixed": ["uy", "uz"]}]"#;

#[test]
fn undamped_absorber_makes_an_exact_zero_and_cancels_the_force() {
    // An undamped absorber tuned to √(k/m) makes the driving-point receptance vanish at that frequency,
    // and its spring force is then minus the applied force (common practice; any dynamics text, the
    // undamped dynamic absorber). Exact on the coupled model: 1e-10.
    let s = structure(&beam_model(BAR, 30, 1.0, SS_SUPPORTS, STEEL));
    let sys = system(&s);
    let sol = solve_modes(&sys, ModeRequest::Band { low_hz: 0.0, high_hz: 400.0 }, &EigenParams::default())
        .unwrap_or_else(|e| panic!("{e}"));
    let node = s.lines[0].nodes[12];
    let model = ModalModel::build(
        &sys,
        &sol,
        &[Coordinate { node, direction: [0.0, 0.0, 1.0], rotational: false }],
        0.01,
        true,
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let omega_a = TWO_PI * 60.0;
    let link = AbsorberLink { coord: 0, mass: 0.2, stiffness: 0.2 * omega_a * omega_a, damping: AbsorberDamping::None };
    let force = Complex64::new(3.0, 1.0);
    let r = model.coupled_response(omega_a, &[Load { coord: 0, amplitude: force }], &[0], &[link]);
    let bare = model.receptance(omega_a, 0, 0) * force;
    assert!(
        r.displacement[0].norm() < 1e-10 * bare.norm(),
        "attachment moves: {} vs {}",
        r.displacement[0].norm(),
        bare.norm()
    );
    assert!(
        (r.spring_force[0] + force).norm() < 1e-10 * force.norm(),
        "spring force {:?} vs force {force:?}",
        r.spring_force[0]
    );
}

#[test]
fn residual_flexibility_recovers_the_static_deflection() {
    // At ω = 0 the modal receptance with the static residual of the truncated modes equals the exact
    // static flexibility L³/(3EI) of the cantilever tip (closed form), even with three modes kept.
    let s = structure(&beam_model(BAR, 20, 1.0, r#"[{"at": {"line": "beam", "at": 0}, "fixed": "clamped"}]"#, STEEL));
    let sys = system(&s);
    let sol = solve_modes(&sys, ModeRequest::Lowest(3), &EigenParams::default()).unwrap_or_else(|e| panic!("{e}"));
    let tip = s.lines[0].nodes[20];
    let coord = [Coordinate { node: tip, direction: [0.0, 0.0, 1.0], rotational: false }];
    let with = ModalModel::build(&sys, &sol, &coord, 0.01, true).unwrap_or_else(|e| panic!("{e}"));
    let without = ModalModel::build(&sys, &sol, &coord, 0.01, false).unwrap_or_else(|e| panic!("{e}"));
    let ei = 2.1e11 * 0.05 * 0.01f64.powi(3) / 12.0;
    let exact = 1.0 / (3.0 * ei);
    assert_rel(with.receptance(0.0, 0, 0).re, exact, 1e-9, "static receptance with residual flexibility");
    // Without the residual the truncation error is visible (common practice: it is the point of
    // the correction): the first three modes carry about 99.7 % of the tip compliance.
    let short = without.receptance(0.0, 0, 0).re;
    assert!(short < exact * (1.0 - 1e-4), "{short} vs {exact}");
}

/// Design for a simply supported beam: one absorber per target mode.
fn ss_design(
    count: usize,
) -> (antinode::mesh::Structure, antinode::placement::Design, antinode::solver::ModalSolution) {
    let json = format!(
        r#"{{
  "materials": {{"m": {STEEL}}},
  "sections": {{"s": {BAR}}},
  "lines": [{{"name": "beam", "from": [0, 0, 0], "to": [1, 0, 0], "elements": 40, "section": "s", "material": "m"}}],
  "supports": {SS_SUPPORTS},
  "study": {{"band_hz": [10, 120], "modal_damping_ratio": 0.01,
            "excitation": [{{"at": {{"line": "beam", "at": 0.3}}, "direction": "z", "amplitude": 1}}],
            "response_points": [{{"at": {{"line": "beam", "at": 0.3}}, "direction": "z"}}],
            "absorber_design": {{"count": {count}, "mass_each": 0.08, "candidates": [{{"line": "beam", "from": 0.02, "to": 0.98}}],
                                 "directions": ["z"]}}}}
}}"#
    );
    let d = designed(&json);
    (d.structure, d.design, d.modes)
}

#[test]
fn simply_supported_beam_absorbers_go_to_the_antinodes() {
    // The best place for an absorber on a mode is where the mode moves most, its antinode: midspan for
    // mode 1 of a simply supported beam, the quarter points for mode 2 (common practice; Warburton &
    // Ayorinde, Earthquake Eng. Struct. Dyn. 8, 1980, equivalent-system design of absorbers on beams).
    let (s, d, sol) = ss_design(2);
    assert_eq!(d.absorbers.len(), 2);
    let x = |i: usize| s.nodes[d.absorbers[i].candidate.node].xyz[0];
    let f1 = d.absorbers[0].target_mode;
    let f2 = d.absorbers[1].target_mode;
    assert!(sol.frequency_hz(f1 - 1) < sol.frequency_hz(f2 - 1), "the first absorber targets the dominant, lower mode");
    assert!(
        (x(0) - 0.5).abs() <= 0.025 + 1e-9,
        "mode-1 absorber at x = {} (midspan expected, one element tolerance)",
        x(0)
    );
    let q = (x(1) - 0.25).abs().min((x(1) - 0.75).abs());
    assert!(q <= 0.05 + 1e-9, "mode-2 absorber at x = {} (a quarter point expected)", x(1));
    assert!(
        d.after.receptance < 0.2 * d.before.receptance,
        "two absorbers of 0.08 kg cut the peak: {} -> {}",
        d.before.receptance,
        d.after.receptance
    );
}

/// Eigenvalues of a symmetric 3×3 matrix (trigonometric closed form, ascending).
fn sym3_eigenvalues(a: [[f64; 3]; 3]) -> [f64; 3] {
    let q = (a[0][0] + a[1][1] + a[2][2]) / 3.0;
    let p1 = a[0][1].powi(2) + a[0][2].powi(2) + a[1][2].powi(2);
    let p2 = (a[0][0] - q).powi(2) + (a[1][1] - q).powi(2) + (a[2][2] - q).powi(2) + 2.0 * p1;
    let p = (p2 / 6.0).sqrt();
    let b = |i: usize, j: usize| (a[i][j] - if i == j { q } else { 0.0 }) / p;
    let det = b(0, 0) * (b(1, 1) * b(2, 2) - b(1, 2) * b(2, 1)) - b(0, 1) * (b(1, 0) * b(2, 2) - b(1, 2) * b(2, 0))
        + b(0, 2) * (b(1, 0) * b(2, 1) - b(1, 1) * b(2, 0));
    let phi = (det / 2.0).clamp(-1.0, 1.0).acos() / 3.0;
    let e1 = q + 2.0 * p * phi.cos();
    let e3 = q + 2.0 * p * (phi + 2.0 * std::f64::consts::PI / 3.0).cos();
    [e3, 3.0 * q - e1 - e3, e1]
}

#[test]
fn coupled_frequencies_match_the_lumped_estimates() {
    // Each designed absorber on the full model (its DOF added to K and M) against a small lumped model
    // built from the bare structure's modes: mode j of modal mass 1/φ² and the absorber (m, k) — the
    // two-mass estimate (Den Hartog's two-DOF system, as in `two_dof_natural_frequencies`). For the
    // quarter-point absorber of mode 2, mode 1 also moves there and acts as a mass below its own
    // frequency, shifting the pair by ~1 %; its estimate keeps modes 1 and 2 (three masses).
    // Tolerance 0.2 %, the truncation of the remaining modes.
    let (s, d, sol) = ss_design(2);
    for (i, a) in d.absorbers.iter().enumerate() {
        let mut single = s.clone();
        single.absorbers = vec![AbsorberSpec {
            name: format!("a{i}"),
            node: a.candidate.node,
            direction: DirectionSpec::axis(Axis::Z),
            mass: a.mass_kg,
            stiffness: a.stiffness_n_per_m,
            damping: AbsorberDamping::None,
            same_body_as: None,
        }];
        let sys = assemble(&single, AssemblyOptions { include_absorbers: true }).unwrap_or_else(|e| panic!("{e}"));
        let full =
            solve_modes(&sys, ModeRequest::Lowest(12), &EigenParams::default()).unwrap_or_else(|e| panic!("{e}"));
        let adof = sys.dof_map().absorber_dof(0).unwrap_or_else(|| panic!("absorber DOF"));
        let coupled: Vec<f64> =
            (0..full.n_modes()).filter(|&k| full.shape(k)[adof].abs() > 1e-3).map(|k| full.eigenvalues[k]).collect();
        // Modal couplings of the bare modes at the attachment.
        let bare = system(&s);
        let model = ModalModel::build(
            &bare,
            &sol,
            &[Coordinate { node: a.candidate.node, direction: [0.0, 0.0, 1.0], rotational: false }],
            0.01,
            false,
        )
        .unwrap_or_else(|e| panic!("{e}"));
        let z_modes: Vec<usize> = (0..sol.n_modes()).filter(|&r| model.coupling(0, r).abs() > 1e-6).collect();
        let (m, k) = (a.mass_kg, a.stiffness_n_per_m);
        let est: Vec<f64> = if i == 0 {
            let r = a.target_mode - 1;
            let (w2, phi) = (sol.eigenvalues[r], model.coupling(0, r));
            let mu = m * phi * phi;
            let f2 = k / m / w2;
            let b = 1.0 + f2 * (1.0 + mu);
            let disc = (b * b - 4.0 * f2).sqrt();
            vec![w2 * (b - disc) / 2.0, w2 * (b + disc) / 2.0]
        } else {
            // Coordinates (q1, q2, z): K = [[ω1² + kφ1², kφ1φ2, −kφ1], [., ω2² + kφ2², −kφ2], [., ., k]],
            // M = diag(1, 1, m); scaled by M^(-1/2) to a symmetric 3×3.
            let (r1, r2) = (z_modes[0], a.target_mode - 1);
            let (p1, p2) = (model.coupling(0, r1), model.coupling(0, r2));
            let (w1, w2) = (sol.eigenvalues[r1], sol.eigenvalues[r2]);
            let sm = m.sqrt();
            let kk = [
                [w1 + k * p1 * p1, k * p1 * p2, -k * p1 / sm],
                [k * p1 * p2, w2 + k * p2 * p2, -k * p2 / sm],
                [-k * p1 / sm, -k * p2 / sm, k / m],
            ];
            let e = sym3_eigenvalues(kk);
            // The two members near mode 2 (the lowest is mode 1, shifted slightly).
            vec![e[1], e[2]]
        };
        let got: Vec<f64> = coupled.iter().copied().filter(|&l| l > 0.5 * est[0] && l < 2.0 * est[1]).collect();
        assert_eq!(got.len(), 2, "absorber {i}: two coupled modes near the target: {coupled:?} est {est:?}");
        for j in 0..2 {
            assert_rel(got[j].sqrt(), est[j].sqrt(), 2e-3, &format!("absorber {i}, coupled frequency {}", j + 1));
        }
    }
}
