//! Kinds of excitation against closed forms: a moment at a cantilever's tip, and base (support)
//! acceleration.

mod common;
use common::*;

#[test]
fn tip_moment_bends_a_cantilever_by_ml2_over_2ei() {
    // Cantilever of length L under a tip moment M: tip deflection M L²/(2EI) (closed form;
    // Roark's Formulas for Stress and Strain, table of beam cases). Read well below the first
    // mode (0.05 Hz against 16 Hz), where the response is static to (f/f₁)² ≈ 1e-5. A moment about y
    // deflects along z, one about z along y; a force would give P L³/(3EI), 3/2 times larger per
    // unit here (L = 1 m), so the check tells a moment from a force.
    let (e, b, l) = (2.1e11_f64, 0.02_f64, 1.0_f64);
    let ei = e * b.powi(4) / 12.0;
    for (axis, along) in [("y", "z"), ("z", "y")] {
        let json = format!(
            r#"{{
  "materials": {{"steel": {{"youngs_modulus": {e}, "poisson_ratio": 0.3, "density": 7850}}}},
  "sections": {{"bar": {{"rectangle": {{"width": {b}, "height": {b}}}}}}},
  "lines": [{{"name": "bar", "from": [0, 0, 0], "to": [{l}, 0, 0], "elements": 20, "section": "bar", "material": "steel"}}],
  "supports": [{{"at": {{"line": "bar", "at": 0}}, "fixed": "clamped"}}],
  "study": {{"band_hz": [0.05, 0.1],
            "excitation": [{{"at": {{"line": "bar", "at": 1}}, "direction": "{axis}", "amplitude": 1, "moment": true}}],
            "response_points": [{{"at": {{"line": "bar", "at": 1}}, "direction": "{along}"}}]}}
}}"#
        );
        let sm = study_model(&json, 4);
        assert_rel(sm.response_at(0.05, &[]).0, l * l / (2.0 * ei), 1e-4, "tip deflection under a tip moment");
    }
}
