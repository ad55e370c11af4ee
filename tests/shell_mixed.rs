//! Beams and shells sharing nodes: a plate strip stiffened along its centre line by a beam whose
//! axis lies in the strip's mid-plane. Bending of the composite is beam bending with the summed
//! stiffness and mass, so the DOF conventions of the two element families must agree for the
//! frequencies to come out right.

mod common;

use common::shells::{Cells, Edge, plate};
use common::{assert_rel, lowest, structure};
use serde_json::{Value, json};

const E: f64 = 2.1e11;
const NU: f64 = 0.3;
const RHO: f64 = 7850.0;
/// Strip length (X), width (Y) and thickness, in m; stiffener width and height (rectangle), in m.
const L: f64 = 1.0;
const B: f64 = 0.04;
const T: f64 = 0.005;
const BW: f64 = 0.01;
const BH: f64 = 0.03;
/// Elements along and across the strip (the centre line is a row of nodes).
const NX: usize = 50;
const NY: usize = 4;

/// The strip with its stiffener; `ends` fixes uy and uz on both end edges (simple supports in both
/// bending planes), plus ux at one corner.
fn stiffened_strip(held: bool) -> String {
    let mut m: Value =
        serde_json::from_str(&plate(L, B, T, (E, NU, RHO), NX, NY, [Edge::Free; 4], Cells::Quads)).expect("plate JSON");
    let id = |i: usize, j: usize| (j * (NX + 1) + i + 1) as u64;
    m["sections"] = json!({"web": {"rectangle": {"width": BW, "height": BH}}});
    // Along X the default orientation puts local y on global Z: `height` is vertical.
    m["beams"] = (0..NX)
        .map(|i| json!({"id": i + 1, "nodes": [id(i, NY / 2), id(i + 1, NY / 2)], "section": "web", "material": "m"}))
        .collect();
    if held {
        let mut supports = Vec::new();
        for i in [0, NX] {
            for j in 0..=NY {
                let fixed = if i == 0 && j == 0 { json!(["ux", "uy", "uz"]) } else { json!(["uy", "uz"]) };
                supports.push(json!({"at": {"node": id(i, j)}, "fixed": fixed}));
            }
        }
        m["supports"] = Value::Array(supports);
    }
    serde_json::to_string(&m).expect("JSON")
}

#[test]
fn stiffened_strip_bends_as_the_composite_beam() {
    let s = structure(&stiffened_strip(true));
    assert_eq!(s.beams.len(), NX);
    assert_eq!(s.shells.len(), NX * NY);
    let (sys, sol) = lowest(&s, 6);
    // The first mode moving mostly along Z is the first vertical bending mode.
    let vertical = (0..sol.n_modes())
        .find(|&i| {
            let d = sys.dof_map().expand(sol.shape(i));
            let z: f64 = d.iter().map(|v| v[2] * v[2]).sum();
            let all: f64 = d.iter().map(|v| v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sum();
            z > 0.9 * all
        })
        .expect("a vertical bending mode among the lowest six");
    // Simply supported Euler–Bernoulli beam, f₁ = (π/2L²)·√(EI/m) (reference sheet §1.1, βL = π),
    // with EI = E(I_web + I_strip) about the common neutral axis (the strip's mid-plane) and m the
    // summed mass per length. The strip's share of EI is 2 % and lies between the beam value
    // E b t³/12 and the plate value E b t³/(12(1 − ν²)); the mean is used (± 0.1 % in f).
    let i_web = BW * BH.powi(3) / 12.0;
    let i_strip = B * T.powi(3) / 12.0 * (1.0 + 1.0 / (1.0 - NU * NU)) / 2.0;
    let mass = RHO * (BW * BH + B * T);
    let f = std::f64::consts::PI / (2.0 * L * L) * (E * (i_web + i_strip) / mass).sqrt();
    // 1 %: 50 elements per span give the bending mode to 0.1 %; the web's shear and rotary inertia
    // (L/h = 33) lower it by about 0.2 % (common practice).
    assert_rel(sol.frequency_hz(vertical), f, 0.01, "first vertical bending of the stiffened strip");
}

#[test]
fn free_stiffened_strip_has_exactly_six_rigid_body_modes() {
    let s = structure(&stiffened_strip(false));
    let (_, sol) = lowest(&s, 8);
    // A free body: three translations and three rotations, whatever its element families.
    // A free body has six rigid-body modes, three translations and three rotations (common practice).
    assert_eq!(sol.n_zero_energy, 6);
    assert!(sol.frequency_hz(6) > 10.0, "first elastic mode {} Hz", sol.frequency_hz(6));
}
