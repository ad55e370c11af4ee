//! Panels with beam stiffeners (`panels[].stiffeners`): the generated stiffener against the same
//! beams written by hand as a `lines` run (identity check), a simply supported plate with a centre
//! stiffener against the exact Lévy-type solution and the Rayleigh quotient of the Navier shape,
//! and an offset (eccentric) stiffener against the constraint theorem and the parallel-axis rule.

mod common;

use std::f64::consts::PI;

use common::{assert_rel, lowest, rel, structure};

/// Aluminium, invented round values: E = 70 GPa, ν = 0.33, ρ = 2700 kg/m³.
const AL: &str = r#"{"youngs_modulus": 7e10, "poisson_ratio": 0.33, "density": 2700}"#;
const E: f64 = 7e10;
const NU: f64 = 0.33;
const RHO: f64 = 2700.0;
/// Plate a × b × t, in m.
const A: f64 = 1.0;
const B: f64 = 0.8;
const T: f64 = 0.004;
/// Rib: rectangle 6 mm wide, 30 mm deep (height along local y = the panel normal).
const RIB_W: f64 = 0.006;
const RIB_H: f64 = 0.03;

/// The 1 m × 0.8 m × 4 mm panel, simply supported on all four edges, with `extra` fields in the
/// panel object and `rest` after the panels.
fn panel(divisions: [usize; 2], extra: &str, rest: &str) -> String {
    format!(
        r#"{{"materials": {{"al": {AL}}},
            "sections": {{"rib": {{"rectangle": {{"width": {RIB_W}, "height": {RIB_H}}}}}}},
            "panels": [{{"name": "p", "size": [{A}, {B}], "thickness": {T}, "material": "al",
                         "divisions": [{}, {}],
                         "edges": {{"x0": "simply_supported", "x1": "simply_supported",
                                    "y0": "simply_supported", "y1": "simply_supported"}}{extra}}}]{rest}}}"#,
        divisions[0], divisions[1]
    )
}

/// A stiffener along X at v = b/2 with the given offset, in m.
fn centre_rib(offset: f64) -> String {
    format!(
        r#", "stiffeners": [{{"from": [0, {}], "to": [{A}, {}], "section": "rib", "material": "al", "offset": {offset}}}]"#,
        B / 2.0,
        B / 2.0
    )
}

fn hz(json: &str, n: usize) -> Vec<f64> {
    let (_, sol) = lowest(&structure(json), n);
    (0..sol.n_modes()).map(|i| sol.frequency_hz(i)).collect()
}

/// Plate bending stiffness D = E t³/(12(1 − ν²)), in N·m.
fn plate_d() -> f64 {
    E * T.powi(3) / (12.0 * (1.0 - NU * NU))
}

/// Fundamental frequency (Hz) of the simply supported a × b Kirchhoff plate with an Euler–Bernoulli
/// stiffener of bending stiffness `ei` (N·m²) and mass per length `m_s` (kg/m) along y = b/2, by the
/// Lévy method (Leissa, Vibration of Plates, NASA SP-160, 1969, ch. 4, for the method; the
/// stiffener condition below is our derivation, common practice).
///
/// w = sin(kx) Y(y), k = π/a. On 0 ≤ y ≤ c = b/2, with Ω = ω√(ρt/D) > k²: Y = A sinh αy + B sin βy,
/// α² = Ω + k², β² = Ω − k² (Y = Y'' = 0 at the simply supported edge y = 0). At y = c symmetry
/// gives Y'(c) = 0 (so the rib does not twist), and the variation of the half model (half the rib
/// with each half of the plate) gives D Y'''(c) = ½ (EI k⁴ − m_s ω²) Y(c). The determinant of these
/// two conditions, divided by cosh αc, is
///
/// ```text
/// f(ω) = α(−D β³ cos βc − ½K sin βc) − β cos βc (D α³ − ½K tanh αc),  K = EI k⁴ − m_s ω²,
/// ```
///
/// whose first zero above Ω = k² is the fundamental. With EI = m_s = 0 it reduces to cos βc = 0,
/// β = π/b: Navier's (1, 1) value.
fn levy_hz(ei: f64, m_s: f64) -> f64 {
    let d = plate_d();
    let rho_t = RHO * T;
    let (k, c) = (PI / A, B / 2.0);
    let f = |omega: f64| {
        let big = omega * (rho_t / d).sqrt();
        let (alpha, beta) = ((big + k * k).sqrt(), (big - k * k).sqrt());
        let kk = ei * k.powi(4) - m_s * omega * omega;
        alpha * (-d * beta.powi(3) * (beta * c).cos() - 0.5 * kk * (beta * c).sin())
            - beta * (beta * c).cos() * (d * alpha.powi(3) - 0.5 * kk * (alpha * c).tanh())
    };
    // From just above Ω = k² upwards in small steps to the first sign change, then bisection.
    let start = k * k * (d / rho_t).sqrt() * (1.0 + 1e-9);
    let step = start * 1e-3;
    let mut lo = start;
    let mut hi = lo + step;
    while f(lo).signum() == f(hi).signum() {
        lo = hi;
        hi += step;
        assert!(hi < 100.0 * start, "no root found");
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if f(mid).signum() == f(lo).signum() { lo = mid } else { hi = mid }
    }
    0.5 * (lo + hi) / (2.0 * PI)
}

/// Rayleigh quotient (Hz) of w = sin(πx/a) sin(πy/b) for the same plate and rib:
/// ω² = [D π⁴ (1/a² + 1/b²)² ab/4 + EI (π/a)⁴ a/2] / [ρ t ab/4 + m_s a/2].
fn rayleigh_hz(ei: f64, m_s: f64) -> f64 {
    let d = plate_d();
    let num = d * PI.powi(4) * (1.0 / (A * A) + 1.0 / (B * B)).powi(2) * A * B / 4.0 + ei * (PI / A).powi(4) * A / 2.0;
    let den = RHO * T * A * B / 4.0 + m_s * A / 2.0;
    (num / den).sqrt() / (2.0 * PI)
}

/// The rib's EI about its own centroid (N·m²), EA (N) and mass per length (kg/m).
fn rib() -> (f64, f64, f64) {
    let area = RIB_W * RIB_H;
    (E * RIB_W * RIB_H.powi(3) / 12.0, E * area, RHO * area)
}

#[test]
fn a_centred_stiffener_equals_the_same_beams_written_as_a_line() {
    // Identity check: the stiffener and a `lines` run on the same grid line, with the same
    // section, material and default orientation, are the same beams on the same nodes.
    let stiffened = panel([20, 16], &centre_rib(0.0), "");
    let by_hand = panel(
        [20, 16],
        "",
        &format!(
            r#", "lines": [{{"name": "rib", "from": [0, {}, 0], "to": [{A}, {}, 0], "elements": 20,
                             "section": "rib", "material": "al"}}]"#,
            B / 2.0,
            B / 2.0
        ),
    );
    let (s, h) = (structure(&stiffened), structure(&by_hand));
    assert_eq!(s.nodes.len(), h.nodes.len(), "the line's nodes are the panel's grid nodes");
    assert_eq!((s.beams.len(), h.beams.len()), (20, 20));
    assert!(s.links.is_empty(), "no offset, no link");
    assert_rel(s.total_mass(), h.total_mass(), 1e-12, "mass");
    let (fs, fh) = (hz(&stiffened, 10), hz(&by_hand, 10));
    for i in 0..10 {
        // The same matrices up to node order and coordinates rounded differently.
        assert_rel(fs[i], fh[i], 1e-9, &format!("mode {}", i + 1));
    }
    // The stiffener is a part of its own after the panel; the line by hand is the part "rib".
    let parts = s.element_parts();
    assert_eq!(parts.names[..2], ["p".to_string(), "p stiffener 1".to_string()]);
    assert!(parts.beams.iter().all(|&p| p == 1), "every stiffener beam in the part \"p stiffener 1\"");
    assert!(parts.shells.iter().all(|&p| p == 0), "every shell in the panel's part");
}

#[test]
fn simply_supported_plate_with_a_centre_stiffener_matches_the_levy_solution() {
    let (ei, _, m_s) = rib();
    let exact = levy_hz(ei, m_s);
    // The Lévy root without a rib is Navier's (1, 1) frequency (Leissa 1969): checks the root finder.
    let navier = PI / 2.0 * (1.0 / (A * A) + 1.0 / (B * B)) * (plate_d() / (RHO * T)).sqrt();
    assert_rel(levy_hz(0.0, 0.0), navier, 1e-9, "Lévy root of the bare plate against Navier");
    // Rayleigh's principle: the quotient of any admissible shape bounds the fundamental from above
    // (exact); the Navier shape misses only the kink the rib puts in Y''', so it is close.
    let rayleigh = rayleigh_hz(ei, m_s);
    assert!(rayleigh >= exact, "Rayleigh {rayleigh} Hz is an upper bound of the exact {exact} Hz");
    // Measured: +0.44 %.
    assert!(rel(rayleigh, exact) < 0.01, "Rayleigh {rayleigh} Hz within 1 % of {exact} Hz");
    // The rib doubles the plate's bending energy of the mode: it is not a small perturbation.
    assert!(exact > 1.2 * navier, "the stiffener raises the fundamental: {exact} vs {navier} Hz");
    let coarse = hz(&panel([20, 16], &centre_rib(0.0), ""), 1)[0];
    let fine = hz(&panel([40, 32], &centre_rib(0.0), ""), 1)[0];
    // Bilinear shells: error about 0.1 (k h)² (docs/verification.md), under 0.3 % at h = 25 mm; the
    // Euler–Bernoulli beams are exact for the rib's cubic pieces. a/t = 250: shear is negligible.
    // Measured: +0.42 % on 20 x 16, +0.09 % on 40 x 32.
    assert_rel(fine, exact, 0.003, "40 x 32 mesh against the Lévy solution");
    assert!(rel(fine, exact) < rel(coarse, exact), "the error falls as the mesh refines: {coarse} → {fine} Hz");
}

#[test]
fn an_offset_stiffener_is_stiffer_and_bounded_by_the_parallel_axis_rule() {
    let (ei, ea, m_s) = rib();
    // The rib sits on the plate: its centroid half the plate and half the rib above the mid-surface.
    let e = T / 2.0 + RIB_H / 2.0;
    let held = r#", "regions": {"all": {"panel": "p", "box": [[0, 0], [1, 0.8]]}},
                  "supports": [{"at": {"region": "all"}, "fixed": ["ux", "uy", "rz"]}]"#;
    let f0 = hz(&panel([40, 32], &centre_rib(0.0), ""), 1)[0];
    let fe = hz(&panel([40, 32], &centre_rib(e), ""), 1)[0];
    let fe_held = hz(&panel([40, 32], &centre_rib(e), held), 1)[0];
    let s = structure(&panel([40, 32], &centre_rib(e), ""));
    assert_eq!(s.links.len(), 41, "one rigid link per grid node under the rib");
    // Rayleigh's theorem of constraint (exact for the discrete model): holding the plate's in-plane
    // DOFs cannot lower the fundamental.
    assert!(fe_held >= fe * (1.0 - 1e-9), "held {fe_held} Hz ≥ free {fe} Hz");
    // With the plate's membrane held, the rib bends about the mid-surface: EI + EA e² (parallel
    // axis rule, common practice). The FE rib's axial strain is constant per element while e w'' is
    // linear, which under-counts EA e² by O(h²), and its axial inertia ρA (e θ)² is left out of the
    // Lévy model; with the shells' own +0.09 % (test above), 0.5 % covers them at h = 25 mm
    // (measured +0.08 %).
    let parallel = levy_hz(ei + ea * e * e, m_s);
    assert_rel(fe_held, parallel, 0.005, "membrane held against the Lévy solution with EI + EA e²");
    // Free membrane: the plate stretches with the rib (the composite's neutral axis moves up), so
    // the effective stiffness lies between EI and EI + EA e². Not a theorem (the rib's mass gains an
    // axial inertia too), but that inertia is a rotary-inertia-sized term (about (π e / a)², 0.3 %
    // of the rib's share), while EA e² is 4.9 EI here: the offset rib must be clearly stiffer.
    // Measured: 50.97 Hz against 32.30 Hz centred and 51.54 Hz for the full parallel-axis value.
    assert!(fe > 1.1 * f0, "offset {fe} Hz clearly above centred {f0} Hz");
    assert!(fe < parallel, "offset {fe} Hz below the full parallel-axis value {parallel} Hz");
}

#[test]
fn a_stiffener_off_the_uniform_grid_gets_its_own_grid_line_and_regions_still_select_grid_nodes() {
    // 10 × 8 uniform lines lie every 0.1 m; a rib at v = 0.33 from u = 0.25 to 0.75 needs lines
    // at v = 0.33 and at u = 0.25 and 0.75.
    let rib = r#", "stiffeners": [{"from": [0.25, 0.33], "to": [0.75, 0.33], "section": "rib", "material": "al"}]"#;
    let json = panel(
        [10, 8],
        rib,
        r#", "regions": {"edge": {"panel": "p", "edge": "y0"}, "at": {"panel": "p", "point": [0.5, 0.33]}}"#,
    );
    let s = structure(&json);
    let p = &s.panels[0];
    assert!(p.grid[1].iter().any(|v| (v - 0.33).abs() < 1e-12), "a row at v = 0.33: {:?}", p.grid[1]);
    for u in [0.25, 0.75] {
        assert!(p.grid[0].iter().any(|g| (g - u).abs() < 1e-12), "a column at u = {u}: {:?}", p.grid[0]);
    }
    // Every piece no longer than the uniform spacing (common practice: the requested size is a maximum).
    for (g, h) in [(&p.grid[0], 0.1), (&p.grid[1], 0.1)] {
        assert!(g.windows(2).all(|w| w[1] - w[0] <= h + 1e-12 && w[1] > w[0]), "{g:?}");
    }
    let st = &p.stiffeners[0];
    for (k, &n) in st.nodes.iter().enumerate() {
        let xyz = s.nodes[n].xyz;
        assert!((xyz[1] - 0.33).abs() < 1e-12 && xyz[2] == 0.0, "stiffener node {k} at {xyz:?}");
    }
    assert_eq!(st.beams.len(), st.nodes.len() - 1);
    assert!((s.nodes[st.nodes[0]].xyz[0] - 0.25).abs() < 1e-12);
    assert!((s.nodes[st.nodes[st.nodes.len() - 1]].xyz[0] - 0.75).abs() < 1e-12);
    assert_eq!(s.regions["edge"].len(), p.divisions[0] + 1, "the edge region: one node per column");
    assert_eq!(
        s.nodes[s.regions["at"][0]].xyz[1], s.nodes[st.nodes[0]].xyz[1],
        "the point region snaps to the rib's row"
    );
    // The VTK part array covers the stiffener beams.
    let parts = s.element_parts();
    assert_eq!(parts.beams.len(), s.beams.len());
    assert_eq!(parts.names[parts.beams[0]], "p stiffener 1");
}
