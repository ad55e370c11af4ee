//! Correlation of computed modes with reference shapes: MAC against closed-form mode shapes at a few
//! sampled points, and model-to-model pairing under a uniform stiffness change.

mod common;

use antinode::solver::{mac_matrix, pair_by_mac, sampled_shapes};
use common::*;

const BAR: &str = r#"{"rectangle": {"width": 0.05, "height": 0.01}}"#;
const SIMPLY_SUPPORTED: &str = r#"[{"at": {"line": "beam", "at": 0}, "fixed": ["ux", "uy", "uz", "rx"]},
    {"at": {"line": "beam", "at": 1}, "fixed": ["uy", "uz"]}]"#;

/// Free-DOF modes in z of a simply supported beam along X sampled at nodes `points` (indices).
fn z_points(nodes: &[usize]) -> Vec<(usize, [f64; 6])> {
    nodes.iter().map(|&n| (n, [0.0, 0.0, 1.0, 0.0, 0.0, 0.0])).collect()
}

#[test]
fn simply_supported_modes_pair_with_sampled_sines() {
    // "Measured" shapes: sin(nπx/L) at 7 points (closed-form simply supported beam modes). The
    // model's z-bending modes sampled there pair one to one with MAC above 0.999 (40 elements: the
    // shapes agree to the discretisation error, far below 1e-3), and the other entries are small
    // (sampled sines at 7 equally spaced interior points x_k = kL/8 are exactly orthogonal for
    // orders 1..7: the discrete sine transform, so model-to-sine cross terms are round-off plus
    // discretisation error).
    let s = structure(&beam_model(BAR, 40, 1.0, SIMPLY_SUPPORTED, STEEL));
    let (sys, sol) = lowest(&s, 12);
    let line = &s.lines[0];
    let picks: Vec<usize> = (1..8).map(|k| line.nodes[5 * k]).collect();
    let sampled = sampled_shapes(&sys, &sol, &z_points(&picks));
    // Keep the z-bending modes (the in-plane y modes have no z motion at the points).
    let model: Vec<Vec<f64>> =
        sampled.into_iter().filter(|v| v.iter().map(|x| x * x).sum::<f64>() > 1e-12).take(3).collect();
    assert_eq!(model.len(), 3);
    let sines: Vec<Vec<f64>> =
        (1..=3).map(|n| (1..8).map(|k| (n as f64 * std::f64::consts::PI * k as f64 / 8.0).sin()).collect()).collect();
    let mac = mac_matrix(&sines, &model);
    assert_eq!(pair_by_mac(&mac), vec![Some(0), Some(1), Some(2)]);
    for (i, row) in mac.iter().enumerate() {
        for (j, &v) in row.iter().enumerate() {
            if i == j {
                assert!(v > 0.999, "MAC of order {} with its model mode: {v}", i + 1);
            } else {
                assert!(v < 1e-3, "MAC of order {} with model mode {}: {v}", i + 1, j + 1);
            }
        }
    }
}

#[test]
fn a_uniformly_stiffer_model_pairs_one_to_one_with_the_square_root_frequency_shift() {
    // Scaling E by c scales K by c and leaves M and the shapes unchanged: ω' = √c ω exactly
    // (Rayleigh quotient), MAC = 1 between matching modes (definition).
    let stiffer = r#"{"youngs_modulus": 2.142e11, "poisson_ratio": 0.3, "density": 7850}"#;
    let frame = |m: &str| beam_model(BAR, 20, 1.0, r#"[{"at": {"line": "beam", "at": 0}, "fixed": "clamped"}]"#, m);
    let (a, b) = (structure(&frame(STEEL)), structure(&frame(stiffer)));
    let (sys_a, sol_a) = lowest(&a, 8);
    let (sys_b, sol_b) = lowest(&b, 8);
    let all: Vec<(usize, [f64; 6])> = (0..a.nodes.len())
        .flat_map(|n| (0..6).map(move |c| (n, std::array::from_fn(|k| if k == c { 1.0 } else { 0.0 }))))
        .collect();
    let mac = mac_matrix(&sampled_shapes(&sys_b, &sol_b, &all), &sampled_shapes(&sys_a, &sol_a, &all));
    let pairs = pair_by_mac(&mac);
    let c: f64 = 2.142 / 2.1;
    for (i, p) in pairs.iter().enumerate() {
        assert_eq!(*p, Some(i), "mode {} pairs with itself", i + 1);
        // Round-off only (shapes identical up to the solver's residual ~1e-10).
        assert!((mac[i][i] - 1.0).abs() < 1e-8, "MAC {}", mac[i][i]);
        assert_rel(sol_b.frequency_hz(i) / sol_a.frequency_hz(i), c.sqrt(), 1e-9, "frequency ratio √c");
    }
}
