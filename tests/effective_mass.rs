//! Effective modal mass against closed forms, and the completeness sum over all modes.

mod common;
use antinode::solver::{EigenParams, Method, ModeRequest, participation, solve_modes};
use common::*;

const BAR: &str = r#"{"rectangle": {"width": 0.05, "height": 0.01}}"#;
const CLAMPED_LEFT: &str = r#"{"at": {"line": "beam", "at": 0}, "fixed": "clamped"}"#;

/// Fractions of the total mass in Z of the bending modes moving along Z, lowest first.
fn z_fractions(json: &str, n: usize) -> Vec<f64> {
    let s = structure(json);
    let (sys, sol) = lowest(&s, 40);
    let l = participation(&sys, &sol);
    let total = s.total_mass();
    (sol.n_zero_energy..sol.n_modes())
        .filter(|&i| {
            let d = sys.dof_map().expand(sol.shape(i));
            let z: f64 = d.iter().map(|v| v[2] * v[2]).sum();
            let all: f64 = d.iter().map(|v| v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sum();
            z > 0.999 * all
        })
        .take(n)
        .map(|i| l[i][2] * l[i][2] / total)
        .collect()
}

#[test]
fn cantilever_effective_masses() {
    // m_eff,n / m = (∫φ_n dx)² / (L ∫φ_n² dx) = 4σ_n²/(β_nL)² for a uniform cantilever, with σ_n the
    // mode-shape constants: 0.613076, 0.188300, 0.064732 (closed form evaluated to 6 digits; the
    // rounded 61.3 %, 18.8 %, 6.5 % are those of Irvine's effective-modal-mass tutorial — from memory).
    let f = z_fractions(&beam_model(BAR, 40, 1.0, &format!("[{CLAMPED_LEFT}]"), STEEL), 3);
    // 40 elements: the reference sheet expects 1e-4 absolute.
    for (got, want) in f.iter().zip([0.613076, 0.188300, 0.064732]) {
        assert!((got - want).abs() < 1e-4, "cantilever effective mass fraction {got} vs {want}");
    }
}

#[test]
fn simply_supported_effective_masses() {
    // Simply supported beam: m_eff,n / m = 8/(nπ)² for odd n, 0 for even n (closed form from
    // φ_n = sin(nπx/L)): 0.810569, 0, 0.090063.
    let json = beam_model(
        BAR,
        40,
        1.0,
        r#"[{"at": {"line": "beam", "at": 0}, "fixed": ["ux", "uy", "uz", "rx"]},
            {"at": {"line": "beam", "at": 1}, "fixed": ["uy", "uz"]}]"#,
        STEEL,
    );
    let f = z_fractions(&json, 3);
    for (got, want) in f.iter().zip([0.810569, 0.0, 0.090063]) {
        assert!((got - want).abs() < 1e-4, "simply supported effective mass fraction {got} vs {want}");
    }
}

#[test]
fn sums_over_all_modes_equal_the_mass() {
    // Σ_i L_i² = bᵀ Φ Φᵀ b = bᵀ M⁻¹ b because Φ Φᵀ = M⁻¹ for a complete M-orthonormal set. For a free
    // body b = M r and the effective masses of all modes add up to the total mass (ECSS glossary,
    // "effective modal mass"; Irvine's tutorial). Exact identity: round-off only.
    let s = structure(&beam_model(BAR, 20, 1.0, "[]", STEEL));
    let sys = system(&s);
    let sol = solve_modes(
        &sys,
        ModeRequest::Lowest(sys.n_dofs()),
        &EigenParams { method: Method::Dense, ..EigenParams::default() },
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let l = participation(&sys, &sol);
    for d in 0..3 {
        let sum: f64 = l.iter().map(|v| v[d] * v[d]).sum();
        assert_rel(sum, s.total_mass(), 1e-10, &format!("free body: sum of effective masses, direction {d}"));
    }
}

#[test]
fn supported_sums_stay_between_the_free_mass_and_the_total() {
    // For a supported body the sum lies between the mass of the free DOFs and the total mass; the
    // remainder (the Schur complement of the mass at the supports) shrinks with the element size
    // (common practice: that mass stays with the supports).
    let mut deficits = Vec::new();
    for n in [20, 80] {
        let s = structure(&beam_model(BAR, n, 1.0, &format!("[{CLAMPED_LEFT}]"), STEEL));
        let sys = system(&s);
        let sol = solve_modes(
            &sys,
            ModeRequest::Lowest(sys.n_dofs()),
            &EigenParams { method: Method::Dense, ..EigenParams::default() },
        )
        .unwrap_or_else(|e| panic!("{e}"));
        let l = participation(&sys, &sol);
        let sum: f64 = l.iter().map(|v| v[2] * v[2]).sum();
        let free = sys.unrestrained_mass()[2];
        assert!(
            sum >= free * (1.0 - 1e-12) && sum <= s.total_mass() * (1.0 + 1e-12),
            "{free} <= {sum} <= {}",
            s.total_mass()
        );
        deficits.push((s.total_mass() - sum) / s.total_mass());
    }
    // The deficit vanishes with the element size (measured here: four times finer, three times
    // smaller; its order is below 1 because M_ff⁻¹ spreads the support coupling over the beam).
    assert!(deficits[1] < 0.5 * deficits[0], "{deficits:?}");
}
