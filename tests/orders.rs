//! Running-speed orders: the response versus speed of a single-DOF oscillator against its closed
//! form for constant and rpm² (unbalance) forces, the amplitude table, and a simply supported beam
//! whose order responses peak where k·n/60 meets the Euler–Bernoulli natural frequency.

mod common;
use antinode::placement::{Quantity, crossings};
use common::*;

/// Oscillator: 10 kg on 1e5 N/m (ω_n = 100 rad/s, f_n = 15.915 Hz), viscous ratio ζ.
const M: f64 = 10.0;
const K: f64 = 1.0e5;
const ZETA: f64 = 0.02;
const FN: f64 = 100.0 / (2.0 * std::f64::consts::PI);

fn oscillator(order: &str) -> String {
    format!(
        r#"{{
  "nodes": [{{"id": 1, "xyz": [0, 0, 0]}}],
  "supports": [{{"at": {{"node": 1}}, "fixed": ["uy", "uz"]}}],
  "point_masses": [{{"at": {{"node": 1}}, "mass": {M}}}],
  "springs": [{{"at": {{"node": 1}}, "stiffness": {{"ux": {K}}}}}],
  "study": {{"modal_damping_ratio": {ZETA}, "rpm_range": [200, 900],
            "orders": [{{"at": {{"node": 1}}, "direction": "x", "order": 2{order}}}],
            "response_points": [{{"at": {{"node": 1}}, "direction": "x"}}]}}
}}"#
    )
}

#[test]
fn constant_force_order_peaks_at_the_damped_displacement_resonance() {
    // Single-DOF oscillator under a constant force F: |x| = (F/K)/√((1−r²)² + (2ζr)²) peaks at
    // r = √(1 − 2ζ²) with height (F/K)/(2ζ√(1 − ζ²)) (closed form; e.g. Thomson, Theory of Vibration
    // with Applications, ch. 3). Order 2: the peak speed is n = 60 f / 2.
    let f0 = 3.0;
    let sm = study_model(&oscillator(&format!(r#", "amplitude": {f0}"#)), 1);
    let rpm = sm.speed_grid();
    let r = &sm.sweep(&rpm, &[], Quantity::Receptance)[0];
    let r_peak = (1.0 - 2.0 * ZETA * ZETA).sqrt();
    assert_rel(r.peak.rpm, 60.0 * FN * r_peak / 2.0, 1e-6, "peak speed");
    assert_rel(r.peak.displacement_m, f0 / K / (2.0 * ZETA * (1.0 - ZETA * ZETA).sqrt()), 1e-8, "peak height");
    assert_rel(r.peak.frequency_hz, FN * r_peak, 1e-6, "peak frequency");
    // The grid holds both ends of the range and is ascending.
    assert_eq!((rpm[0], rpm[rpm.len() - 1]), (200.0, 900.0));
    assert!(rpm.windows(2).all(|w| w[1] > w[0]));
}

#[test]
fn unbalance_order_peaks_above_the_natural_frequency() {
    // Rotating unbalance F = F_ref (n/n_ref)²: |x| = (F_ref/K)(ω_n/ω_ref)² r²/√((1−r²)² + (2ζr)²),
    // which peaks at r = 1/√(1 − 2ζ²) with height (F_ref/K)(ω_n/ω_ref)²/(2ζ√(1 − ζ²)) (closed form of
    // unbalance excitation; Thomson, ch. 3). n_ref = 900 rpm, order 2: ω_ref = 2·900·2π/60.
    let f_ref = 0.5;
    let sm = study_model(&oscillator(&format!(r#", "amplitude": {f_ref}, "amplitude_law": "rpm_squared""#)), 1);
    let rpm = sm.speed_grid();
    let r = &sm.sweep(&rpm, &[], Quantity::Receptance)[0];
    let r_peak = 1.0 / (1.0 - 2.0 * ZETA * ZETA).sqrt();
    let w_ref = 2.0 * 900.0 * 2.0 * std::f64::consts::PI / 60.0;
    let height = f_ref / K * (100.0 / w_ref).powi(2) / (2.0 * ZETA * (1.0 - ZETA * ZETA).sqrt());
    assert_rel(r.peak.rpm, 60.0 * FN * r_peak / 2.0, 1e-6, "peak speed");
    assert_rel(r.peak.displacement_m, height, 1e-8, "peak height");
}

#[test]
fn velocity_and_acceleration_sweeps_scale_by_omega() {
    // Harmonic motion: |v| = ω|x|, |a| = ω²|x| at each speed (common practice). With a constant
    // force the velocity peak of a single-DOF oscillator lies exactly at r = 1, height F/(2ζ√(KM))
    // (closed form: the mobility peak of viscous damping is at the undamped natural frequency).
    let f0 = 3.0;
    let sm = study_model(&oscillator(&format!(r#", "amplitude": {f0}"#)), 1);
    let rpm = sm.speed_grid();
    let x = &sm.sweep(&rpm, &[], Quantity::Receptance)[0];
    let v = &sm.sweep(&rpm, &[], Quantity::Mobility)[0];
    let a = &sm.sweep(&rpm, &[], Quantity::Accelerance)[0];
    for i in (0..rpm.len()).step_by(17) {
        let w = 2.0 * std::f64::consts::PI * 2.0 * rpm[i] / 60.0;
        assert_rel(v.response[0][i].norm(), w * x.response[0][i].norm(), 1e-12, "velocity");
        assert_rel(a.response[0][i].norm(), w * w * x.response[0][i].norm(), 1e-12, "acceleration");
    }
    assert_rel(v.peak.rpm, 60.0 * FN / 2.0, 1e-6, "velocity peak speed");
    assert_rel(v.peak.value, f0 / (2.0 * ZETA * (K * M).sqrt()), 1e-8, "velocity peak height");
}

#[test]
fn table_amplitude_times_receptance() {
    // The order response at n is F(n)·|H(k n / 60)| with F interpolated linearly in the table
    // (an identity between the speed and frequency paths of this program, not an outside value).
    let sm = study_model(&oscillator(r#", "amplitude_table": [[200, 1.0], [500, 4.0], [900, 2.0]]"#), 1);
    let rpm = [200.0, 350.0, 500.0, 700.0, 900.0];
    let r = &sm.sweep(&rpm, &[], Quantity::Receptance)[0];
    for (i, (n, force)) in
        [(200.0, 1.0), (350.0, 2.5), (500.0, 4.0), (700.0, 3.0), (900.0, 2.0)].into_iter().enumerate()
    {
        // Per newton of the reference force, which the frequency path applies at the order's node.
        let h = sm.response_at(2.0 * n / 60.0, &[]).0;
        assert_rel(r.response[0][i].norm(), force * h, 1e-12, "table force times receptance");
    }
    // With orders only, the frequency response uses the order's force at its largest amplitude.
    assert_eq!(sm.reference_force, 4.0);
}

#[test]
fn beam_orders_peak_where_they_cross_the_natural_frequencies() {
    // Simply supported steel bar, 1 m, 20 mm × 20 mm: f₁ = (π/2L²)√(EI/ρA) = 46.9 Hz
    // (Euler–Bernoulli closed form; Blevins, Formulas for Natural Frequency and Mode Shape, table
    // 8-1). Orders 1 and 3 over 1200–3600 rpm: order 1 crosses mode 1 at 60 f₁ ≈ 2815 rpm, order 3
    // at 20 f₁ ≈ 938 rpm (outside) and mode 2 (4 f₁) at 80 f₁ ≈ 3754 rpm (outside). Each order's
    // response peaks within ζ² of its crossing speed (common practice: light damping shifts the
    // peak by a relative ζ²).
    let (e, rho, b, l): (f64, f64, f64, f64) = (2.1e11, 7850.0, 0.02, 1.0);
    let f1 = std::f64::consts::PI / (2.0 * l * l) * (e * b.powi(4) / 12.0 / (rho * b * b)).sqrt();
    let json = format!(
        r#"{{
  "materials": {{"steel": {{"youngs_modulus": {e}, "poisson_ratio": 0.3, "density": {rho}}}}},
  "sections": {{"bar": {{"rectangle": {{"width": {b}, "height": {b}}}}}}},
  "lines": [{{"name": "bar", "from": [0, 0, 0], "to": [{l}, 0, 0], "elements": 40, "section": "bar", "material": "steel"}}],
  "supports": [{{"at": {{"xyz": [0, 0, 0]}}, "fixed": ["ux", "uy", "uz", "rx"]}},
               {{"at": {{"xyz": [{l}, 0, 0]}}, "fixed": ["uy", "uz"]}}],
  "study": {{"modal_damping_ratio": 0.01, "rpm_range": [1200, 3600], "max_mode_frequency_hz": 1500,
            "orders": [{{"order": 1, "at": {{"line": "bar", "at": 0.3}}, "direction": "z", "amplitude": 1}},
                       {{"order": 3, "at": {{"line": "bar", "at": 0.3}}, "direction": "z", "amplitude": 1}}],
            "response_points": [{{"at": {{"line": "bar", "at": 0.5}}, "direction": "z"}}]}}
}}"#
    );
    let sm = study_model(&json, 12);
    let specs: Vec<_> = sm.orders.iter().map(|(_, o)| o.clone()).collect();
    let c: Vec<_> = crossings(&specs, &sm.natural_hz, sm.n_zero_energy, [1200.0, 3600.0])
        .into_iter()
        .filter(|c| sm.natural_hz[c.mode - 1] < 2.0 * f1)
        .collect();
    // Mode 1 is a pair (bending in y and z of a square bar): two crossings, both with order 1.
    assert_eq!(c.len(), 2, "{c:?}");
    assert!(c.iter().all(|c| c.order == 1.0));
    assert_rel(c[0].rpm, 60.0 * f1, 1e-3, "crossing speed against the closed form");
    let rpm = sm.speed_grid();
    let sweep = sm.sweep(&rpm, &[], Quantity::Receptance);
    assert_rel(sweep[0].peak.rpm, c[0].rpm, 1e-4, "order 1 peaks at its crossing");
    // Order 3 spans 60-180 Hz, between modes 1 and 2: it meets no natural frequency, so its
    // largest response lies at an end of the range.
    assert!(sweep[1].peak.rpm == 1200.0 || sweep[1].peak.rpm == 3600.0, "{:?}", sweep[1].peak);
}
