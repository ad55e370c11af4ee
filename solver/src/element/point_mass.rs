//! Point mass with rotary inertia about global axes: M = diag(m, m, m, Ixx, Iyy, Izz) on the node's
//! DOFs `[ux, uy, uz, rx, ry, rz]`. Products of inertia are not modelled.

/// Diagonal mass of a point mass `mass` (kg) with inertia `inertia` (kg·m²) about X, Y, Z.
pub fn point_mass(mass: f64, inertia: [f64; 3]) -> [f64; 6] {
    [mass, mass, mass, inertia[0], inertia[1], inertia[2]]
}
