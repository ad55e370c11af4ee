//! The sparse block-Lanczos route agrees with the dense reference solver (a general-purpose dense
//! symmetric eigensolver, faer) on varied models: exact pairs, a free-free frame with six rigid
//! modes, springs and point masses, lumped mass, absorbers as DOFs, and band requests.

mod common;
use antinode::solver::{
    AssemblyOptions, EigenParams, Method, ModalSolution, ModeRequest, System, assemble, solve_modes,
};
use common::*;

fn solve(sys: &System, request: ModeRequest, method: Method) -> ModalSolution {
    solve_modes(sys, request, &EigenParams { method, ..EigenParams::default() }).unwrap_or_else(|e| panic!("{e}"))
}

fn m_dot(sys: &System, a: &[f64], b: &[f64]) -> f64 {
    let mb = sys.mass_times(b);
    a.iter().zip(&mb).map(|(x, y)| x * y).sum()
}

/// Compares eigenvalues (1e-9 relative for elastic modes) and eigenvectors: for each mode, the
/// M-projection of the sparse vector on the dense modes of its eigenvalue cluster has unit norm.
fn compare(sys: &System, sparse: &ModalSolution, dense: &ModalSolution, what: &str) {
    assert_eq!(sparse.n_modes(), dense.n_modes(), "{what}: number of modes");
    assert_eq!(sparse.n_zero_energy, dense.n_zero_energy, "{what}: zero-energy modes");
    let scale = dense.eigenvalues.last().copied().unwrap_or(1.0).abs();
    for i in 0..sparse.n_modes() {
        let (a, b) = (sparse.eigenvalues[i], dense.eigenvalues[i]);
        if i < dense.n_zero_energy {
            assert!(a.abs() < 1e-9 * scale && b.abs() < 1e-9 * scale, "{what}: zero mode {i}: {a} {b}");
        } else {
            assert_rel(a, b, 1e-9, &format!("{what}: eigenvalue {}", i + 1));
        }
        // Cluster of the dense solution around this eigenvalue (relative 1e-8, or all zero modes).
        let cluster: Vec<usize> = (0..dense.n_modes())
            .filter(|&j| {
                if i < dense.n_zero_energy {
                    j < dense.n_zero_energy
                } else {
                    (dense.eigenvalues[j] - b).abs() <= 1e-8 * b.abs()
                }
            })
            .collect();
        let proj: f64 = cluster.iter().map(|&j| m_dot(sys, sparse.shape(i), dense.shape(j)).powi(2)).sum();
        assert!((proj - 1.0).abs() < 1e-8, "{what}: mode {} lies outside the dense eigenspace ({proj})", i + 1);
    }
    assert!(sparse.orthogonality_error < 1e-10, "{what}: orthogonality {}", sparse.orthogonality_error);
    assert!(sparse.sturm_check.passed, "{what}: {:?}", sparse.sturm_check);
}

#[test]
fn cantilever_tube_with_exact_pairs() {
    let tube = r#"{"circular_tube": {"outer_diameter": 0.1, "wall_thickness": 0.005}}"#;
    let s = structure(&beam_model(tube, 30, 2.0, r#"[{"at": {"line": "beam", "at": 0}, "fixed": "clamped"}]"#, STEEL));
    let sys = system(&s);
    let sp = solve(&sys, ModeRequest::Lowest(24), Method::Lanczos);
    let de = solve(&sys, ModeRequest::Lowest(24), Method::Dense);
    compare(&sys, &sp, &de, "cantilever tube");
    // The pairs are exactly repeated and both routes give them the same canonical orientation: one
    // member moving along Y, one along Z.
    for i in 0..24 {
        let d = m_dot(&sys, sp.shape(i), de.shape(i));
        assert!((d - 1.0).abs() < 1e-6, "mode {}: orientation differs between routes ({d})", i + 1);
    }
}

#[test]
fn free_free_frame_with_six_rigid_modes() {
    let s = structure(FREE_FRAME);
    let sys = system(&s);
    let sp = solve(&sys, ModeRequest::Lowest(20), Method::Lanczos);
    let de = solve(&sys, ModeRequest::Lowest(20), Method::Dense);
    assert_eq!(sp.n_zero_energy, 6, "a free body has six rigid-body modes");
    compare(&sys, &sp, &de, "free-free frame");
}

#[test]
fn frame_on_springs_lumped_mass() {
    // Rotational ground springs of 10 N·m/rad instead of 1e4 give a 0.9 Hz rocking mode whose
    // relative accuracy is limited by round-off to about ε·λ_max/λ ≈ 1e-9 in both routes (residual
    // ~1e-8 in both); this model keeps the comparison well conditioned.
    let json = FREE_FRAME.replace(
        r#""point_masses""#,
        r#""mass_matrix": "lumped",
  "springs": [{"at": {"node": 1}, "stiffness": {"ux": 1e5, "uy": 1e5, "uz": 2e5, "rx": 1e4, "ry": 1e4, "rz": 1e4}},
              {"at": {"xyz": [0.6, 0.4, 0]}, "stiffness": {"uz": 5e4}},
              {"at": {"line": "c", "at": 0.5}, "to": {"line": "a", "at": 0.5}, "stiffness": {"uy": 2e3}}],
  "point_masses""#,
    );
    let s = structure(&json);
    let sys = system(&s);
    let sp = solve(&sys, ModeRequest::Lowest(18), Method::Lanczos);
    let de = solve(&sys, ModeRequest::Lowest(18), Method::Dense);
    assert_eq!(sp.n_zero_energy, 0);
    compare(&sys, &sp, &de, "frame on springs, lumped mass");
}

#[test]
fn shaft_with_absorbers_as_degrees_of_freedom() {
    let s = structure(
        r#"{
  "materials": {"al": {"youngs_modulus": 7.0e10, "poisson_ratio": 0.33, "density": 2700}},
  "sections": {"tube": {"circular_tube": {"outer_diameter": 0.05, "wall_thickness": 0.002}}},
  "lines": [{"name": "shaft", "from": [0, 0, 0], "to": [1.2, 0, 0], "elements": 40, "section": "tube", "material": "al"}],
  "supports": [{"at": {"line": "shaft", "at": 0.0}, "fixed": ["ux", "uy", "uz", "rx"]},
               {"at": {"line": "shaft", "at": 1.0}, "fixed": ["uy", "uz"]}],
  "absorbers": [{"at": {"line": "shaft", "at": 0.5}, "direction": "z", "mass": 0.05, "stiffness": 1.6e4, "damping": 1.0},
                {"at": {"line": "shaft", "at": 0.25}, "direction": [0, 1, 1], "mass": 0.03, "stiffness": 1.5e5}]
}"#,
    );
    let sys = assemble(&s, AssemblyOptions { include_absorbers: true }).unwrap_or_else(|e| panic!("{e}"));
    let sp = solve(&sys, ModeRequest::Lowest(16), Method::Lanczos);
    let de = solve(&sys, ModeRequest::Lowest(16), Method::Dense);
    compare(&sys, &sp, &de, "shaft with absorbers");
}

#[test]
fn near_equal_frequencies_are_resolved() {
    // Two identical cantilevers joined by a very soft spring: each bending frequency splits into a
    // pair with relative spacing ~1e-6. Both members must be found and distinct.
    let s = structure(
        r#"{
  "materials": {"m": {"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}},
  "sections": {"b": {"rectangle": {"width": 0.02, "height": 0.01}}},
  "lines": [{"name": "a", "from": [0, 0, 0], "to": [0.5, 0, 0], "elements": 20, "section": "b", "material": "m"},
            {"name": "c", "from": [0, 0.1, 0], "to": [0.5, 0.1, 0], "elements": 20, "section": "b", "material": "m"}],
  "supports": [{"at": {"line": "a", "at": 0}, "fixed": "clamped"}, {"at": {"line": "c", "at": 0}, "fixed": "clamped"}],
  "springs": [{"at": {"line": "a", "at": 1}, "to": {"line": "c", "at": 1}, "stiffness": {"uz": 0.001}}]
}"#,
    );
    let sys = system(&s);
    let sp = solve(&sys, ModeRequest::Lowest(12), Method::Lanczos);
    let de = solve(&sys, ModeRequest::Lowest(12), Method::Dense);
    compare(&sys, &sp, &de, "near-equal pair");
    let split = (de.eigenvalues[1] - de.eigenvalues[0]) / de.eigenvalues[0];
    assert!(split > 1e-8 && split < 1e-4, "the test model must have a close pair, got {split}");
}

#[test]
fn band_requests_return_exactly_the_dense_set() {
    let tube = r#"{"circular_tube": {"outer_diameter": 0.1, "wall_thickness": 0.005}}"#;
    let s = structure(&beam_model(tube, 30, 2.0, r#"[{"at": {"line": "beam", "at": 0}, "fixed": "clamped"}]"#, STEEL));
    let sys = system(&s);
    let all = solve(&sys, ModeRequest::Lowest(30), Method::Dense);
    let f: Vec<f64> = (0..30).map(|i| all.frequency_hz(i)).collect();
    // Bands with edges between modes, and with the lower edge exactly between the two members... of
    // a pair (an edge at the pair's own frequency must keep or drop both together).
    for (lo, hi) in
        [(0.0, 0.5 * (f[5] + f[7])), (0.5 * (f[2] + f[4]), 0.5 * (f[11] + f[13])), (f[3] * 0.999999, f[9] * 1.000001)]
    {
        let sp = solve(&sys, ModeRequest::Band { low_hz: lo, high_hz: hi }, Method::Lanczos);
        let want: Vec<usize> = (0..30).filter(|&i| f[i] >= lo && f[i] <= hi).collect();
        assert_eq!(sp.n_modes(), want.len(), "band [{lo}, {hi}]");
        for (k, &i) in want.iter().enumerate() {
            assert_rel(sp.eigenvalues[k], all.eigenvalues[i], 1e-9, &format!("band [{lo}, {hi}] mode {k}"));
        }
    }
}
