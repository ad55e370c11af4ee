//! The parametric generators (`tubes`, `panels`) against theory and against the same parts built
//! by hand: shell tube vs beam tube, ovaling bounds, Navier plate frequencies, the driving-point
//! anti-resonance of a panel on mounts, and beam tubes equal to the equivalent `lines` models.

mod common;

use common::shells::wave_number;
use common::{assert_rel, lowest, structure};

/// Steel of the reference sheet's worked examples: E = 210 GPa, ν = 0.3, ρ = 7850 kg/m³.
const STEEL: &str = r#"{"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}"#;

fn hz(json: &str, n: usize) -> (Vec<f64>, usize) {
    let (_, sol) = lowest(&structure(json), n);
    ((0..sol.n_modes()).map(|i| sol.frequency_hz(i)).collect(), sol.n_zero_energy)
}

#[test]
fn generated_shell_tube_and_beam_tube_agree_on_the_first_bending_pair() {
    // Free-free steel tube, outer diameter 102 mm, wall 2 mm (mid radius 50 mm), 1.6 m long
    // (L/D = 15.7): first bending near 255 Hz, below the first ovaling (~530 Hz) and torsion.
    let tube = |fidelity: &str, counts: &str| {
        format!(
            r#"{{"materials": {{"steel": {STEEL}}},
                "tubes": [{{"name": "t", "length": 1.6, "outer_diameter": 0.102, "wall_thickness": 0.002,
                            "material": "steel", "fidelity": "{fidelity}", {counts}}}]}}"#
        )
    };
    let (shell, zero) = hz(&tube("shell", r#""around": 32, "along": 64"#), 8);
    // A free body has six rigid-body modes, three translations and three rotations (common practice).
    assert_eq!(zero, 6, "a free shell tube has six rigid-body modes");
    let (beam, zero) = hz(&tube("beam", r#""along": 100"#), 8);
    // A free body has six rigid-body modes, three translations and three rotations (common practice).
    assert_eq!(zero, 6, "a free beam tube has six rigid-body modes");
    // Timoshenko beams (the default "shear_deformation": true) and the shell wall describe the same
    // bending of a long tube: within 1 %, the issue's criterion (common practice).
    for i in 6..8 {
        assert_rel(shell[i], beam[i], 0.01, &format!("bending mode {} shell vs beam", i - 5));
    }
    assert_rel(shell[7], shell[6], 1e-6, "the shell tube's bending pair is a pair");
}

#[test]
fn generated_long_free_tube_ovaling_lies_between_the_rayleigh_bounds() {
    // Mid radius R = 0.1 m, wall h = 1 mm (outer diameter 0.201 m), L = 1 m, steel; 64 facets
    // around, 32 along.
    let (r, h): (f64, f64) = (0.1, 0.001);
    let json = format!(
        r#"{{"materials": {{"steel": {STEEL}}},
            "tubes": [{{"name": "t", "length": 1.0, "outer_diameter": 0.201, "wall_thickness": 0.001,
                        "material": "steel", "fidelity": "shell", "around": 64, "along": 32}}]}}"#
    );
    let s = structure(&json);
    let (sys, sol) = lowest(&s, 16);
    // A free body has six rigid-body modes, three translations and three rotations (common practice).
    assert_eq!(sol.n_zero_energy, 6);
    let ring = &s.tubes[0].rings[16];
    let waves: Vec<(usize, f64)> = (sol.n_zero_energy..sol.n_modes())
        .map(|i| {
            let d = sys.dof_map().expand(sol.shape(i));
            let on_ring: Vec<[f64; 6]> = ring.iter().map(|&n| d[n]).collect();
            (wave_number(&on_ring), sol.frequency_hz(i))
        })
        .collect();
    // Rayleigh's inextensional frequency (Theory of Sound; reference sheet §5.2):
    // ω² = B n²(n² − 1)²/(ρ h R⁴ (n² + 1)), B = E h³/12 for a narrow ring (plane stress) and
    // E h³/(12(1 − ν²)) for an infinitely long tube (plane strain). A free finite tube lies between
    // them (§5.4, a bounds-type check); 1 % margin for the mesh (64 facets: +0.49 % at n = 2 on the
    // narrow ring, docs/verification.md).
    let (e, nu, rho) = (2.1e11, 0.3, 7850.0);
    let rayleigh = |b: f64| {
        let n = 2.0f64;
        (b * n * n * (n * n - 1.0).powi(2) / (rho * h * r.powi(4) * (n * n + 1.0))).sqrt()
            / (2.0 * std::f64::consts::PI)
    };
    let lo = rayleigh(e * h.powi(3) / 12.0);
    let hi = rayleigh(e * h.powi(3) / (12.0 * (1.0 - nu * nu)));
    assert_rel(lo, 63.763, 1e-4, "plane-stress value against the sheet's worked example");
    assert_rel(hi, 66.842, 1e-4, "plane-strain value against the sheet's worked example");
    let pair: Vec<f64> = waves.iter().filter(|w| w.0 == 2).map(|w| w.1).take(2).collect();
    assert_eq!(pair.len(), 2, "two modes with n = 2 among {waves:?}");
    for f in pair {
        assert!(f >= 0.99 * lo && f <= 1.01 * hi, "n = 2 ovaling at {f:.3} Hz outside [{lo:.3}, {hi:.3}] Hz (± 1 %)");
    }
}

/// λ = ω a² √(ρt/D), D = E t³/(12(1 − ν²)), of each mode of a 1 m square steel plate `t` thick.
fn plate_lambdas(json: &str, count: usize, t: f64) -> (Vec<f64>, usize) {
    let (_, sol) = lowest(&structure(json), count);
    let (e, nu, rho) = (2.1e11, 0.3, 7850.0);
    let d = e * t.powi(3) / (12.0 * (1.0 - nu * nu));
    let scale = (rho * t / d).sqrt();
    (sol.eigenvalues.iter().map(|l| l.max(0.0).sqrt() * scale).collect(), sol.n_zero_energy)
}

#[test]
fn generated_simply_supported_panel_matches_navier() {
    // 1 m × 1 m × 10 mm steel (a/t = 100: transverse shear lowers λ by < 0.2 %).
    let json = format!(
        r#"{{"materials": {{"steel": {STEEL}}},
            "panels": [{{"name": "p", "size": [1, 1], "thickness": 0.01, "material": "steel", "divisions": [48, 48],
                         "edges": {{"x0": "simply_supported", "x1": "simply_supported",
                                    "y0": "simply_supported", "y1": "simply_supported"}}}}]}}"#
    );
    let (l, zero) = plate_lambdas(&json, 6, 0.01);
    assert_eq!(zero, 0, "four supported edges hold the panel");
    // Navier: λ_mn = π²(m² + n²) (Leissa, Vibration of Plates, NASA SP-160, 1969), modes (1,1),
    // (1,2), (2,1), (2,2), (1,3), (3,1). The bilinear element is +0.4 % (mode 1) and +4 % (mode 5)
    // high on 16 × 16 and falls as h² (docs/verification.md): 48 × 48 keeps all six within 0.5 %.
    let p2 = std::f64::consts::PI.powi(2);
    for (i, k) in [2.0, 5.0, 5.0, 8.0, 10.0, 10.0].iter().enumerate() {
        assert_rel(l[i], p2 * k, 0.005, &format!("SSSS panel mode {}", i + 1));
    }
}

#[test]
fn generated_free_panel_has_six_rigid_body_modes() {
    let json = format!(
        r#"{{"materials": {{"steel": {STEEL}}},
            "panels": [{{"name": "p", "size": [1, 1], "thickness": 0.01, "material": "steel", "divisions": [16, 16]}}]}}"#
    );
    let (l, zero) = plate_lambdas(&json, 8, 0.01);
    // A free body has six rigid-body modes, three translations and three rotations (common practice).
    assert_eq!(zero, 6, "three in-plane and three out-of-plane rigid motions");
    // First free-plate value λ = 13.468 (converged Ritz, reference sheet §3.2); 2 % on 16 × 16.
    assert_rel(l[6], 13.4682, 0.02, "first elastic mode of the free panel");
}

#[test]
fn panel_on_four_corner_mounts_has_a_driving_point_anti_resonance_between_its_first_modes() {
    // Invented test case: a 0.6 m × 0.4 m × 1.5 mm aluminium panel on four corner mounts of
    // unequal vertical stiffness (no repeated frequencies), stiffer in plane.
    let json = r#"{
      "materials": {"al": {"youngs_modulus": 7e10, "poisson_ratio": 0.33, "density": 2700}},
      "panels": [{"name": "p", "size": [0.6, 0.4], "thickness": 0.0015, "material": "al", "divisions": [24, 16],
                  "mounts": [{"at": [0, 0], "stiffness": {"ux": 1e5, "uy": 1e5, "uz": 2.0e4}},
                             {"at": [0.6, 0], "stiffness": {"ux": 1e5, "uy": 1e5, "uz": 2.5e4}},
                             {"at": [0.6, 0.4], "stiffness": {"ux": 1e5, "uy": 1e5, "uz": 3.0e4}},
                             {"at": [0, 0.4], "stiffness": {"ux": 1e5, "uy": 1e5, "uz": 3.5e4}}]}],
      "regions": {"drive": {"panel": "p", "point": [0.1, 0.075]}}
    }"#;
    let s = structure(json);
    let p = s.regions["drive"][0];
    let (sys, sol) = lowest(&s, 20);
    assert_eq!(sol.n_zero_energy, 0, "the mounts hold every rigid motion");
    let phi: Vec<f64> = (0..sol.n_modes()).map(|i| sys.dof_map().expand(sol.shape(i))[p][2]).collect();
    let largest = phi.iter().map(|v| v * v).fold(0.0, f64::max);
    // The first two modes that move the driving point along z.
    let moving: Vec<usize> = (0..sol.n_modes()).filter(|&i| phi[i] * phi[i] > 1e-6 * largest).take(2).collect();
    assert_eq!(moving.len(), 2);
    let (a, b) = (moving[0], moving[1]);
    let (wa, wb) = (sol.eigenvalues[a].sqrt(), sol.eigenvalues[b].sqrt());
    assert!(wb > wa * (1.0 + 1e-6), "two distinct frequencies: {wa} and {wb} rad/s");
    // Undamped driving-point receptance from the modes, H(ω) = Σ φ_i(p)²/(ω_i² − ω²) (common
    // practice). Every numerator is positive, so between two consecutive poles H runs from −∞ to +∞
    // and crosses zero: the anti-resonance that alternates with the resonances of a driving-point
    // function.
    let h = |w: f64| -> f64 { (0..sol.n_modes()).map(|i| phi[i] * phi[i] / (sol.eigenvalues[i] - w * w)).sum() };
    let (mut lo, mut hi) = (wa * (1.0 + 1e-6), wb * (1.0 - 1e-6));
    assert!(h(lo) < 0.0, "just above mode {}: H = {}", a + 1, h(lo));
    assert!(h(hi) > 0.0, "just below mode {}: H = {}", b + 1, h(hi));
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if h(mid) < 0.0 { lo = mid } else { hi = mid }
    }
    let w0 = 0.5 * (lo + hi);
    assert!(w0 > wa && w0 < wb, "anti-resonance at {w0} rad/s between {wa} and {wb}");
    // The zero is a crossing, not a pole: H is small there compared with its values a little away.
    let scale = h(0.5 * (wa + w0)).abs().min(h(0.5 * (w0 + wb)).abs());
    assert!(h(w0).abs() < 1e-6 * scale, "H(ω₀) = {} against {scale}", h(w0));
}

/// A steel tube along X as generated beams and as the equivalent `lines` model: the same section
/// (Timoshenko, as the tube's default), the same nodes, the same supports.
#[test]
fn beam_tube_equals_the_equivalent_lines_model() {
    let tube = format!(
        r#"{{"materials": {{"steel": {STEEL}}},
            "tubes": [{{"name": "shaft", "length": 1.2, "outer_diameter": 0.05, "wall_thickness": 0.002,
                        "material": "steel", "along": 48,
                        "ends": {{"start": "pinned", "end": {{"bearing": {{"uy": 2e6, "uz": 3e6}}}}}}}}],
            "supports": [{{"at": {{"tube": "shaft", "at": 1.0}}, "fixed": ["rx"]}}]}}"#
    );
    let lines = format!(
        r#"{{"materials": {{"steel": {STEEL}}},
            "sections": {{"s": {{"circular_tube": {{"outer_diameter": 0.05, "wall_thickness": 0.002,
                                                     "shear_deformation": true}}}}}},
            "lines": [{{"name": "shaft", "from": [0, 0, 0], "to": [1.2, 0, 0], "elements": 48,
                        "section": "s", "material": "steel"}}],
            "supports": [{{"at": {{"line": "shaft", "at": 0.0}}, "fixed": "pinned"}},
                         {{"at": {{"line": "shaft", "at": 1.0}}, "fixed": ["rx"]}}],
            "springs": [{{"at": {{"line": "shaft", "at": 1.0}}, "stiffness": {{"uy": 2e6, "uz": 3e6}}}}]}}"#
    );
    let (a, b) = (structure(&tube), structure(&lines));
    assert_eq!(a.nodes.len(), b.nodes.len());
    assert_rel(a.total_mass(), b.total_mass(), 1e-12, "mass");
    let (fa, za) = hz(&tube, 12);
    let (fb, zb) = hz(&lines, 12);
    // ux is held at the start and rx at the end: no zero-frequency mode in either.
    assert_eq!((za, zb), (0, 0));
    for i in 0..12 {
        // The same matrices up to node coordinates rounded differently (f·L vs from + t(to − from)).
        assert_rel(fa[i], fb[i], 1e-9, &format!("mode {}", i + 1));
    }
}

#[test]
fn stepped_beam_tube_equals_two_lines_and_a_tube_along_z_equals_its_line() {
    // Thick wall on the first quarter: 40 elements shared 10 + 30.
    let tube = format!(
        r#"{{"materials": {{"steel": {STEEL}}},
            "tubes": [{{"name": "shaft", "length": 1.2, "outer_diameter": 0.05, "wall_thickness": 0.002,
                        "material": "steel", "along": 40, "start": [0.5, -0.2, 1.0], "axis": [0, 0, 2],
                        "segments": [{{"to": 0.25, "wall_thickness": 0.005}}, {{"to": 1}}]}}]}}"#
    );
    let lines = format!(
        r#"{{"materials": {{"steel": {STEEL}}},
            "sections": {{"thick": {{"circular_tube": {{"outer_diameter": 0.05, "wall_thickness": 0.005,
                                                         "shear_deformation": true}}}},
                          "thin": {{"circular_tube": {{"outer_diameter": 0.05, "wall_thickness": 0.002,
                                                        "shear_deformation": true}}}}}},
            "lines": [{{"name": "a", "from": [0.5, -0.2, 1.0], "to": [0.5, -0.2, 1.3], "elements": 10,
                        "section": "thick", "material": "steel"}},
                      {{"name": "b", "from": [0.5, -0.2, 1.3], "to": [0.5, -0.2, 2.2], "elements": 30,
                        "section": "thin", "material": "steel"}}]}}"#
    );
    assert_rel(structure(&tube).total_mass(), structure(&lines).total_mass(), 1e-12, "mass");
    let (fa, za) = hz(&tube, 14);
    let (fb, zb) = hz(&lines, 14);
    // A free body has six rigid-body modes, three translations and three rotations (common practice).
    assert_eq!((za, zb), (6, 6), "free-free");
    for i in 6..14 {
        assert_rel(fa[i], fb[i], 1e-9, &format!("stepped tube mode {}", i + 1));
    }
}
