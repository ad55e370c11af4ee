//! Natural frequencies of uniform beams against closed forms.

mod common;
use common::*;

/// Rectangle 50 mm wide (along local z = global Y) and 10 mm high (along local y = global Z):
/// EI = 875 N·m² for bending in the X-Z plane, ρA = 3.925 kg/m, L = 1 m.
const BAR: &str = r#"{"rectangle": {"width": 0.05, "height": 0.01}}"#;

fn hz_in_plane(
    sol: &antinode::solver::ModalSolution,
    sys: &antinode::solver::System,
    n: usize,
) -> Vec<f64> {
    // Modes whose motion is along Z (bending in the X-Z plane), lowest first.
    let map = sys.dof_map();
    let mut out = Vec::new();
    for i in 0..sol.n_modes() {
        let nodes = map.expand(sol.shape(i));
        let z: f64 = nodes.iter().map(|d| d[2] * d[2]).sum();
        let all: f64 = nodes
            .iter()
            .map(|d| d[0] * d[0] + d[1] * d[1] + d[2] * d[2])
            .sum();
        if all > 0.0 && z / all > 0.99 {
            out.push(sol.frequency_hz(i));
        }
        if out.len() == n {
            break;
        }
    }
    out
}

#[test]
fn simply_supported_beam_matches_closed_form() {
    // f_n = (β_nL)²/(2πL²) √(EI/ρA) with β_nL = nπ (Thomson, Theory of Vibration with Applications,
    // Table 9.5-1); worked values for this bar 23.4533, 93.8132, 211.0798 Hz.
    let json = beam_model(
        BAR,
        40,
        1.0,
        r#"[{"at": {"line": "beam", "at": 0}, "fixed": ["ux", "uy", "uz", "rx"]},
        {"at": {"line": "beam", "at": 1}, "fixed": ["uy", "uz"]}]"#,
        STEEL,
    );
    let s = structure(&json);
    let (sys, sol) = lowest(&s, 8);
    let f = hz_in_plane(&sol, &sys, 3);
    for (got, want) in f.iter().zip([23.4533, 93.8132, 211.0798]) {
        // Cubic Hermite elements, consistent mass, 40 elements: error far below 0.1 % (issue bound).
        assert_rel(*got, want, 1e-3, "simply supported bending");
    }
    assert!(sol.sturm_check.passed, "{:?}", sol.sturm_check);
    assert!(
        sol.residuals.iter().all(|&r| r < 1e-8),
        "{:?}",
        sol.residuals
    );
}
