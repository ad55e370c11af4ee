//! Uniform beams against closed forms: bending frequencies for five end conditions, axial and
//! torsional modes of a tube, static deflection with and without shear, the Timoshenko frequency
//! equation, and invariance under rotation of the whole model.

mod common;
use antinode::solver::{EigenParams, Method, ModalSolution, ModeRequest, System, solve_modes, solve_static};
use common::*;

/// Rectangle 50 mm wide (local z = global Y with the default orientation) and 10 mm high (local y =
/// global Z): EI = 875 N·m² for bending in the X-Z plane, ρA = 3.925 kg/m, L = 1 m (the reference
/// sheet's worked example, §1.3).
const BAR: &str = r#"{"rectangle": {"width": 0.05, "height": 0.01}}"#;

/// √(EI/ρA)/(2πL²) for the bar, in Hz: 2.376317 (reference sheet §1.3).
fn bar_factor() -> f64 {
    let ei = 2.1e11 * 0.05 * 0.01f64.powi(3) / 12.0;
    let rho_a = 7850.0 * 0.05 * 0.01;
    (ei / rho_a).sqrt() / (2.0 * std::f64::consts::PI)
}

/// Frequencies of the modes whose motion is along global Z, lowest first.
fn z_modes(sol: &ModalSolution, sys: &System, n: usize) -> Vec<f64> {
    let map = sys.dof_map();
    let mut out = Vec::new();
    for i in sol.n_zero_energy..sol.n_modes() {
        let nodes = map.expand(sol.shape(i));
        let z: f64 = nodes.iter().map(|d| d[2] * d[2]).sum();
        let all: f64 = nodes.iter().map(|d| d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sum();
        if all > 0.0 && z / all > 0.999 {
            out.push(sol.frequency_hz(i));
        }
        if out.len() == n {
            break;
        }
    }
    out
}

const PINNED_LEFT: &str = r#"{"at": {"line": "beam", "at": 0}, "fixed": ["ux", "uy", "uz", "rx"]}"#;
const PINNED_RIGHT: &str = r#"{"at": {"line": "beam", "at": 1}, "fixed": ["uy", "uz"]}"#;
const CLAMPED_LEFT: &str = r#"{"at": {"line": "beam", "at": 0}, "fixed": "clamped"}"#;
const CLAMPED_RIGHT: &str = r#"{"at": {"line": "beam", "at": 1}, "fixed": "clamped"}"#;

/// Checks the first three bending frequencies in the X-Z plane against (β_nL)² √(EI/ρA)/(2πL²).
fn check_bending(supports: &str, beta_l: [f64; 3], what: &str) {
    let s = structure(&beam_model(BAR, 40, 1.0, supports, STEEL));
    let (sys, sol) = lowest(&s, 12);
    assert!(sol.sturm_check.passed, "{what}: {:?}", sol.sturm_check);
    let f = z_modes(&sol, &sys, 3);
    assert_eq!(f.len(), 3, "{what}: three bending modes in X-Z expected among the lowest 12");
    for (n, (got, bl)) in f.iter().zip(beta_l).enumerate() {
        let want = bl * bl * bar_factor();
        // Cubic Hermite elements with consistent mass converge as h⁴; with 40 elements the error of
        // modes 1-3 is far below the 0.1 % the issue allows.
        assert_rel(*got, want, 1e-3, &format!("{what} bending mode {}", n + 1));
    }
}

// Roots β_nL of the characteristic equations (Thomson, Theory of Vibration with Applications,
// Table 9.5-1 and Appendix D give them to 4-5 digits; the 10-digit values solve sin βL = 0,
// cos βL cosh βL = ±1 and tan βL = tanh βL).
const SS: [f64; 3] = [std::f64::consts::PI, 2.0 * std::f64::consts::PI, 3.0 * std::f64::consts::PI];
const CC: [f64; 3] = [4.730040745, 7.853204624, 10.99560784];
const CF: [f64; 3] = [1.875104069, 4.694091133, 7.854757438];
const CP: [f64; 3] = [3.926602312, 7.068582746, 10.21017612];

#[test]
fn pinned_pinned_bending() {
    check_bending(&format!("[{PINNED_LEFT}, {PINNED_RIGHT}]"), SS, "pinned-pinned");
}

#[test]
fn clamped_free_bending() {
    check_bending(&format!("[{CLAMPED_LEFT}]"), CF, "clamped-free");
}

#[test]
fn clamped_clamped_bending() {
    check_bending(&format!("[{CLAMPED_LEFT}, {CLAMPED_RIGHT}]"), CC, "clamped-clamped");
}

#[test]
fn clamped_pinned_bending() {
    check_bending(&format!("[{CLAMPED_LEFT}, {PINNED_RIGHT}]"), CP, "clamped-pinned");
}

#[test]
fn free_free_bending_and_six_rigid_modes() {
    // Free-free elastic frequencies equal the clamped-clamped ones (Thomson, Table 9.5-1), and a free
    // body has exactly six rigid-body modes (common practice).
    check_bending("[]", CC, "free-free");
    let s = structure(&beam_model(BAR, 40, 1.0, "[]", STEEL));
    let (_, sol) = lowest(&s, 10);
    assert_eq!(sol.n_zero_energy, 6);
    assert!(
        sol.frequency_hz(5) < 1e-2 && sol.frequency_hz(6) > 50.0,
        "{} {}",
        sol.frequency_hz(5),
        sol.frequency_hz(6)
    );
}

/// Steel tube r_o = 50 mm, r_i = 45 mm, L = 2 m (reference sheet §2.4).
const TUBE: &str = r#"{"circular_tube": {"outer_diameter": 0.1, "wall_thickness": 0.005}}"#;

/// Frequencies of modes that are pure axial (ux) or pure torsion (rx) motion.
fn axial_and_torsion(sol: &ModalSolution, sys: &System) -> (Vec<f64>, Vec<f64>) {
    let (mut axial, mut torsion) = (Vec::new(), Vec::new());
    for i in sol.n_zero_energy..sol.n_modes() {
        let d = sys.dof_map().expand(sol.shape(i));
        let ux: f64 = d.iter().map(|v| v[0] * v[0]).sum();
        let lateral: f64 = d.iter().map(|v| v[1] * v[1] + v[2] * v[2] + v[4] * v[4] + v[5] * v[5]).sum();
        let rx: f64 = d.iter().map(|v| v[3] * v[3]).sum();
        if lateral < 1e-12 * (ux + rx) {
            if rx < 1e-12 * ux {
                axial.push(sol.frequency_hz(i));
            } else if ux < 1e-12 * rx {
                torsion.push(sol.frequency_hz(i));
            }
        }
    }
    (axial, torsion)
}

#[test]
fn axial_and_torsion_modes_of_a_tube() {
    let e: f64 = 2.1e11;
    let g = e / 2.6;
    let rho: f64 = 7850.0;
    let l = 2.0;
    let (cl, ct) = ((e / rho).sqrt(), (g / rho).sqrt());
    for (supports, fixed_free) in [("[]", false), (CLAMPED_LEFT, true)] {
        let supports = if fixed_free { format!("[{supports}]") } else { supports.to_string() };
        let s = structure(&beam_model(TUBE, 100, l, &supports, STEEL));
        let sys = system(&s);
        let params = EigenParams { method: Method::Lanczos, ..EigenParams::default() };
        let sol = solve_modes(&sys, ModeRequest::Band { low_hz: 0.0, high_hz: 4000.0 }, &params)
            .unwrap_or_else(|e| panic!("{e}"));
        let (axial, torsion) = axial_and_torsion(&sol, &sys);
        for n in 1..=3 {
            // Thomson §9.2 (rod, f = n c/(2L) free-free, (2n−1) c/(4L) fixed-free) and §9.3 (torsion,
            // the same with c_T = √(G/ρ) for a circular section); worked values of the reference
            // sheet §2.4: torsion free-free 801.915 Hz, axial fixed-free 646.524 Hz for n = 1.
            let k = if fixed_free { (2 * n - 1) as f64 / 4.0 } else { n as f64 / 2.0 };
            let (fa, ft) = (k * cl / l, k * ct / l);
            // Linear elements, consistent mass: error ≈ (kL/N)²/24 ≤ 0.04 % here; 0.1 % tolerance.
            assert_rel(axial[n - 1], fa, 1e-3, &format!("axial mode {n}, fixed-free {fixed_free}"));
            assert_rel(torsion[n - 1], ft, 1e-3, &format!("torsion mode {n}, fixed-free {fixed_free}"));
        }
        if !fixed_free {
            assert_rel(torsion[0], 801.915, 1e-3, "torsion free-free worked value");
        } else {
            assert_rel(axial[0], 646.524, 1e-3, "axial fixed-free worked value");
        }
    }
}

#[test]
fn cantilever_tip_deflection_with_and_without_shear() {
    // δ = PL³/(3EI) (Euler-Bernoulli cantilever; any mechanics-of-materials text, e.g. Gere &
    // Timoshenko, Mechanics of Materials), plus PL/(κGA) with shear deformation (Timoshenko beam
    // theory; κ = 10(1+ν)/(12+11ν) for a rectangle, Cowper, J. Appl. Mech. 33, 1966). The interdependent
    // interpolation element is exact for this load case, so the tolerance is round-off.
    let (b, h, l, p) = (0.05, 0.1, 0.3, 1000.0);
    let (e, nu) = (2.1e11, 0.3);
    let g = e / (2.0 * (1.0 + nu));
    let i = b * h * h * h / 12.0;
    for shear in [false, true] {
        let section = format!(r#"{{"rectangle": {{"width": {b}, "height": {h}, "shear_deformation": {shear}}}}}"#);
        let s = structure(&beam_model(&section, 4, l, &format!("[{CLAMPED_LEFT}]"), STEEL));
        let sys = system(&s);
        let tip = s.lines[0].nodes[4];
        let u = solve_static(&sys, &[(tip, [0.0, 0.0, p, 0.0, 0.0, 0.0])]).unwrap_or_else(|e| panic!("{e}"));
        let kappa = 10.0 * (1.0 + nu) / (12.0 + 11.0 * nu);
        let mut want = p * l.powi(3) / (3.0 * e * i);
        if shear {
            want += p * l / (kappa * g * b * h);
        }
        assert_rel(u[tip][2], want, 1e-9, &format!("tip deflection, shear {shear}"));
    }
}

#[test]
fn timoshenko_beam_frequency_equation() {
    // Simply supported Timoshenko beam (shear and rotary inertia), w = sin(nπx/L): the frequency
    // equation EI k⁴ − ρAω² − ρI(1 + E/(κG)) k²ω² + (ρ²I/(κG)) ω⁴ = 0, k = nπ/L (Timoshenko, Phil. Mag.
    // 41, 1921; Han, Benaroya & Wei, J. Sound Vib. 225(5), 1999, simply supported case — from memory).
    // A stocky bar, L/h = 5, where Euler-Bernoulli is 7 % high for mode 1.
    let (b, h, l) = (0.05, 0.1, 0.5);
    let (e, nu, rho) = (2.1e11, 0.3, 7850.0);
    let g = e / (2.0 * (1.0 + nu));
    let kappa = 10.0 * (1.0 + nu) / (12.0 + 11.0 * nu);
    let (a, i) = (b * h, b * h * h * h / 12.0);
    let section = format!(r#"{{"rectangle": {{"width": {b}, "height": {h}, "shear_deformation": true}}}}"#);
    let s = structure(&beam_model(&section, 80, l, &format!("[{PINNED_LEFT}, {PINNED_RIGHT}]"), STEEL));
    let (sys, sol) = lowest(&s, 12);
    let f = z_modes(&sol, &sys, 2);
    for n in 1..=2 {
        let k = n as f64 * std::f64::consts::PI / l;
        let qa = rho * rho * i / (kappa * g);
        let qb = -(rho * a + rho * i * (1.0 + e / (kappa * g)) * k * k);
        let qc = e * i * k.powi(4);
        let w2 = (-qb - (qb * qb - 4.0 * qa * qc).sqrt()) / (2.0 * qa);
        // 80 elements: converged to well below 0.1 %.
        assert_rel(f[n - 1], w2.sqrt() / (2.0 * std::f64::consts::PI), 1e-3, &format!("Timoshenko mode {n}"));
        let eb = (n as f64 * std::f64::consts::PI).powi(2) / (2.0 * std::f64::consts::PI * l * l)
            * (e * i / (rho * a)).sqrt();
        assert!(f[n - 1] < 0.97 * eb, "shear and rotary inertia must lower the frequency: {} vs {eb}", f[n - 1]);
    }
}

/// Rotates a point by the rotation matrix `r`.
fn rot(r: &[[f64; 3]; 3], p: [f64; 3]) -> [f64; 3] {
    [0, 1, 2].map(|i| r[i][0] * p[0] + r[i][1] * p[1] + r[i][2] * p[2])
}

fn frame_json(r: &[[f64; 3]; 3]) -> String {
    let p = |x: [f64; 3]| {
        let q = rot(r, x);
        format!("[{}, {}, {}]", q[0], q[1], q[2])
    };
    format!(
        r#"{{
  "materials": {{"m": {STEEL}}},
  "sections": {{"t": {{"circular_tube": {{"outer_diameter": 0.04, "wall_thickness": 0.003}}}},
               "r": {{"rectangle": {{"width": 0.03, "height": 0.012}}}}}},
  "lines": [
    {{"name": "a", "from": {o}, "to": {a}, "elements": 10, "section": "t", "material": "m"}},
    {{"name": "b", "from": {a}, "to": {b}, "elements": 10, "section": "r", "material": "m", "orientation": {ob}}},
    {{"name": "c", "from": {b}, "to": {c}, "elements": 10, "section": "t", "material": "m"}}
  ],
  "supports": [{{"at": {{"line": "a", "at": 0}}, "fixed": "clamped"}}, {{"at": {{"line": "c", "at": 1}}, "fixed": "pinned"}}],
  "point_masses": [{{"at": {{"line": "b", "at": 0.5}}, "mass": 0.7, "inertia": [0.001, 0.001, 0.001]}}]
}}"#,
        o = p([0.0, 0.0, 0.0]),
        a = p([0.8, 0.0, 0.0]),
        b = p([0.8, 0.6, 0.0]),
        c = p([0.8, 0.6, 0.5]),
        ob = p([0.3, 0.0, 1.0]),
    )
}

#[test]
fn frequencies_do_not_depend_on_the_orientation_of_the_model() {
    // Physics is invariant under a rigid rotation of the whole model (common practice).
    let identity = [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]];
    let (a, b, c) = (0.3f64, -1.1f64, 0.7f64);
    let rx = [[1.0, 0.0, 0.0], [0.0, a.cos(), -a.sin()], [0.0, a.sin(), a.cos()]];
    let ry = [[b.cos(), 0.0, b.sin()], [0.0, 1.0, 0.0], [-b.sin(), 0.0, b.cos()]];
    let rz = [[c.cos(), -c.sin(), 0.0], [c.sin(), c.cos(), 0.0], [0.0, 0.0, 1.0]];
    let mul = |x: [[f64; 3]; 3], y: [[f64; 3]; 3]| {
        let mut z = [[0.0; 3]; 3];
        for i in 0..3 {
            for j in 0..3 {
                z[i][j] = (0..3).map(|k| x[i][k] * y[k][j]).sum();
            }
        }
        z
    };
    let r = mul(rz, mul(ry, rx));
    let (_, s0) = lowest(&structure(&frame_json(&identity)), 15);
    let (_, s1) = lowest(&structure(&frame_json(&r)), 15);
    for i in 0..15 {
        assert_rel(s1.eigenvalues[i], s0.eigenvalues[i], 1e-9, &format!("eigenvalue {} after rotation", i + 1));
    }
}
