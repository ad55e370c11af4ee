//! Post-processing of computed modes: mass normalisation, canonical orientation of exactly repeated
//! eigenvalues, a deterministic sign, residuals and orthogonality, and modal participation.

use faer::Mat;

use super::ModalSolution;
use crate::assembly::System;
use crate::error::SolverError;

/// Relative spread under which eigenvalues are treated as exactly repeated (symmetric parts).
const REPEATED: f64 = 1e-10;

/// Fails on the first mode (numbered from 1) whose eigenvalue, shape (named by DOF) or residual is
/// not finite: a computed mode is never returned with a NaN or an infinity in it.
pub(crate) fn check_finite(system: &System, sol: &ModalSolution) -> Result<(), SolverError> {
    for c in 0..sol.shapes.ncols() {
        let what = |part: String| SolverError::NotFinite {
            what: format!(
                "mode {} ({part}); the model's stiffness or mass is too ill-conditioned to solve: check the \
                 stiffest springs and the smallest masses (see the warnings of `check`)",
                c + 1
            ),
        };
        let lambda = sol.eigenvalues[c];
        if !lambda.is_finite() {
            return Err(what(format!("eigenvalue {lambda}")));
        }
        if let Some(i) = (0..sol.shapes.nrows()).find(|&i| !sol.shapes[(i, c)].is_finite()) {
            return Err(what(format!("its shape at {}", system.dof_map().describe(i))));
        }
        if let Some(r) = sol.residuals.get(c).filter(|r| !r.is_finite()) {
            return Err(what(format!("its residual {r}")));
        }
    }
    Ok(())
}

/// Mass-normalises, orients, signs and measures the modes of `sol` in place.
///
/// Residuals: ‖Kφ − λMφ‖ / (|λ| ‖Mφ‖ + ‖Kφ‖) for elastic modes; for zero-energy modes (where that
/// ratio is 0/0) ‖Kφ − λMφ‖ / (λ_ref ‖Mφ‖) with λ_ref the element eigenvalue scale
/// `eigenvalue_scale`.
pub(crate) fn finish(system: &System, sol: &mut ModalSolution, eigenvalue_scale: f64) {
    let n = sol.shapes.nrows();
    let k = sol.shapes.ncols();
    if k == 0 {
        return;
    }
    // Mass normalisation.
    let m_phi = system.mul_m(sol.shapes.as_ref());
    for c in 0..k {
        let g: f64 = (0..n).map(|i| sol.shapes[(i, c)] * m_phi[(i, c)]).sum();
        if g > 0.0 {
            let s = 1.0 / g.sqrt();
            for i in 0..n {
                sol.shapes[(i, c)] *= s;
            }
        }
    }
    orient_repeated(system, sol);
    fix_signs(sol);
    // Residuals and orthogonality.
    let k_phi = system.mul_k(sol.shapes.as_ref());
    let m_phi = system.mul_m(sol.shapes.as_ref());
    for c in 0..k {
        let lambda = sol.eigenvalues[c];
        let mut r2 = 0.0;
        let mut kn = 0.0;
        let mut mn = 0.0;
        for i in 0..n {
            let r = k_phi[(i, c)] - lambda * m_phi[(i, c)];
            r2 += r * r;
            kn += k_phi[(i, c)] * k_phi[(i, c)];
            mn += m_phi[(i, c)] * m_phi[(i, c)];
        }
        let denom =
            if c < sol.n_zero_energy { eigenvalue_scale * mn.sqrt() } else { lambda.abs() * mn.sqrt() + kn.sqrt() };
        sol.residuals[c] = if denom > 0.0 { r2.sqrt() / denom } else { 0.0 };
    }
    let g = sol.shapes.transpose() * m_phi.as_ref();
    let mut err: f64 = 0.0;
    for i in 0..k {
        for j in 0..k {
            let want = if i == j { 1.0 } else { 0.0 };
            err = err.max((g[(i, j)] - want).abs());
        }
    }
    sol.orthogonality_error = err;
}

/// Rotates the basis of each exactly repeated eigenvalue into a canonical orientation within the
/// eigenspace. With L = Φ_cᵀ M R the participation of the members in the rigid motions R (unit
/// translations along X, Y, Z, then rotations about the global axes through the origin), the
/// members are rotated so that L becomes a staircase: the first member takes all the participation
/// in the first direction any member has, the remaining members have none in it, and so on, skipping
/// directions in which the remaining members do not participate. A round tube's bending pair along
/// X becomes one mode moving in Y and one in Z, whatever round-off mixed them.
fn orient_repeated(system: &System, sol: &mut ModalSolution) {
    let k = sol.shapes.ncols();
    let r = rigid_motions(system);
    let mr = system.mul_m(r.as_ref());
    let mut start = 0;
    while start < k {
        let mut end = start + 1;
        while end < k && is_repeated(sol.eigenvalues[start], sol.eigenvalues[end]) {
            end += 1;
        }
        let p = end - start;
        if p > 1 {
            let block = sol.shapes.subcols(start, p).to_owned();
            let l = block.transpose() * mr.as_ref(); // p × 6
            let q = staircase_rotation(&l);
            let rotated = &block * &q;
            sol.shapes.subcols_mut(start, p).copy_from(rotated.as_ref());
            // The members share one eigenvalue: use their mean.
            let mean = sol.eigenvalues[start..end].iter().sum::<f64>() / p as f64;
            for v in &mut sol.eigenvalues[start..end] {
                *v = mean;
            }
        }
        start = end;
    }
}

/// Orthogonal Q (p × p) such that Qᵀ L is a row staircase: Householder reflections on the rows not
/// yet used, one per column of L whose remaining part is not negligible (relative 1e-8 of ‖L‖).
fn staircase_rotation(l: &Mat<f64>) -> Mat<f64> {
    let p = l.nrows();
    let mut a = l.clone(); // becomes Qᵀ L
    let mut q = Mat::<f64>::identity(p, p);
    let scale = l.norm_l2();
    let mut row = 0;
    for col in 0..l.ncols() {
        if row + 1 >= p || scale == 0.0 {
            break;
        }
        let norm = (row..p).map(|i| a[(i, col)] * a[(i, col)]).sum::<f64>().sqrt();
        if norm <= 1e-8 * scale {
            continue;
        }
        // v = x + sign(x0) ‖x‖ e_0 on rows row..p; H = I − 2 v vᵀ / (vᵀv) maps x to −sign(x0) ‖x‖ e_0.
        let alpha = if a[(row, col)] >= 0.0 { norm } else { -norm };
        let mut v = vec![0.0; p];
        for i in row..p {
            v[i] = a[(i, col)];
        }
        v[row] += alpha;
        let vv: f64 = v.iter().map(|x| x * x).sum();
        if vv > 0.0 {
            for c in 0..a.ncols() {
                let d: f64 = (row..p).map(|i| v[i] * a[(i, c)]).sum::<f64>() * 2.0 / vv;
                for i in row..p {
                    a[(i, c)] -= d * v[i];
                }
            }
            // Q ← Q H (H symmetric), so that Qᵀ L = H … L.
            for r in 0..p {
                let d: f64 = (row..p).map(|i| q[(r, i)] * v[i]).sum::<f64>() * 2.0 / vv;
                for i in row..p {
                    q[(r, i)] -= d * v[i];
                }
            }
        }
        row += 1;
    }
    q
}

fn is_repeated(a: f64, b: f64) -> bool {
    (a - b).abs() <= REPEATED * a.abs().max(b.abs())
}

/// Sign convention: the entry of largest magnitude is positive (the first one among ties within
/// 1e-9 relative).
fn fix_signs(sol: &mut ModalSolution) {
    let n = sol.shapes.nrows();
    for c in 0..sol.shapes.ncols() {
        let max = (0..n).map(|i| sol.shapes[(i, c)].abs()).fold(0.0, f64::max);
        if let Some(i) = (0..n).find(|&i| sol.shapes[(i, c)].abs() >= (1.0 - 1e-9) * max) {
            if sol.shapes[(i, c)] < 0.0 {
                for r in 0..n {
                    sol.shapes[(r, c)] = -sol.shapes[(r, c)];
                }
            }
        }
    }
}

/// Rigid motions over the free DOFs: unit translations along X, Y, Z, then unit rotations about the
/// global X, Y, Z axes (through the origin), n × 6.
fn rigid_motions(system: &System) -> Mat<f64> {
    let n = system.n_dofs();
    let mut r = Mat::<f64>::zeros(n, 6);
    for i in 0..n {
        match system.dofs.owner(i) {
            crate::dofs::DofOwner::Node { node, component } => {
                let x = system.node_xyz[node];
                if component < 3 {
                    r[(i, component)] = 1.0;
                    // Rotation ω about axis a moves the point by ω × x.
                    for a in 0..3 {
                        let mut w = [0.0; 3];
                        w[a] = 1.0;
                        let v = [w[1] * x[2] - w[2] * x[1], w[2] * x[0] - w[0] * x[2], w[0] * x[1] - w[1] * x[0]];
                        r[(i, 3 + a)] = v[component];
                    }
                } else {
                    r[(i, component)] = 1.0;
                }
            }
            crate::dofs::DofOwner::Absorber { absorber } => {
                let e = system.absorber_directions[absorber];
                for d in 0..3 {
                    r[(i, d)] = e[d];
                }
            }
            // Matrices without geometry: no rigid motions are known (orientation is skipped).
            crate::dofs::DofOwner::Row { .. } => {}
        }
    }
    r
}

/// Modal participation in base motion: L_i,d = φ_iᵀ b_d, with b_d the inertia load of a unit rigid
/// translation along X, Y, Z of the whole model, supports included (b_d = M_ff r_f + M_fs r_s: the
/// supports move with the base). The effective modal mass of mode i in direction d is L_i,d² (kg) for
/// mass-normalised modes (Irvine, "Effective modal mass & modal participation factors"; Chopra,
/// Dynamics of Structures, earthquake analysis — from memory). Over all modes of a free body the
/// effective masses add up to the total mass (ECSS glossary, "effective modal mass"); for a
/// supported body they add up to less, the rest staying with the supports.
pub fn participation(system: &System, sol: &ModalSolution) -> Vec<[f64; 3]> {
    let l = sol.shapes().transpose() * system.base_inertia.as_ref();
    (0..sol.n_modes()).map(|i| [l[(i, 0)], l[(i, 1)], l[(i, 2)]]).collect()
}

#[cfg(test)]
mod tests {
    use faer::sparse::Pair;

    use super::*;
    use crate::assembly::Geometry;
    use crate::dofs::DofMap;
    use crate::eigen::{SolveStats, SturmCheck};

    fn two_rows() -> System {
        let pairs = vec![Pair { row: 0, col: 0 }, Pair { row: 1, col: 1 }];
        let geometry = Geometry {
            node_xyz: vec![],
            absorber_directions: vec![],
            base_inertia: Mat::zeros(2, 6),
            rigid_mass: [[0.0; 6]; 6],
        };
        System::from_entries(DofMap::rows(2), pairs, vec![1.0, 4.0], vec![1.0, 1.0], geometry).expect("system")
    }

    fn solution(eigenvalues: Vec<f64>, shapes: Mat<f64>) -> ModalSolution {
        ModalSolution {
            residuals: vec![0.0; eigenvalues.len()],
            eigenvalues,
            shapes,
            orthogonality_error: 0.0,
            sturm_check: SturmCheck {
                shift_hz: 1.0,
                count_expected: 2,
                count_found: 2,
                passed: true,
                lower_shift_hz: None,
            },
            n_zero_energy: 0,
            shift: 0.0,
            stats: SolveStats::default(),
        }
    }

    /// The guard passes finite modes and names the mode and the DOF of a NaN or an infinity
    /// (crafted solutions: valid input does not reach it).
    #[test]
    fn non_finite_modes_are_named() {
        let system = two_rows();
        assert!(check_finite(&system, &solution(vec![1.0, 4.0], Mat::identity(2, 2))).is_ok());
        let mut shapes = Mat::identity(2, 2);
        shapes[(1, 1)] = f64::NAN;
        let err = check_finite(&system, &solution(vec![1.0, 4.0], shapes)).expect_err("NaN in a shape");
        assert!(err.to_string().contains("mode 2 (its shape at row 2)"), "{err}");
        let err = check_finite(&system, &solution(vec![f64::INFINITY, 4.0], Mat::identity(2, 2)))
            .expect_err("an infinite eigenvalue");
        assert!(err.to_string().contains("mode 1 (eigenvalue inf)"), "{err}");
        let mut sol = solution(vec![1.0, 4.0], Mat::identity(2, 2));
        sol.residuals[0] = f64::NAN;
        assert!(check_finite(&system, &sol).expect_err("a NaN residual").to_string().contains("mode 1 (its residual"));
    }
}
