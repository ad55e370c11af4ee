//! The modal route (modal superposition with residual flexibility, absorbers by receptance
//! coupling) against the direct sparse complex solve of the whole structure with its absorbers.
//!
//! The direct solve (`DirectSolver`) is the general-purpose reference: faer's sparse LU of
//! (K(1+iη) + iωC − ω²M) bordered with the absorber DOFs, with no modal truncation.

mod common;
use antinode::mesh::AbsorberDamping;
use antinode::solver::{
    AbsorberLink, Complex64, Coordinate, DirectSolver, EigenParams, Load, Method, ModalDampingLaw, ModalModel,
    ModalSolution, ModeRequest, StructureDamping, System, relative_difference, solve_modes,
};
use common::shells::{Cells, Edge, plate};
use common::*;

const TWO_PI: f64 = 2.0 * std::f64::consts::PI;
const BAR: &str = r#"{"rectangle": {"width": 0.05, "height": 0.01}}"#;
const SS_SUPPORTS: &str = r#"[{"at": {"line": "beam", "at": 0}, "fixed": ["ux", "uy", "uz", "rx"]},
    {"at": {"line": "beam", "at": 1}, "fixed": ["uy", "uz"]}]"#;
const Z: [f64; 3] = [0.0, 0.0, 1.0];

/// A case: coordinates (loads first, then responses, then absorbers), loads, responses, absorbers.
struct Case {
    coords: Vec<Coordinate>,
    loads: Vec<Load>,
    responses: Vec<usize>,
    absorbers: Vec<AbsorberLink>,
}

fn modes_up_to(sys: &System, hz: f64) -> ModalSolution {
    solve_modes(sys, ModeRequest::Band { low_hz: 0.0, high_hz: hz }, &EigenParams::default())
        .unwrap_or_else(|e| panic!("{e}"))
}

/// Evaluation frequencies: `n` geometric steps over the band plus each natural frequency in it
/// (the peaks, where the comparison is hardest).
fn frequencies(band: [f64; 2], n: usize, natural: &[f64]) -> Vec<f64> {
    let mut f: Vec<f64> = (0..n).map(|i| band[0] * (band[1] / band[0]).powf(i as f64 / (n - 1) as f64)).collect();
    f.extend(natural.iter().copied().filter(|&x| x > band[0] && x < band[1]));
    f.sort_by(f64::total_cmp);
    f
}

/// Largest relative difference (over the frequencies) between the modal and the direct response
/// over the response points (‖x_modal − x_direct‖/‖x_direct‖ at each frequency); the largest
/// stroke difference relative to the largest stroke over the frequencies (a stroke vanishes where
/// the attachment stands still, so a local ratio would measure round-off there); and the largest
/// relative residual of the direct solves.
fn compare(
    sys: &System,
    sol: &ModalSolution,
    damping: &StructureDamping,
    case: &Case,
    freq_hz: &[f64],
) -> (f64, f64, f64) {
    let modal = ModalModel::build_damped(sys, sol, &case.coords, damping, true).unwrap_or_else(|e| panic!("{e}"));
    let direct = DirectSolver::new(sys, sol, damping, &case.coords, &case.absorbers).unwrap_or_else(|e| panic!("{e}"));
    let (mut worst, mut worst_stroke, mut worst_residual) = (0.0f64, 0.0f64, 0.0f64);
    let mut largest_stroke = 0.0f64;
    for &f in freq_hz {
        let w = TWO_PI * f;
        let m = modal.coupled_response(w, &case.loads, &case.responses, &case.absorbers);
        let d = direct.solve(w, &case.loads, &case.responses).unwrap_or_else(|e| panic!("{e}"));
        worst = worst.max(relative_difference(&m.displacement, &d.response.displacement));
        for (a, b) in m.stroke.iter().zip(&d.response.stroke) {
            worst_stroke = worst_stroke.max((a - b).norm());
            largest_stroke = largest_stroke.max(b.norm());
        }
        worst_residual = worst_residual.max(d.residual);
    }
    let stroke = if largest_stroke > 0.0 { worst_stroke / largest_stroke } else { 0.0 };
    (worst, stroke, worst_residual)
}

/// Simply supported steel bar (1 m, 50 × 10 mm, 40 elements), force at 0.3 L along Z, responses at
/// 0.5 L and 0.7 L, a 5 % absorber (of the mode-1 modal mass M/2) at midspan tuned by Den Hartog
/// and Brock to the first Z-bending mode (23.4 Hz).
fn beam_case() -> (antinode::mesh::Structure, Case) {
    let s = structure(&beam_model(BAR, 40, 1.0, SS_SUPPORTS, STEEL));
    let nodes = &s.lines[0].nodes;
    let coords = vec![
        Coordinate { node: nodes[12], direction: Z, rotational: false },
        Coordinate { node: nodes[20], direction: Z, rotational: false },
        Coordinate { node: nodes[28], direction: Z, rotational: false },
    ];
    let mass = 0.05 * 0.5 * 7850.0 * 0.05 * 0.01;
    let mu: f64 = 0.05;
    let f1 = 23.45;
    let wa = TWO_PI * f1 / (1.0 + mu);
    let zeta_a = (3.0 * mu / (8.0 * (1.0 + mu))).sqrt();
    let absorbers = vec![AbsorberLink {
        coord: 1,
        mass,
        stiffness: mass * wa * wa,
        damping: AbsorberDamping::Viscous(2.0 * zeta_a * mass * wa),
    }];
    let loads = vec![Load { coord: 0, amplitude: Complex64::new(10.0, 0.0) }];
    (s, Case { coords, loads, responses: vec![1, 2], absorbers })
}

fn natural(sol: &ModalSolution) -> Vec<f64> {
    (0..sol.n_modes()).map(|i| sol.frequency_hz(i)).collect()
}

#[test]
fn beam_with_absorber_modal_agrees_with_direct_solve() {
    // Issue 7 acceptance: modal + residual within 1 % of the direct sparse solve at ≥ 20
    // frequencies across the band, with modes kept to twice the band's top (common practice,
    // reference sheet §4.2). Three damping models; the direct residual must be at round-off
    // level (1e-9) for the comparison to mean anything.
    let (s, case) = beam_case();
    let sys = system(&s);
    // The band stops short of the anti-resonance of both response points near 250 Hz, where the
    // response itself nearly vanishes and a relative difference loses its meaning.
    let band = [5.0, 230.0];
    let sol = modes_up_to(&sys, 2.0 * band[1]);
    let freq = frequencies(band, 24, &natural(&sol));
    assert!(freq.len() >= 20);
    let dampings = [
        ("modal 2 %", StructureDamping::modal(0.02)),
        (
            "Rayleigh",
            StructureDamping { modal: ModalDampingLaw::Uniform(0.0), rayleigh: [2.0, 1e-5], loss_factor: 0.0 },
        ),
        (
            "loss factor 0.03",
            StructureDamping { modal: ModalDampingLaw::Uniform(0.0), rayleigh: [0.0; 2], loss_factor: 0.03 },
        ),
        (
            "per-mode table",
            StructureDamping {
                modal: ModalDampingLaw::Table(vec![(10.0, 0.01), (200.0, 0.03)]),
                rayleigh: [0.0; 2],
                loss_factor: 0.01,
            },
        ),
    ];
    for (what, damping) in &dampings {
        let (worst, stroke, residual) = compare(&sys, &sol, damping, &case, &freq);
        assert!(worst < 0.01, "{what}: modal vs direct differ by {worst:.3e}");
        assert!(stroke < 0.01, "{what}: absorber stroke differs by {stroke:.3e}");
        assert!(residual < 1e-9, "{what}: direct residual {residual:.3e}");
    }
}

#[test]
fn modal_route_converges_to_the_direct_solve_as_modes_are_added() {
    // The truncation error of the modal route falls as the kept modes reach further above the
    // band (the residual flexibility captures the truncated modes' static part, the error is their
    // dynamic part, of order (f/f_cut)² — common practice). Rayleigh damping, so the direct solve
    // is the exact reference for every truncation.
    let (s, case) = beam_case();
    let sys = system(&s);
    let band = [5.0, 150.0];
    let damping = StructureDamping { modal: ModalDampingLaw::Uniform(0.0), rayleigh: [1.5, 3e-5], loss_factor: 0.0 };
    let mut last = f64::INFINITY;
    for factor in [1.2, 2.0, 4.0, 8.0] {
        let sol = modes_up_to(&sys, factor * band[1]);
        let freq = frequencies(band, 24, &natural(&sol));
        let (worst, _, _) = compare(&sys, &sol, &damping, &case, &freq);
        assert!(worst < last, "cut at {factor} x band top: {worst:.3e} not below {last:.3e}");
        last = worst;
    }
    assert!(last < 1e-3, "with modes to 8 x the band top: {last:.3e}");
}

#[test]
fn shell_plate_modal_agrees_with_direct_solve() {
    // A simply supported steel plate 0.5 × 0.4 × 0.002 m (16 × 12 quads; first mode near 50 Hz,
    // Navier), force off-centre, two response points, an absorber at the centre tuned to mode 1.
    // Same 1 % acceptance as the beam.
    let (nx, ny) = (16, 12);
    let s = structure(&plate(0.5, 0.4, 0.002, (2.1e11, 0.3, 7850.0), nx, ny, [Edge::Simple; 4], Cells::Quads));
    let sys = system(&s);
    let band = [20.0, 250.0];
    let sol = modes_up_to(&sys, 2.0 * band[1]);
    let node = |i: usize, j: usize| {
        let id = (j * (nx + 1) + i + 1) as u64;
        s.nodes.iter().position(|n| n.id.0 == id).unwrap_or_else(|| panic!("node {id}"))
    };
    let coords = vec![
        Coordinate { node: node(5, 4), direction: Z, rotational: false },
        Coordinate { node: node(8, 6), direction: Z, rotational: false },
        Coordinate { node: node(12, 3), direction: Z, rotational: false },
    ];
    let f1 = sol.frequency_hz(0);
    let mass = 0.05 * 0.25 * 7850.0 * 0.5 * 0.4 * 0.002;
    let wa = TWO_PI * f1 / 1.05;
    let case = Case {
        coords,
        loads: vec![Load { coord: 0, amplitude: Complex64::from_polar(5.0, 0.3) }],
        responses: vec![1, 2],
        absorbers: vec![AbsorberLink {
            coord: 1,
            mass,
            stiffness: mass * wa * wa,
            damping: AbsorberDamping::LossFactor(0.25),
        }],
    };
    let freq = frequencies(band, 24, &natural(&sol));
    for (what, damping) in [
        ("modal 1 %", StructureDamping::modal(0.01)),
        (
            "loss factor 0.02",
            StructureDamping { modal: ModalDampingLaw::Uniform(0.0), rayleigh: [0.0; 2], loss_factor: 0.02 },
        ),
    ] {
        let (worst, stroke, residual) = compare(&sys, &sol, &damping, &case, &freq);
        assert!(worst < 0.01, "{what}: modal vs direct differ by {worst:.3e}");
        assert!(stroke < 0.01, "{what}: stroke differs by {stroke:.3e}");
        assert!(residual < 1e-9, "{what}: direct residual {residual:.3e}");
    }
}

#[test]
fn receptance_coupling_equals_the_coupled_solve() {
    // Receptance coupling (Sherman–Morrison–Woodbury; reference sheet §4.3: exact for point
    // attachments) against the direct solve of the coupled system, with every mode kept so the
    // structure's receptance is exact (residual flexibility at round-off): agreement to 1e-10.
    // Two absorbers, one viscous and one hysteretic, at two places.
    let s = structure(&beam_model(BAR, 8, 1.0, SS_SUPPORTS, STEEL));
    let sys = system(&s);
    let params = EigenParams { method: Method::Dense, ..EigenParams::default() };
    let sol = solve_modes(&sys, ModeRequest::Lowest(sys.n_dofs()), &params).unwrap_or_else(|e| panic!("{e}"));
    let nodes = &s.lines[0].nodes;
    let coords = vec![
        Coordinate { node: nodes[2], direction: Z, rotational: false },
        Coordinate { node: nodes[4], direction: Z, rotational: false },
        Coordinate { node: nodes[6], direction: [0.0, 0.6, 0.8], rotational: false },
    ];
    let case = Case {
        coords,
        loads: vec![Load { coord: 0, amplitude: Complex64::new(1.0, 0.5) }],
        responses: vec![0, 1, 2],
        absorbers: vec![
            AbsorberLink { coord: 1, mass: 0.1, stiffness: 2500.0, damping: AbsorberDamping::Viscous(1.5) },
            AbsorberLink { coord: 2, mass: 0.05, stiffness: 18000.0, damping: AbsorberDamping::LossFactor(0.1) },
        ],
    };
    let freq: Vec<f64> = (0..30).map(|i| 3.0 * 1.2f64.powi(i)).collect();
    let damping = StructureDamping::modal(0.02);
    let (worst, stroke, residual) = compare(&sys, &sol, &damping, &case, &freq);
    assert!(worst < 1e-10, "responses: {worst:.3e}");
    assert!(stroke < 1e-10, "strokes: {stroke:.3e}");
    assert!(residual < 1e-12, "direct residual {residual:.3e}");
}
