//! Six-component spring: one stiffness per global DOF, to ground or between two nodes.
//!
//! To ground, DOFs `[ux, uy, uz, rx, ry, rz]` of one node: K = diag(k) (added to the diagonal
//! directly by the assembly).
//! Between nodes a and b, DOFs `[a: 6, b: 6]`: K = [diag(k), −diag(k); −diag(k), diag(k)].
//! The spring acts along global axes and has no mass.

/// Stiffness of a spring between two nodes, 12×12, row-major.
pub fn link_stiffness(k: [f64; 6]) -> [[f64; 12]; 12] {
    let mut m = [[0.0; 12]; 12];
    for d in 0..6 {
        m[d][d] = k[d];
        m[6 + d][6 + d] = k[d];
        m[d][6 + d] = -k[d];
        m[6 + d][d] = -k[d];
    }
    m
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn link_moves_rigidly_without_force() {
        let m = link_stiffness([1.0, 2.0, 3.0, 4.0, 5.0, 6.0]);
        for row in &m {
            let f: f64 = row.iter().sum();
            assert_eq!(f, 0.0);
        }
    }
}
