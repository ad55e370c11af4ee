//! The absorber design optimiser against published optima and physical trends: single-DOF primary
//! (Den Hartog/Brock, the exact H∞ optimum of Nishihara & Asami, a damped primary), the best place
//! on beams, several absorbers of one total mass, the robust pass, and the constraints.

mod common;
use antinode::mesh::{AbsorberDamping, Structure};
use antinode::placement::{Design, StudyModel, design, tuning::den_hartog_brock};
use antinode::solver::{AbsorberLink, EigenParams, ModeRequest, solve_modes};
use common::*;

/// Primary: a 10 kg point mass on a 1e5 N/m spring along X (ω_n = 100 rad/s, 15.915 Hz, static
/// deflection 1e-5 m/N), force and response at the mass; one absorber of μ·10 kg to design there.
/// `extra` is appended to the design block.
fn sdof(mu: f64, zeta: f64, extra: &str) -> String {
    format!(
        r#"{{
  "nodes": [{{"id": 1, "xyz": [0, 0, 0]}}],
  "supports": [{{"at": {{"node": 1}}, "fixed": ["uy", "uz"]}}],
  "point_masses": [{{"at": {{"node": 1}}, "mass": 10}}],
  "springs": [{{"at": {{"node": 1}}, "stiffness": {{"ux": 1e5}}}}],
  "study": {{"band_hz": [8, 24], "modal_damping_ratio": {zeta},
            "excitation": [{{"at": {{"node": 1}}, "direction": "x", "amplitude": 1.0}}],
            "response_points": [{{"at": {{"node": 1}}, "direction": "x"}}],
            "absorber_design": {{"count": 1, "mass_each": {m}, "candidates": [{{"node": 1}}], "directions": ["x"]{extra}}}}}
}}"#,
        m = mu * 10.0
    )
}

const X_ST: f64 = 1e-5;

fn run(json: &str) -> (Structure, StudyModel, Design) {
    let d = designed(json);
    (d.structure, d.study, d.design)
}

/// Exact H∞ optimum of an absorber on an undamped primary under harmonic force (Nishihara &
/// Asami, "Closed-form solutions to the exact optimizations of dynamic vibration absorbers",
/// J. Vib. Acoust. 124(4):576–582, 2002; formulas as in METHODS.md §2.2): (f, ζ_a).
fn nishihara_asami(mu: f64) -> (f64, f64) {
    let f = 2.0 / (1.0 + mu)
        * (2.0 * (16.0 + 23.0 * mu + 9.0 * mu * mu + 2.0 * (2.0 + mu) * (4.0 + 3.0 * mu).sqrt())
            / (3.0 * (64.0 + 80.0 * mu + 27.0 * mu * mu)))
            .sqrt();
    let z = 0.25 * ((8.0 + 9.0 * mu - 4.0 * (4.0 + 3.0 * mu).sqrt()) / (1.0 + mu)).sqrt();
    (f, z)
}

#[test]
fn sdof_reproduces_den_hartog_and_the_exact_h_infinity_optimum() {
    // Undamped primary (ζ_s = 1e-7). Tuning within 0.1 % of Den Hartog's f = 1/(1+μ) (Ormondroyd &
    // Den Hartog 1928), within 1e-4 of Nishihara & Asami's exact f and 1e-3 (relative) of their
    // exact ζ_a; the peak within 1e-4 of the exact H∞ peaks of METHODS.md §2.2 (6.4079 x_st for
    // μ = 0.05, 4.5892 for 0.10, 10.0530 for 0.02; numerical min–max, own check).
    for (mu, peak) in [(0.02, 10.0530), (0.05, 6.4079), (0.10, 4.5892)] {
        let (_, _, d) = run(&sdof(mu, 1e-7, ""));
        let a = &d.absorbers[0];
        let (f_na, z_na) = nishihara_asami(mu);
        let dh = den_hartog_brock(mu);
        assert_rel(a.frequency_ratio, dh.frequency_ratio, 1e-3, &format!("mu {mu}: Den Hartog tuning"));
        assert_rel(a.frequency_ratio, f_na, 1e-4, &format!("mu {mu}: exact H-infinity tuning"));
        assert_rel(a.damping_ratio, z_na, 1e-3, &format!("mu {mu}: exact H-infinity damping"));
        assert_rel(d.after.receptance / X_ST, peak, 1e-4, &format!("mu {mu}: exact H-infinity peak"));
        assert_rel(a.mass_ratio, mu, 1e-9, "mass ratio of a point mass primary");
        assert!(d.constraints.constraints_met);
    }
}

#[test]
fn damped_primary_optimum_beats_the_undamped_rule() {
    // ζ_s = 0.02, μ = 0.05: the numerical H∞ optimum (METHODS.md §2.4, own check: peak 5.267 x_st,
    // f = 0.94609, ζ_a = 0.13697) lies below the peak of the undamped rule (5.433 x_st); using the
    // undamped rule on a damped primary costs a few percent (common practice; Asami, Nishihara & Baz
    // 2002 treat the damped primary).
    let mu = 0.05;
    let (_, sm, d) = run(&sdof(mu, 0.02, ""));
    let t = den_hartog_brock(mu);
    let (k, c) = t.physical(0.5, 100.0);
    let rule = sm.peak(
        8.0,
        24.0,
        &[AbsorberLink {
            coord: d.absorbers[0].candidate.coord,
            mass: 0.5,
            stiffness: k,
            damping: AbsorberDamping::Viscous(c),
        }],
    );
    assert_rel(rule.receptance / X_ST, 5.433, 1e-3, "undamped rule on the damped primary");
    assert!(d.after.receptance <= rule.receptance * (1.0 - 0.02), "{} vs rule {}", d.after.receptance, rule.receptance);
    assert_rel(d.after.receptance / X_ST, 5.267, 1e-3, "damped-primary H-infinity optimum");
    assert_rel(d.absorbers[0].frequency_ratio, 0.94609, 1e-3, "damped-primary optimum tuning");
}

/// A steel bar 50 × 10 mm, 1 m, 40 elements, with `supports`; force and response in z at
/// `drive`; the design block's fields in `design`.
fn bar(supports: &str, band: [f64; 2], drive: f64, design: &str) -> String {
    format!(
        r#"{{
  "materials": {{"m": {STEEL}}},
  "sections": {{"s": {{"rectangle": {{"width": 0.05, "height": 0.01}}}}}},
  "lines": [{{"name": "beam", "from": [0, 0, 0], "to": [1, 0, 0], "elements": 40, "section": "s", "material": "m"}}],
  "supports": {supports},
  "study": {{"band_hz": [{lo}, {hi}], "modal_damping_ratio": 0.01,
            "excitation": [{{"at": {{"line": "beam", "at": {drive}}}, "direction": "z", "amplitude": 1}}],
            "response_points": [{{"at": {{"line": "beam", "at": {drive}}}, "direction": "z"}}],
            "absorber_design": {{"directions": ["z"], {design}}}}}
}}"#,
        lo = band[0],
        hi = band[1]
    )
}

const SS: &str = r#"[{"at": {"line": "beam", "at": 0}, "fixed": ["ux", "uy", "uz", "rx"]},
    {"at": {"line": "beam", "at": 1}, "fixed": ["uy", "uz"]}]"#;
const CLAMPED: &str = r#"[{"at": {"line": "beam", "at": 0}, "fixed": "clamped"}]"#;

#[test]
fn cantilever_absorber_goes_to_the_tip() {
    // Mode 1 of a cantilever moves most at the free end, so the largest mass ratio per kilogram and
    // the best single place is the tip (common practice; the clamped-free mode shape).
    let (s, _, d) = run(&bar(
        CLAMPED,
        [3.0, 20.0],
        0.5,
        r#""count": 1, "mass_each": 0.05, "candidates": [{"line": "beam", "from": 0.05, "to": 1}]"#,
    ));
    let x = s.nodes[d.absorbers[0].candidate.node].xyz[0];
    assert!((x - 1.0).abs() < 1e-9, "cantilever absorber at x = {x}, the tip expected");
}

#[test]
fn peak_grows_as_the_absorber_moves_away_from_the_antinode() {
    // Simply supported bar, mode 1 only in the band: an absorber of fixed mass at x = 0.5 (the
    // antinode), 0.4, 0.3, 0.2, 0.1 sees φ₁² ∝ sin²(πx) fall, so its mass ratio falls and the best
    // attainable peak rises monotonically (Warburton & Ayorinde, Earthquake Eng. Struct. Dyn. 8,
    // 1980: the equivalent mass ratio μ = m φ² governs; common practice). The midspan place is also
    // the one the design picks when given all of them.
    let mut peaks = Vec::new();
    for at in [0.5, 0.4, 0.3, 0.2, 0.1] {
        let design =
            format!(r#""count": 1, "mass_each": 0.08, "candidates": [{{"line": "beam", "from": {at}, "to": {at}}}]"#);
        let (s, _, d) = run(&bar(SS, [10.0, 50.0], 0.5, &design));
        assert!((s.nodes[d.absorbers[0].candidate.node].xyz[0] - at).abs() < 1e-9);
        peaks.push(d.after.receptance);
    }
    for w in peaks.windows(2) {
        assert!(w[1] > w[0] * 1.01, "peak must grow away from the antinode: {peaks:?}");
    }
    let (s, _, d) = run(&bar(
        SS,
        [10.0, 50.0],
        0.5,
        r#""count": 1, "mass_each": 0.08, "candidates": [{"line": "beam", "from": 0.05, "to": 0.95}]"#,
    ));
    assert!((s.nodes[d.absorbers[0].candidate.node].xyz[0] - 0.5).abs() < 1e-9, "best single place is midspan");
    assert_rel(d.after.receptance, peaks[0], 1e-6, "the free choice equals the midspan study");
}

#[test]
fn several_absorbers_of_one_total_mass_beat_one() {
    // One mode (mode 1 of a simply supported bar), total absorber mass 0.08 kg near midspan split
    // into 1, 2 and 3 units: the optimised peak falls monotonically with the number of units
    // (multiple-TMD literature: Zuo & Nayfeh 2004, JSV 272; Hoang & Warnitchai 2005, Earthquake Eng.
    // Struct. Dyn. 34: distributed tunings beat one unit of the same mass). The trend, not numbers.
    let mut peaks = Vec::new();
    for n in 1..=3 {
        let design = format!(
            r#""count": {n}, "total_mass": 0.08, "min_spacing": 0, "targets": "auto",
               "candidates": [{{"line": "beam", "from": 0.45, "to": 0.55}}]"#
        );
        let (_, _, d) = run(&bar(SS, [10.0, 50.0], 0.5, &design));
        assert_eq!(d.absorbers.len(), n);
        assert_rel(d.absorbers.iter().map(|a| a.mass_kg).sum::<f64>(), 0.08, 1e-12, "total mass");
        peaks.push(d.after.receptance);
    }
    assert!(peaks[1] < peaks[0] && peaks[2] < peaks[1], "peaks for 1, 2, 3 units: {peaks:?}");
}

/// Band peak (m/N) of the SDOF primary with its spring scaled by `s2` and an absorber (m, k, c).
fn sdof_peak_scaled(s2: f64, m: f64, k: f64, c: f64) -> f64 {
    let json = sdof(0.05, 1e-7, "")
        .replace(r#""ux": 1e5"#, &format!(r#""ux": {}"#, 1e5 * s2))
        .replace(
            r#""study""#,
            &format!(r#""absorbers": [{{"at": {{"node": 1}}, "direction": "x", "mass": {m}, "stiffness": {k}, "damping": {c}}}], "study""#),
        );
    let s = structure(&json);
    let sys = system(&s);
    let study = s.study.clone().unwrap_or_else(|| panic!("study"));
    let sol = solve_modes(&sys, ModeRequest::Lowest(1), &EigenParams::default()).unwrap_or_else(|e| panic!("{e}"));
    let sm = StudyModel::build(&s, &sys, &sol, &study, false).unwrap_or_else(|e| panic!("{e}"));
    sm.peak(8.0, 24.0, &sm.existing).receptance
}

#[test]
fn robust_design_lowers_the_worst_case() {
    // μ = 0.05 on an undamped primary whose natural frequency may be ±5 % off. The worst case over
    // the scatter is lower for the robust design than for the nominal one, and its nominal peak is
    // only moderately higher (min–max robust design, METHODS.md §4.7 own check: worst 8.71 vs 9.94,
    // nominal 7.29 vs 6.41; Hoang & Warnitchai 2005: robustness costs some nominal performance).
    // The scenario peaks are checked against models whose spring is really scaled by (1 ± 0.05)²
    // (an independent solve of each scenario).
    let (_, _, nominal) = run(&sdof(0.05, 1e-7, ""));
    let (_, _, robust) = run(&sdof(0.05, 1e-7, r#", "uncertainty": {"frequency_scatter": 0.05}"#));
    assert_eq!(robust.scenarios.len(), 3);
    let worst = |d: &Design| -> f64 {
        let a = &d.absorbers[0];
        [0.95f64, 1.0, 1.05]
            .iter()
            .map(|s| sdof_peak_scaled(s * s, a.mass_kg, a.stiffness_n_per_m, a.damping_n_s_per_m))
            .fold(0.0, f64::max)
    };
    let (wn, wr) = (worst(&nominal), worst(&robust));
    assert_rel(robust.worst_case_after, wr, 1e-6, "scenario scaling against re-solved scaled models");
    for (r, s) in robust.scenarios.iter().zip([0.95f64, 1.0, 1.05]) {
        let a = &robust.absorbers[0];
        let direct = sdof_peak_scaled(s * s, a.mass_kg, a.stiffness_n_per_m, a.damping_n_s_per_m);
        assert_rel(r.peak_after, direct, 1e-6, &format!("scenario {s}"));
    }
    assert!(wr < 0.95 * wn, "robust worst case {wr} vs nominal design's {wn}");
    let (pn, pr) = (nominal.after.receptance, robust.after.receptance);
    assert!(pr > pn && pr < 1.25 * pn, "nominal peaks: robust {pr} vs nominal design {pn}");
    assert!(robust.absorbers[0].damping_ratio > nominal.absorbers[0].damping_ratio, "more damping for robustness");
}

#[test]
fn stroke_limit_is_met_or_reported_unmet() {
    // Reachable limit: 80 % of the unconstrained design's stroke is met (more damping buys stroke,
    // common practice), at a higher peak. Unreachable limit (1 nm): the result says so and gives
    // the best achievable stroke, above the limit — never a silent best effort.
    let (_, _, free) = run(&sdof(0.05, 0.01, ""));
    let s0 = free.constraints.worst_stroke_m;
    // The constraint uses refined stroke maxima, the per-absorber figure the study grid's maximum.
    assert_rel(s0, free.absorbers[0].max_stroke_m, 1e-3, "nominal stroke without scatter (refined vs grid)");
    let limit = 0.8 * s0;
    let (_, _, held) = run(&sdof(0.05, 0.01, &format!(r#", "stroke_limit": {limit}"#)));
    assert!(held.constraints.constraints_met, "{:?}", held.constraints);
    assert!(held.constraints.worst_stroke_m <= limit * (1.0 + 1e-3), "{:?}", held.constraints);
    assert!(held.after.receptance >= free.after.receptance, "the limit costs response");
    let (_, _, unmet) = run(&sdof(0.05, 0.01, r#", "stroke_limit": 1e-9"#));
    let c = &unmet.constraints;
    assert!(!c.constraints_met);
    let best = c.best_achievable_stroke_m.unwrap_or_else(|| panic!("best achievable stroke"));
    assert!(best > 1e-9 && best <= c.worst_stroke_m * (1.0 + 1e-9), "{c:?}");
    assert!(c.message.as_deref().unwrap_or("").contains("cannot be met"), "{c:?}");
}

#[test]
fn mass_split_stays_in_budget_and_limits() {
    // Two absorbers on modes 1 and 2 of a simply supported bar sharing 0.16 kg, each within
    // [0.02, 0.14] kg: the refined split keeps the total and the limits and is no worse than the
    // equal split (the refinement starts from it).
    let base = r#""count": 2, "total_mass": 0.16, "candidates": [{"line": "beam", "from": 0.02, "to": 0.98}]"#;
    let (_, _, equal) = run(&bar(SS, [10.0, 120.0], 0.3, base));
    let (_, _, split) = run(&bar(SS, [10.0, 120.0], 0.3, &format!(r#"{base}, "mass_limits": [0.02, 0.14]"#)));
    let m: Vec<f64> = split.absorbers.iter().map(|a| a.mass_kg).collect();
    assert_rel(m.iter().sum::<f64>(), 0.16, 1e-12, "budget");
    assert!(m.iter().all(|&x| (0.02..=0.14).contains(&x)), "{m:?}");
    assert!(
        split.after.receptance <= equal.after.receptance * (1.0 + 1e-9),
        "{} vs {}",
        split.after.receptance,
        equal.after.receptance
    );
}

#[test]
fn per_absorber_outputs_follow_their_definitions() {
    // Static sag m g / k (g = 9.80665 m/s², ISO 80000-3); the tolerance band's edges are where the
    // reduction of the target window's peak is half the designed one (the definition, checked by
    // re-evaluating the peak with the drifted stiffness).
    let (_, sm, d) = run(&sdof(0.05, 0.01, ""));
    let a = &d.absorbers[0];
    assert_rel(a.static_sag_m, 9.80665 * a.mass_kg / a.stiffness_n_per_m, 1e-12, "sag");
    let [lo, hi] = a.tolerance_band.unwrap_or_else(|| panic!("tolerance band"));
    assert!(lo < -0.005 && hi > 0.005 && lo > -0.5 && hi < 0.5, "{lo} {hi}");
    let w = d.targets[0].window_hz;
    let before = sm.peak_estimate(w[0], w[1], &[]);
    let gain = |drift: f64| {
        let l = AbsorberLink {
            coord: a.candidate.coord,
            mass: a.mass_kg,
            stiffness: a.stiffness_n_per_m * (1.0 + drift).powi(2),
            damping: AbsorberDamping::Viscous(a.damping_n_s_per_m),
        };
        20.0 * (before / sm.peak_estimate(w[0], w[1], &[l])).log10()
    };
    for edge in [lo, hi] {
        assert_rel(gain(edge), 0.5 * gain(0.0), 1e-3, &format!("benefit at the band edge {edge}"));
    }
    assert_rel(a.max_spring_force_n, a.max_spring_force_n_per_n * 1.0, 1e-12, "force at 1 N excitation");
}

fn invalid(json: &str) -> String {
    let m = antinode::mesh::parse_model(json, std::path::Path::new("t.json")).unwrap_or_else(|e| panic!("{e}"));
    match antinode::mesh::validate(&m) {
        Ok(_) => panic!("accepted: {json}"),
        Err(e) => e.to_string(),
    }
}

#[test]
fn contradictory_constraints_are_refused_with_their_path() {
    // Bad input names the JSON path and the value (house rule).
    let e = invalid(
        &sdof(0.05, 0.01, "")
            .replace(r#""count": 1, "mass_each": 0.5"#, r#""count": 3, "total_mass": 0.5, "mass_limits": [0.2, 0.4]"#),
    );
    assert!(e.contains("study.absorber_design.total_mass") && e.contains("below"), "{e}");
    let e = invalid(
        &sdof(0.05, 0.01, "")
            .replace(r#""count": 1, "mass_each": 0.5"#, r#""count": 2, "total_mass": 1.0, "mass_limits": [0.1, 0.2]"#),
    );
    assert!(e.contains("study.absorber_design.total_mass") && e.contains("contradict"), "{e}");
    let e = invalid(&sdof(0.05, 0.01, r#", "mass_limits": [0.4, 0.2]"#));
    assert!(e.contains("study.absorber_design.mass_limits"), "{e}");
    let e = invalid(&sdof(0.05, 0.01, r#", "mass_limits": [0.1, 0.2]"#));
    assert!(e.contains("study.absorber_design.mass_each"), "{e}");
    let e = invalid(&sdof(0.05, 0.01, r#", "stroke_limit": -1"#));
    assert!(e.contains("stroke_limit"), "{e}");
    let e = invalid(&sdof(0.05, 0.01, r#", "uncertainty": {"frequency_scatter": 0.7}"#));
    assert!(e.contains("study.absorber_design.uncertainty") && e.contains("frequency_scatter"), "{e}");
    let e = invalid(&sdof(0.05, 0.01, r#", "uncertainty": {"scenarios": 1}"#));
    assert!(e.contains("scenarios"), "{e}");
    let e = invalid(&sdof(0.05, 0.01, r#", "mass_limits": [0.3, 0.6], "trade_off_masses": [0.4, 0.9]"#));
    assert!(e.contains("study.absorber_design.trade_off_masses[1]"), "{e}");
}

#[test]
fn target_outside_the_computed_modes_is_refused() {
    let s = structure(&sdof(0.05, 0.01, r#", "targets": [7]"#));
    let sys = system(&s);
    let study = s.study.clone().unwrap_or_else(|| panic!("study"));
    let sol = solve_modes(&sys, ModeRequest::Lowest(1), &EigenParams::default()).unwrap_or_else(|e| panic!("{e}"));
    let sm = StudyModel::build(&s, &sys, &sol, &study, true).unwrap_or_else(|e| panic!("{e}"));
    let spec = study.design.clone().unwrap_or_else(|| panic!("design"));
    match design(&sm, &spec, &s) {
        Ok(_) => panic!("mode 7 of 1 accepted"),
        Err(e) => {
            let e = e.to_string();
            assert!(e.contains("study.absorber_design.targets") && e.contains("mode 7"), "{e}");
        }
    }
}

#[test]
fn trade_off_follows_the_exact_optimum_peaks() {
    // The design repeated at total masses 0.1 … 1 kg on the 10 kg undamped primary (μ = 0.01 …
    // 0.10): each point's peak is the exact H∞ optimum of METHODS.md §2.2 (14.1796, 10.0530, 6.4079,
    // 4.5892 x_st; numerical min–max, own check, Nishihara & Asami 2002), so the reduction grows with
    // the mass.
    let s = structure(&sdof(0.05, 1e-7, r#", "trade_off_masses": [0.1, 0.2, 0.5, 1.0]"#));
    let sys = system(&s);
    let study = s.study.clone().unwrap_or_else(|| panic!("study"));
    let sol = solve_modes(&sys, ModeRequest::Lowest(1), &EigenParams::default()).unwrap_or_else(|e| panic!("{e}"));
    let sm = StudyModel::build(&s, &sys, &sol, &study, true).unwrap_or_else(|e| panic!("{e}"));
    let spec = study.design.clone().unwrap_or_else(|| panic!("design"));
    let t = antinode::placement::tradeoff::trade_off(&sm, &spec, &s).unwrap_or_else(|e| panic!("{e}"));
    for (p, want) in t.iter().zip([14.1796, 10.0530, 6.4079, 4.5892]) {
        assert_rel(p.peak_after / X_ST, want, 2e-4, &format!("{} kg", p.total_mass_kg));
    }
    for w in t.windows(2) {
        assert!(w[1].change_db < w[0].change_db, "more mass, more reduction");
    }
}
