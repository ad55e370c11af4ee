//! Shell elements against plate theory: square plates with simply supported, clamped, cantilever
//! and free edges, and the mesh-convergence rate.
//!
//! Frequency parameter λ = ω a² √(ρt/D), D = E t³/(12(1 − ν²)). Plates are 1 m × 1 m × 10 mm steel
//! (a/t = 100: transverse shear lowers λ by < 0.2 %, so thin-plate values apply).

mod common;

use common::shells::{Cells, Edge, plate};
use common::{assert_rel, lowest, structure};

const A: f64 = 1.0;
const T: f64 = 0.01;
const STEEL: (f64, f64, f64) = (2.1e11, 0.3, 7850.0);

/// λ of each mode of a steel plate 1 m wide and `t` thick.
fn lambdas_t(json: &str, count: usize, t: f64) -> (Vec<f64>, usize) {
    let s = structure(json);
    let (_, sol) = lowest(&s, count);
    let (e, nu, rho) = STEEL;
    let d = e * t.powi(3) / (12.0 * (1.0 - nu * nu));
    let scale = A * A * (rho * t / d).sqrt();
    (sol.eigenvalues.iter().map(|l| l.max(0.0).sqrt() * scale).collect(), sol.n_zero_energy)
}

/// λ of each mode of the 10 mm steel plate.
fn lambdas(json: &str, count: usize) -> (Vec<f64>, usize) {
    lambdas_t(json, count, T)
}

fn check(got: &[f64], expected: &[f64], tol: f64, what: &str) {
    for (i, (g, e)) in got.iter().zip(expected).enumerate() {
        assert_rel(*g, *e, tol, &format!("{what}, mode {}", i + 1));
    }
}

const SS: [Edge; 4] = [Edge::Simple; 4];

/// Navier: λ_mn = π²(m² + n²) (Leissa, Vibration of Plates, NASA SP-160, 1969; closed form):
/// (1,1), (1,2), (2,1), (2,2), (1,3), (3,1).
fn navier() -> Vec<f64> {
    let p2 = std::f64::consts::PI.powi(2);
    [2.0, 5.0, 5.0, 8.0, 10.0, 10.0].iter().map(|k| p2 * k).collect()
}

#[test]
fn simply_supported_square_plate_matches_navier() {
    // The bilinear element converges at O(h²) with frequency errors of about 0.4 % (mode 1) and 4 %
    // (mode 5, the (1,3) pair) on 16 × 16 (docs/verification.md); 48 × 48 brings modes 1–6 within
    // the reference sheet's 0.5 % for a converged thin-plate mesh.
    let (l, zero) = lambdas(&plate(A, A, T, STEEL, 48, 48, SS, Cells::Quads), 6);
    assert_eq!(zero, 0);
    check(&l, &navier(), 0.005, "SSSS quads 48×48");
    let (l, _) = lambdas(&plate(A, A, T, STEEL, 32, 32, SS, Cells::Triangles), 6);
    // 1 %: the same grid cut into triangles (linear triangles converge more slowly).
    check(&l, &navier(), 0.01, "SSSS triangles 32×32×2");
}

#[test]
fn clamped_square_plate_matches_converged_ritz_values() {
    let (l, _) = lambdas(&plate(A, A, T, STEEL, 56, 56, [Edge::Clamped; 4], Cells::Quads), 6);
    // Converged Legendre-Ritz values of the reference sheet (§3.2, reproduced independently); 0.5 %
    // (56 × 56: mode 5 is 1.1 % high on 32 × 32, falling as h²).
    check(&l, &[35.9852, 73.3938, 73.3938, 108.2165, 131.5808, 132.2048], 0.005, "CCCC 56×56");
    // Leissa's published λ₁ = 35.99 (NASA SP-160, C-C-C-C square plate, from memory), 1 %.
    assert_rel(l[0], 35.99, 0.01, "CCCC λ₁ against Leissa");
}

#[test]
fn cantilever_square_plate_matches_converged_ritz_values() {
    let edges = [Edge::Clamped, Edge::Free, Edge::Free, Edge::Free];
    let (l, _) = lambdas(&plate(A, A, T, STEEL, 20, 20, edges, Cells::Quads), 6);
    // Converged Ritz values (reference sheet §3.2); 1 % (free corners converge slowly).
    check(&l, &[3.4710, 8.5062, 21.284, 27.199, 30.954, 54.184], 0.01, "CFFF 20×20");
    // Leissa's published λ₁ = 3.492 (beam-function Ritz, an upper bound; from memory): within 1 %.
    assert_rel(l[0], 3.492, 0.01, "CFFF λ₁ against Leissa");
}

#[test]
fn free_square_plate_has_six_rigid_modes_and_the_converged_elastic_values() {
    let (l, zero) = lambdas(&plate(A, A, T, STEEL, 32, 32, [Edge::Free; 4], Cells::Quads), 12);
    // Six rigid-body motions of a free shell body (three out of plane, three in plane).
    // A free body has six rigid-body modes, three translations and three rotations (common practice).
    assert_eq!(zero, 6, "zero-frequency modes of a free plate");
    // Converged Ritz elastic values (reference sheet §3.2); 1 %.
    check(&l[6..], &[13.4682, 19.5961, 24.2702, 34.8009, 34.8009, 61.0932], 0.01, "FFFF 32×32");
}

/// The natural-frequency benchmarks of thin square plates 10 m × 10 m × 0.05 m, E = 200 GPa,
/// ν = 0.3, ρ = 8000 kg/m³ (NAFEMS, Selected Benchmarks for Natural Frequency Analysis, 1987: the
/// cantilevered and the free thin square plate; values from memory, 2 % as the issue states: they
/// lie 0.5–1 % above converged thin-plate values).
#[test]
fn thin_square_plate_benchmarks() {
    let mat = (2.0e11, 0.3, 8000.0);
    let hz = |json: &str, n: usize| {
        let (_, sol) = lowest(&structure(json), n);
        (0..sol.n_modes()).map(|i| sol.frequency_hz(i)).collect::<Vec<f64>>()
    };
    let edges = [Edge::Clamped, Edge::Free, Edge::Free, Edge::Free];
    let f = hz(&plate(10.0, 10.0, 0.05, mat, 16, 16, edges, Cells::Quads), 6);
    check(&f, &[0.421, 1.029, 2.582, 3.306, 3.753, 6.555], 0.02, "cantilevered thin square plate");
    let f = hz(&plate(10.0, 10.0, 0.05, mat, 16, 16, [Edge::Free; 4], Cells::Quads), 12);
    check(&f[6..], &[1.622, 2.360, 2.922, 4.233, 4.233, 7.416], 0.02, "free thin square plate");
}

/// Error of λ₁₁ of the simply supported plate under mesh refinement: a bilinear element with
/// assumed shear strains converges at O(h²) in frequency (common practice for displacement-based
/// elements of this order), so halving h divides the error by about 4. The plate is 1 mm thick
/// (a/t = 1000), so the transverse-shear correction (≈ 4e-6 relative) stays far below the
/// discretisation error of the finest mesh, and the thin limit also shows that the element does
/// not lock.
#[test]
fn simply_supported_plate_converges_at_second_order() {
    let exact = 2.0 * std::f64::consts::PI.powi(2);
    let t = 0.001;
    let errors: Vec<f64> = [4, 8, 16, 32]
        .iter()
        .map(|&n| {
            let (l, _) = lambdas_t(&plate(A, A, t, STEEL, n, n, SS, Cells::Quads), 1, t);
            (l[0] - exact).abs() / exact
        })
        .collect();
    for w in errors.windows(2) {
        let ratio = w[0] / w[1];
        assert!((3.0..=5.5).contains(&ratio), "error ratio {ratio:.2} on halving h (errors {errors:?})");
    }
}
