//! Point mass with rotary inertia: M = diag(m, m, m) on the node's translations `[ux, uy, uz]` and
//! the inertia tensor J (about the node, global axes) on its rotations `[rx, ry, rz]`:
//! T = ½ m |u̇|² + ½ θ̇ᵀ J θ̇ for small rotations.

/// Row-major 6 × 6 mass matrix of a point mass `mass` (kg) with inertia tensor `inertia` (kg·m²).
pub fn point_mass(mass: f64, inertia: [[f64; 3]; 3]) -> [[f64; 6]; 6] {
    let mut m = [[0.0; 6]; 6];
    for d in 0..3 {
        m[d][d] = mass;
        for e in 0..3 {
            m[3 + d][3 + e] = inertia[d][e];
        }
    }
    m
}

#[cfg(test)]
mod tests {
    use super::point_mass;

    #[test]
    fn kinetic_energy_of_a_spin_is_half_omega_j_omega() {
        // Definition of rotational kinetic energy (common practice): T = ½ ωᵀ J ω.
        let j = [[2.0, 0.5, 0.0], [0.5, 3.0, 0.0], [0.0, 0.0, 4.0]];
        let m = point_mass(7.0, j);
        let w = [0.0, 0.0, 0.0, 1.0, 2.0, 0.0];
        let t: f64 = (0..6).map(|r| (0..6).map(|c| w[r] * m[r][c] * w[c]).sum::<f64>()).sum::<f64>() / 2.0;
        assert!((t - 0.5 * (2.0 + 2.0 * 0.5 * 2.0 + 3.0 * 4.0)).abs() < 1e-14);
        assert_eq!(m[0][0], 7.0);
        assert_eq!(m[2][2], 7.0);
        assert_eq!(m[0][3], 0.0);
    }
}
