//! Mode insight against closed forms: effective masses in six directions, their completeness sums,
//! MAC identities, and the classification of beam and shell-tube modes.

mod common;

use antinode::solver::{
    EigenParams, InsightOptions, Method, ModeInsight, ModeKind, ModeRequest, mac, mode_insight, solve_modes,
};
use common::*;

const BAR: &str = r#"{"rectangle": {"width": 0.05, "height": 0.01}}"#;

fn insight_of(json: &str, count: usize, dense: bool) -> (antinode::mesh::Structure, ModeInsight, Vec<f64>) {
    let s = structure(json);
    let sys = system(&s);
    let method = if dense { Method::Dense } else { Method::Lanczos };
    let n = if dense { sys.n_dofs() } else { count };
    let mut sol = solve_modes(&sys, ModeRequest::Lowest(n), &EigenParams { method, ..EigenParams::default() })
        .unwrap_or_else(|e| panic!("{e}"));
    let ins = mode_insight(&s, &sys, &mut sol, &InsightOptions::default()).unwrap_or_else(|e| panic!("{e}"));
    let f = (0..sol.n_modes()).map(|i| sol.frequency_hz(i)).collect();
    (s, ins, f)
}

/// Fractions in Z of the modes classified as bending in Z, lowest first, with their half-wave counts.
fn z_bending(ins: &ModeInsight) -> Vec<(f64, usize)> {
    ins.modes
        .iter()
        .filter(|m| m.class.kind == ModeKind::Bending && m.class.plane == Some("z"))
        .map(|m| (m.effective_mass_fraction[2], m.class.m.unwrap_or(0)))
        .collect()
}

#[test]
fn cantilever_effective_masses_in_the_bending_plane() {
    // m_eff,n / m = 4σ_n²/(β_nL)² for a uniform Euler–Bernoulli cantilever (closed form; σ_n the
    // mode-shape constants): 0.613076, 0.188300, 0.064732 — Irvine's effective-modal-mass tutorial
    // gives the rounded 61.31 %, 18.83 %, 6.47 %. 40 elements: 1e-4 absolute (as tests/effective_mass.rs).
    let json = beam_model(BAR, 40, 1.0, r#"[{"at": {"line": "beam", "at": 0}, "fixed": "clamped"}]"#, STEEL);
    let (_, ins, _) = insight_of(&json, 40, false);
    let z = z_bending(&ins);
    assert!(
        z.len() >= 3,
        "three bending modes in z among {:?}",
        ins.modes.iter().map(|m| &m.class).collect::<Vec<_>>()
    );
    for ((got, _), want) in z.iter().zip([0.613076, 0.188300, 0.064732]) {
        assert!((got - want).abs() < 1e-4, "cantilever effective mass fraction {got} vs {want}");
    }
    // A cantilever's bending mode n has n − 1 interior nodes, so n lobes (Euler–Bernoulli shapes).
    assert_eq!(z.iter().take(3).map(|p| p.1).collect::<Vec<_>>(), vec![1, 2, 3]);
    // The rigid-body mass in the translations is the total mass (exact for a consistent mass matrix).
    let s = structure(&json);
    assert_rel(ins.rigid_mass[2], s.total_mass(), 1e-12, "rigid-body mass in z");
}

#[test]
fn simply_supported_odd_modes_carry_eight_over_n_pi_squared() {
    // φ_n = sin(nπx/L): m_eff,n / m = 8/(nπ)² for odd n, 0 for even n (closed form).
    let json = beam_model(
        BAR,
        40,
        1.0,
        r#"[{"at": {"line": "beam", "at": 0}, "fixed": ["ux", "uy", "uz", "rx"]},
            {"at": {"line": "beam", "at": 1}, "fixed": ["uy", "uz"]}]"#,
        STEEL,
    );
    let (_, ins, _) = insight_of(&json, 40, false);
    let z = z_bending(&ins);
    let pi2 = std::f64::consts::PI.powi(2);
    for (k, (got, m)) in z.iter().take(4).enumerate() {
        let n = k + 1;
        let want = if n % 2 == 1 { 8.0 / (n as f64 * n as f64 * pi2) } else { 0.0 };
        // 1e-4 absolute: the discretisation error of 40 elements (tests/effective_mass.rs).
        assert!((got - want).abs() < 1e-4, "mode n = {n}: fraction {got} vs {want}");
        // sin(nπx/L) has n half-waves.
        assert_eq!(*m, n, "half-waves of the simply supported mode n = {n}");
    }
}

#[test]
fn six_direction_sums_over_all_modes_equal_the_rigid_body_mass() {
    // Σ_i (φ_iᵀ M r)² = rᵀ M Φ Φᵀ M r = rᵀ M r for a complete M-orthonormal set of a free body
    // (Φ Φᵀ = M⁻¹): effective masses over all modes add up to the total mass and to the inertia about
    // the reference point (ECSS glossary "effective modal mass"; Irvine's tutorial). Exact
    // identity, so round-off only: 1e-10.
    let (s, ins, _) = insight_of(FREE_FRAME, 0, true);
    assert_rel(ins.rigid_mass[0], s.total_mass(), 1e-12, "rigid-body mass = total mass");
    let c = s.centre_of_mass();
    for k in 0..3 {
        // Default reference: the centre of mass (exact first moments of a consistent mass matrix).
        assert!((ins.reference_point[k] - c[k]).abs() < 1e-10, "reference {:?} vs centre {c:?}", ins.reference_point);
    }
    for d in 0..6 {
        let sum: f64 = ins.modes.iter().map(|m| m.effective_mass[d]).sum();
        assert_rel(sum, ins.rigid_mass[d], 1e-10, &format!("sum of effective masses, direction {d}"));
        let last = ins.modes.last().map_or(0.0, |m| m.cumulative_fraction[d]);
        assert!((last - 1.0).abs() < 1e-10, "cumulative fraction {last} in direction {d}");
    }
    // Six rigid-body modes carry all of it: the elastic modes of a free body have none (their
    // inertia forces balance, common practice).
    let elastic: f64 = ins.modes[6..].iter().map(|m| m.effective_mass_fraction.iter().sum::<f64>()).sum();
    assert!(elastic < 1e-9, "elastic modes of a free body: {elastic}");
}

#[test]
fn a_model_held_by_springs_to_ground_has_all_its_mass_in_the_modes() {
    // Held by springs to ground (no fixed DOF), every node keeps its DOFs, so b = M r with the full
    // M and Σ_i (φ_iᵀ M r)² = rᵀ M r over all modes, as for a free body (ECSS glossary; Irvine's
    // tutorial): the total mass in x, y, z and the inertia about the centre of mass. Exact identity
    // with the complete dense set: 1e-10. (Fixed supports keep their share of a consistent mass
    // matrix out of the sum: tests/effective_mass.rs.)
    let json = beam_model(
        BAR,
        12,
        1.0,
        "[]",
        STEEL,
    )
    .replace(
        r#""supports": []"#,
        r#""supports": [], "springs": [{"at": {"line": "beam", "at": 0}, "stiffness": {"ux": 1e8, "uy": 1e8, "uz": 1e8, "rx": 1e6, "ry": 1e6, "rz": 1e6}}]"#,
    );
    let (s, ins, f) = insight_of(&json, 0, true);
    assert!(f[0] > 1.0, "held: no zero-frequency mode ({} Hz)", f[0]);
    assert_rel(ins.rigid_mass[2], s.total_mass(), 1e-12, "rigid-body mass = total mass");
    for d in 0..6 {
        let sum: f64 = ins.modes.iter().map(|m| m.effective_mass[d]).sum();
        assert_rel(sum, ins.rigid_mass[d], 1e-10, &format!("held by springs: sum of effective masses, direction {d}"));
    }
}

#[test]
fn rotational_sums_hold_about_any_reference_point() {
    // The same identity about another point: the inertia there follows the parallel-axis rule
    // I_ref = I_c + m d² (for the axis x, d² = Δy² + Δz²).
    let s = structure(FREE_FRAME);
    let sys = system(&s);
    let mut sol = solve_modes(
        &sys,
        ModeRequest::Lowest(sys.n_dofs()),
        &EigenParams { method: Method::Dense, ..EigenParams::default() },
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let at_c = mode_insight(&s, &sys, &mut sol, &InsightOptions::default()).unwrap_or_else(|e| panic!("{e}"));
    let p = [1.0, -0.5, 2.0];
    let opts = InsightOptions { reference_point: Some(p), ..InsightOptions::default() };
    let at_p = mode_insight(&s, &sys, &mut sol, &opts).unwrap_or_else(|e| panic!("{e}"));
    let c = at_c.reference_point;
    let m = s.total_mass();
    let d2 = (p[1] - c[1]).powi(2) + (p[2] - c[2]).powi(2);
    assert_rel(at_p.rigid_mass[3], at_c.rigid_mass[3] + m * d2, 1e-10, "parallel-axis rule about x");
    for d in 3..6 {
        let sum: f64 = at_p.modes.iter().map(|m| m.effective_mass[d]).sum();
        assert_rel(sum, at_p.rigid_mass[d], 1e-10, &format!("sum about the point, direction {d}"));
    }
}

#[test]
fn mac_identities() {
    // Definition (Allemang & Brown, Proc. IMAC 1982): MAC(φ, cφ) = 1 for any c ≠ 0.
    let json = beam_model(BAR, 20, 1.0, r#"[{"at": {"line": "beam", "at": 0}, "fixed": "clamped"}]"#, STEEL);
    let (sys, sol) = lowest(&structure(&json), 4);
    let phi = sol.shape(3);
    let scaled: Vec<f64> = phi.iter().map(|v| -3.7 * v).collect();
    assert!((mac(phi, &scaled) - 1.0).abs() < 1e-14);
    assert!(sys.n_dofs() == phi.len());
    // Sampled sines sin(iπk/(N+1)), k = 1..N, are exactly orthogonal for i ≠ j (the discrete sine
    // transform's orthogonality), so their MAC is 0 to round-off.
    let n = 24;
    let sine = |i: usize| -> Vec<f64> {
        (1..=n).map(|k| (i as f64 * std::f64::consts::PI * k as f64 / (n + 1) as f64).sin()).collect()
    };
    for i in 1..5 {
        for j in 1..5 {
            let v = mac(&sine(i), &sine(j));
            if i == j {
                assert!((v - 1.0).abs() < 1e-14);
            } else {
                assert!(v < 1e-28, "MAC of sines {i} and {j}: {v}");
            }
        }
    }
    // The worked value: MAC([1, 0], [1, 1]) = 1²/(1·2) = 0.5.
    assert!((mac(&[1.0, 0.0], &[1.0, 1.0]) - 0.5).abs() < 1e-15);
}

/// Rayleigh's inextensional ovaling frequency (Rayleigh, Theory of Sound), as in tests/shell_tubes.rs:
/// ω² = (B / (ρ h R⁴)) n²(n² − 1)²/(n² + 1), plane stress B = E h³/12, plane strain B/(1 − ν²).
fn rayleigh_hz(n: f64, r: f64, h: f64, plane_strain: bool) -> f64 {
    let (e, nu, rho) = (2.1e11, 0.3, 7850.0);
    let b = e * h.powi(3) / 12.0 / if plane_strain { 1.0 - nu * nu } else { 1.0 };
    (b / (rho * h * r.powi(4)) * n * n * (n * n - 1.0).powi(2) / (n * n + 1.0)).sqrt() / (2.0 * std::f64::consts::PI)
}

fn shell_tube(r: f64, h: f64, l: f64, around: usize, along: usize) -> String {
    format!(
        r#"{{"materials": {{"m": {STEEL_TUBE}}},
            "tubes": [{{"name": "t", "length": {l}, "outer_diameter": {}, "wall_thickness": {h}, "material": "m",
                        "fidelity": "shell", "around": {around}, "along": {along}}}]}}"#,
        2.0 * r + h
    )
}

const STEEL_TUBE: &str = r#"{"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}"#;

#[test]
fn shell_tube_ovaling_pairs_are_found_where_rayleigh_puts_them() {
    // Long free tube (L = 10 R, R = 0.1 m, h = 1 mm), 96 facets around, as tests/shell_tubes.rs: the
    // uniform ovaling pairs lie between the narrow-ring and infinite-tube Rayleigh values, with the
    // mesh error of 96 facets as margin (docs/verification.md: +0.2, +0.5 %).
    let (r, h) = (0.1, 0.001);
    let (_, ins, f) = insight_of(&shell_tube(r, h, 1.0, 96, 40), 30, false);
    for (n, margin) in [(2usize, 0.005), (3, 0.008)] {
        let found: Vec<usize> = (0..ins.modes.len())
            .filter(|&i| {
                let c = &ins.modes[i].class;
                c.kind == ModeKind::Ovaling && c.n == Some(n) && c.m == Some(1)
            })
            .collect();
        assert_eq!(
            found.len(),
            2,
            "one uniform n = {n} pair among {:?}",
            ins.modes.iter().map(|m| &m.class).collect::<Vec<_>>()
        );
        // Labelled as a pair of each other.
        assert_eq!(ins.modes[found[0]].class.pair, Some(found[1] + 1));
        assert_eq!(ins.modes[found[1]].class.pair, Some(found[0] + 1));
        let (lo, hi) = (rayleigh_hz(n as f64, r, h, false), rayleigh_hz(n as f64, r, h, true));
        for &i in &found {
            assert!(
                f[i] >= (1.0 - margin) * lo && f[i] <= (1.0 + margin) * hi,
                "n = {n}: {} Hz not in [{lo}, {hi}]",
                f[i]
            );
        }
    }
}

#[test]
fn shell_tube_bending_pair_matches_the_beam_and_is_oriented_along_the_axes() {
    // Free-free tube, mid radius 50 mm, wall 2 mm, 1.5 m (as tests/shell_tubes.rs): the first elastic
    // pair is n = 1 bending within 1 % of the Timoshenko beam model of the same tube (common
    // practice for L/D = 15), with three lobes (the free-free first mode has two nodes).
    let (r, h, l) = (0.05, 0.002, 1.5);
    let (_, ins, f) = insight_of(&shell_tube(r, h, l, 32, 60), 8, false);
    let section = format!(
        r#"{{"circular_tube": {{"outer_diameter": {}, "wall_thickness": {h}, "shear_deformation": true}}}}"#,
        2.0 * r + h
    );
    let (_, beam, fb) = insight_of(&beam_model(&section, 100, l, "[]", STEEL_TUBE), 8, false);
    for i in 6..8 {
        let c = &ins.modes[i].class;
        assert_eq!((c.kind, c.n, c.m), (ModeKind::Bending, Some(1), Some(3)), "mode {}: {c:?}", i + 1);
        assert_eq!(c.pair, Some(if i == 6 { 8 } else { 7 }));
        assert_rel(f[i], fb[i], 0.01, "shell tube bending against the beam");
        assert_eq!(beam.modes[i].class.kind, ModeKind::Bending);
    }
    // Oriented: the first member moves along the reference direction Y, the second along Z.
    assert_eq!(ins.modes[6].class.plane, Some("y"));
    assert_eq!(ins.modes[7].class.plane, Some("z"));
}

#[test]
fn simply_supported_panel_modes_get_their_half_wave_counts() {
    // Navier's solution for a simply supported rectangular plate (Timoshenko & Woinowsky-Krieger):
    // ω_mn = π² ((m/a)² + (n/b)²) √(D/(ρh)), mode shape sin(mπx/a) sin(nπy/b). For a = 0.6 m,
    // b = 0.4 m the order is (1,1), (2,1), (1,2), (3,1), (2,2), (3,2): (m/a)² + (n/b)² = 9.03, 17.4,
    // 27.8, 31.3, 36.1, 50.0 m⁻², far enough apart that 36 × 24 elements keep the order.
    let json = r#"{"materials": {"al": {"youngs_modulus": 7e10, "poisson_ratio": 0.33, "density": 2700}},
        "panels": [{"name": "p", "size": [0.6, 0.4], "thickness": 0.0015, "material": "al", "divisions": [36, 24],
                    "edges": {"x0": "simply_supported", "x1": "simply_supported",
                              "y0": "simply_supported", "y1": "simply_supported"}}]}"#;
    let (_, ins, f) = insight_of(json, 6, false);
    let want = [(1, 1), (2, 1), (1, 2), (3, 1), (2, 2), (3, 2)];
    let (a, b, h) = (0.6f64, 0.4f64, 0.0015f64);
    let d = 7e10 * h.powi(3) / (12.0 * (1.0 - 0.33f64 * 0.33));
    for (i, &(m, n)) in want.iter().enumerate() {
        let c = &ins.modes[i].class;
        assert_eq!((c.kind, c.m, c.n), (ModeKind::Panel, Some(m), Some(n)), "mode {}: {c:?}", i + 1);
        let navier = std::f64::consts::PI.powi(2)
            * ((m as f64 / a).powi(2) + (n as f64 / b).powi(2))
            * (d / (2700.0 * h)).sqrt()
            / (2.0 * std::f64::consts::PI);
        // 2 %: the bilinear element's error ≈ 0.1 (k h_e)² at these wavenumbers (DEVELOPERS.md).
        assert_rel(f[i], navier, 0.02, &format!("panel mode ({m},{n}) against Navier"));
    }
}
