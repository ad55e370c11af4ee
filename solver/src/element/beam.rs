//! Two-node 3D beam element: Euler–Bernoulli, or Timoshenko when the section has shear areas.
//!
//! Local DOF order `[u1, v1, w1, θx1, θy1, θz1, u2, v2, w2, θx2, θy2, θz2]`, local x from node 1 to
//! node 2. Bending in the x-y plane uses (v, θz) with θz = dv/dx for a slender beam; bending in the
//! x-z plane uses (w, θy) with θy = −dw/dx.
//!
//! Bending uses the interdependent interpolation of Friedman & Kosmatka ("An improved two-node
//! Timoshenko beam finite element", Computers & Structures 47(3), 1993), which is exact for a
//! statically loaded uniform Timoshenko beam and reduces to cubic Hermite functions when the shear
//! parameter Φ = 12EI/(κGA L²) is zero. With ξ = x/L:
//!
//! ```text
//! N_v = 1/(1+Φ) [ 2ξ³−3ξ²−Φξ+1+Φ,  L(ξ³−(2+Φ/2)ξ²+(1+Φ/2)ξ),  −2ξ³+3ξ²+Φξ,  L(ξ³−(1−Φ/2)ξ²−(Φ/2)ξ) ]
//! N_θ = 1/(1+Φ) [ 6(ξ²−ξ)/L,  3ξ²−(4+Φ)ξ+1+Φ,  −6(ξ²−ξ)/L,  3ξ²−(2−Φ)ξ ]
//! ```
//!
//! The stiffness is the closed form (Przemieniecki, Theory of Matrix Structural Analysis, McGraw-Hill 1968)
//!
//! ```text
//! k = EI/((1+Φ)L³) [ 12, 6L, −12, 6L;  6L, (4+Φ)L², −6L, (2−Φ)L²;  −12, −6L, 12, −6L;  6L, (2−Φ)L², −6L, (4+Φ)L² ]
//! ```
//!
//! and the consistent mass is M = ∫₀ᴸ (ρA N_vᵀN_v + ρI N_θᵀN_θ) dx (translational and rotary inertia),
//! integrated exactly by 4-point Gauss quadrature (the integrand is a polynomial of degree 6). Axial
//! and torsion use linear interpolation: k = EA/L, GJ/L; m = ρAL/6 [2 1; 1 2], ρI_pL/6 [2 1; 1 2].
//! The lumped mass is the diagonal of the consistent one scaled to keep the element's mass in each
//! direction (Hinton, Rock & Zienkiewicz, Earthquake Eng. Struct. Dyn. 4, 1976, "HRZ" lumping).

use antinode_mesh::{MaterialProperties, SectionProperties};

/// A 12×12 element matrix, row-major.
pub type Mat12 = [[f64; 12]; 12];

/// Which mass matrix to build.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MassKind {
    /// Consistent mass with rotary inertia.
    Consistent,
    /// HRZ diagonal lumping of the consistent mass.
    Lumped,
}

/// Local bending stiffness of one plane, DOFs `[v1, θ1, v2, θ2]`, for bending stiffness `ei`
/// (N·m²), length `l` (m) and shear parameter `phi`.
pub fn bending_stiffness(ei: f64, l: f64, phi: f64) -> [[f64; 4]; 4] {
    let c = ei / ((1.0 + phi) * l.powi(3));
    let l2 = l * l;
    [
        [12.0 * c, 6.0 * l * c, -12.0 * c, 6.0 * l * c],
        [6.0 * l * c, (4.0 + phi) * l2 * c, -6.0 * l * c, (2.0 - phi) * l2 * c],
        [-12.0 * c, -6.0 * l * c, 12.0 * c, -6.0 * l * c],
        [6.0 * l * c, (2.0 - phi) * l2 * c, -6.0 * l * c, (4.0 + phi) * l2 * c],
    ]
}

/// Shape functions (N_v, N_θ) and their x-derivatives at ξ ∈ [0, 1] for length `l` and shear
/// parameter `phi`: returns `(n_v, n_theta, dn_v, dn_theta)`.
pub fn shape_functions(xi: f64, l: f64, phi: f64) -> ([f64; 4], [f64; 4], [f64; 4], [f64; 4]) {
    let s = 1.0 / (1.0 + phi);
    let (x, x2, x3) = (xi, xi * xi, xi * xi * xi);
    let nv = [
        s * (2.0 * x3 - 3.0 * x2 - phi * x + 1.0 + phi),
        s * l * (x3 - (2.0 + phi / 2.0) * x2 + (1.0 + phi / 2.0) * x),
        s * (-2.0 * x3 + 3.0 * x2 + phi * x),
        s * l * (x3 - (1.0 - phi / 2.0) * x2 - (phi / 2.0) * x),
    ];
    let nt = [
        s * 6.0 * (x2 - x) / l,
        s * (3.0 * x2 - (4.0 + phi) * x + 1.0 + phi),
        -s * 6.0 * (x2 - x) / l,
        s * (3.0 * x2 - (2.0 - phi) * x),
    ];
    // d/dx = (1/L) d/dξ
    let dnv = [
        s * (6.0 * x2 - 6.0 * x - phi) / l,
        s * (3.0 * x2 - 2.0 * (2.0 + phi / 2.0) * x + (1.0 + phi / 2.0)),
        s * (-6.0 * x2 + 6.0 * x + phi) / l,
        s * (3.0 * x2 - 2.0 * (1.0 - phi / 2.0) * x - phi / 2.0),
    ];
    let dnt = [
        s * 6.0 * (2.0 * x - 1.0) / (l * l),
        s * (6.0 * x - (4.0 + phi)) / l,
        -s * 6.0 * (2.0 * x - 1.0) / (l * l),
        s * (6.0 * x - (2.0 - phi)) / l,
    ];
    (nv, nt, dnv, dnt)
}

/// Gauss–Legendre points and weights on [0, 1], 4 points (exact to degree 7).
pub const GAUSS4: [(f64, f64); 4] = [
    (0.069_431_844_202_973_71, 0.173_927_422_568_726_93),
    (0.330_009_478_207_571_87, 0.326_072_577_431_273_07),
    (0.669_990_521_792_428_1, 0.326_072_577_431_273_07),
    (0.930_568_155_797_026_3, 0.173_927_422_568_726_93),
];

/// Consistent mass of one bending plane, DOFs `[v1, θ1, v2, θ2]`: ∫ (ρA N_vᵀN_v + ρI N_θᵀN_θ) dx.
pub fn bending_mass(rho_a: f64, rho_i: f64, l: f64, phi: f64) -> [[f64; 4]; 4] {
    let mut m = [[0.0; 4]; 4];
    for &(xi, w) in &GAUSS4 {
        let (nv, nt, _, _) = shape_functions(xi, l, phi);
        for i in 0..4 {
            for j in 0..4 {
                m[i][j] += w * l * (rho_a * nv[i] * nv[j] + rho_i * nt[i] * nt[j]);
            }
        }
    }
    m
}

fn shear_parameter(e: f64, i: f64, g: f64, shear_area: Option<f64>, l: f64) -> f64 {
    match shear_area {
        Some(a) => 12.0 * e * i / (g * a * l * l),
        None => 0.0,
    }
}

/// Stiffness and mass in local axes for a beam of length `l` (m).
pub fn local_matrices(l: f64, s: &SectionProperties, m: &MaterialProperties, kind: MassKind) -> (Mat12, Mat12) {
    let (e, g, rho) = (m.youngs_modulus, m.shear_modulus, m.density);
    let mut k = [[0.0; 12]; 12];
    let mut mm = [[0.0; 12]; 12];
    // Axial (0, 6) and torsion (3, 9).
    let ka = e * s.area / l;
    let kt = g * s.torsion_constant / l;
    let ma = rho * s.area * l / 6.0;
    let mt = rho * s.polar_moment * l / 6.0;
    for (a, b, kv, mv) in [(0, 6, ka, ma), (3, 9, kt, mt)] {
        k[a][a] += kv;
        k[b][b] += kv;
        k[a][b] -= kv;
        k[b][a] -= kv;
        mm[a][a] += 2.0 * mv;
        mm[b][b] += 2.0 * mv;
        mm[a][b] += mv;
        mm[b][a] += mv;
    }
    // Bending in x-y: (v, θz) = DOFs (1, 5, 7, 11), sign +.
    let phi_y = shear_parameter(e, s.second_moment_z, g, s.shear_area_y, l);
    let kb = bending_stiffness(e * s.second_moment_z, l, phi_y);
    let mb = bending_mass(rho * s.area, rho * s.second_moment_z, l, phi_y);
    scatter4(&mut k, &mut mm, &kb, &mb, [1, 5, 7, 11], [1.0, 1.0, 1.0, 1.0]);
    // Bending in x-z: (w, θy) = DOFs (2, 4, 8, 10), with θy = −dw/dx.
    let phi_z = shear_parameter(e, s.second_moment_y, g, s.shear_area_z, l);
    let kb = bending_stiffness(e * s.second_moment_y, l, phi_z);
    let mb = bending_mass(rho * s.area, rho * s.second_moment_y, l, phi_z);
    scatter4(&mut k, &mut mm, &kb, &mb, [2, 4, 8, 10], [1.0, -1.0, 1.0, -1.0]);
    if kind == MassKind::Lumped {
        mm = lump_hrz(&mm, rho * s.area * l, rho * s.polar_moment * l);
    }
    (k, mm)
}

fn scatter4(k: &mut Mat12, m: &mut Mat12, kb: &[[f64; 4]; 4], mb: &[[f64; 4]; 4], dofs: [usize; 4], sign: [f64; 4]) {
    for i in 0..4 {
        for j in 0..4 {
            let s = sign[i] * sign[j];
            k[dofs[i]][dofs[j]] += s * kb[i][j];
            m[dofs[i]][dofs[j]] += s * mb[i][j];
        }
    }
}

/// HRZ lumping: keep the diagonal, scaled per field so that the translational diagonal of each
/// direction sums to the element mass `mass` and the torsional one to `torsion_inertia`.
fn lump_hrz(m: &Mat12, mass: f64, torsion_inertia: f64) -> Mat12 {
    let mut out = [[0.0; 12]; 12];
    // Fields: (translation DOFs, DOFs scaled with them, total).
    let fields: [(&[usize], &[usize], f64); 4] = [
        (&[0, 6], &[0, 6], mass),
        (&[1, 7], &[1, 7, 5, 11], mass),
        (&[2, 8], &[2, 8, 4, 10], mass),
        (&[3, 9], &[3, 9], torsion_inertia),
    ];
    for (basis, scaled, total) in fields {
        let sum: f64 = basis.iter().map(|&i| m[i][i]).sum();
        let c = if sum > 0.0 { total / sum } else { 0.0 };
        for &i in scaled {
            out[i][i] = c * m[i][i];
        }
    }
    out
}

/// Rotation from global to local axes: rows are the local x, y, z unit vectors in global
/// coordinates. `orientation` must not be parallel to `b − a` (checked in the mesh crate).
pub fn rotation(a: [f64; 3], b: [f64; 3], orientation: [f64; 3]) -> [[f64; 3]; 3] {
    let d = [b[0] - a[0], b[1] - a[1], b[2] - a[2]];
    let ex = normalise(d);
    let dot = orientation[0] * ex[0] + orientation[1] * ex[1] + orientation[2] * ex[2];
    let ey = normalise([orientation[0] - dot * ex[0], orientation[1] - dot * ex[1], orientation[2] - dot * ex[2]]);
    let ez = [ex[1] * ey[2] - ex[2] * ey[1], ex[2] * ey[0] - ex[0] * ey[2], ex[0] * ey[1] - ex[1] * ey[0]];
    [ex, ey, ez]
}

fn normalise(v: [f64; 3]) -> [f64; 3] {
    let n = (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
    [v[0] / n, v[1] / n, v[2] / n]
}

/// Transforms a local 12×12 matrix to global axes: Tᵀ A T with T = diag(R, R, R, R).
pub fn to_global(a: &Mat12, r: &[[f64; 3]; 3]) -> Mat12 {
    // B = A T, then C = Tᵀ B; T is block diagonal so work block by block.
    let mut b = [[0.0; 12]; 12];
    for i in 0..12 {
        for bj in 0..4 {
            for j in 0..3 {
                let mut s = 0.0;
                for k in 0..3 {
                    s += a[i][3 * bj + k] * r[k][j];
                }
                b[i][3 * bj + j] = s;
            }
        }
    }
    let mut c = [[0.0; 12]; 12];
    for bi in 0..4 {
        for i in 0..3 {
            for j in 0..12 {
                let mut s = 0.0;
                for k in 0..3 {
                    s += r[k][i] * b[3 * bi + k][j];
                }
                c[3 * bi + i][j] = s;
            }
        }
    }
    c
}

/// Global stiffness and mass of a beam from node `a` to node `b`.
pub fn global_matrices(
    a: [f64; 3],
    b: [f64; 3],
    orientation: [f64; 3],
    s: &SectionProperties,
    m: &MaterialProperties,
    kind: MassKind,
) -> (Mat12, Mat12) {
    let l = ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2) + (b[2] - a[2]).powi(2)).sqrt();
    let (k, mm) = local_matrices(l, s, m, kind);
    let r = rotation(a, b, orientation);
    (to_global(&k, &r), to_global(&mm, &r))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn steel() -> MaterialProperties {
        MaterialProperties { youngs_modulus: 2.1e11, shear_modulus: 2.1e11 / 2.6, poisson_ratio: 0.3, density: 7850.0 }
    }

    fn tube(shear: bool) -> SectionProperties {
        let (ro, ri) = (0.05f64, 0.045f64);
        let a = std::f64::consts::PI * (ro * ro - ri * ri);
        let i = std::f64::consts::PI * (ro.powi(4) - ri.powi(4)) / 4.0;
        SectionProperties {
            area: a,
            second_moment_y: i,
            second_moment_z: i,
            torsion_constant: 2.0 * i,
            polar_moment: 2.0 * i,
            shear_area_y: shear.then_some(0.53 * a),
            shear_area_z: shear.then_some(0.53 * a),
        }
    }

    fn close(a: f64, b: f64, tol: f64) -> bool {
        (a - b).abs() <= tol * (1.0 + a.abs().max(b.abs()))
    }

    #[test]
    fn euler_bernoulli_mass_is_the_textbook_matrix() {
        // Consistent mass ρAL/420 [156, 22L, 54, −13L; ...] (Przemieniecki 1968; Cook et al.,
        // Concepts and Applications of FEA), plus rotary inertia ρI/(30L) [36, 3L, −36, 3L; ...].
        let (ra, ri, l) = (2.0, 0.0, 0.7);
        let m = bending_mass(ra, ri, l, 0.0);
        let c = ra * l / 420.0;
        let want = [
            [156.0, 22.0 * l, 54.0, -13.0 * l],
            [22.0 * l, 4.0 * l * l, 13.0 * l, -3.0 * l * l],
            [54.0, 13.0 * l, 156.0, -22.0 * l],
            [-13.0 * l, -3.0 * l * l, -22.0 * l, 4.0 * l * l],
        ];
        for i in 0..4 {
            for j in 0..4 {
                assert!(close(m[i][j], c * want[i][j], 1e-13), "{i} {j}");
            }
        }
        let m = bending_mass(0.0, 3.0, l, 0.0);
        let c = 3.0 / (30.0 * l);
        let want = [
            [36.0, 3.0 * l, -36.0, 3.0 * l],
            [3.0 * l, 4.0 * l * l, -3.0 * l, -l * l],
            [-36.0, -3.0 * l, 36.0, -3.0 * l],
            [3.0 * l, -l * l, -3.0 * l, 4.0 * l * l],
        ];
        for i in 0..4 {
            for j in 0..4 {
                assert!(close(m[i][j], c * want[i][j], 1e-13), "{i} {j}");
            }
        }
    }

    #[test]
    fn stiffness_closed_form_equals_energy_of_shape_functions() {
        // ∫ EI N_θ'ᵀN_θ' + κGA (N_v' − N_θ)ᵀ(N_v' − N_θ) dx must equal the closed form.
        let (ei, kga, l) = (3.0e4, 2.0e6, 0.4);
        let phi = 12.0 * ei / (kga * l * l);
        let k = bending_stiffness(ei, l, phi);
        let mut e = [[0.0; 4]; 4];
        for &(xi, w) in &GAUSS4 {
            let (_, nt, dnv, dnt) = shape_functions(xi, l, phi);
            for i in 0..4 {
                for j in 0..4 {
                    e[i][j] += w * l * (ei * dnt[i] * dnt[j] + kga * (dnv[i] - nt[i]) * (dnv[j] - nt[j]));
                }
            }
        }
        for i in 0..4 {
            for j in 0..4 {
                assert!(close(k[i][j], e[i][j], 1e-12), "{i} {j}: {} {}", k[i][j], e[i][j]);
            }
        }
    }

    #[test]
    fn free_element_has_six_rigid_modes_and_keeps_mass() {
        for kind in [MassKind::Consistent, MassKind::Lumped] {
            for shear in [false, true] {
                let (k, m) =
                    global_matrices([0.1, 0.2, 0.3], [0.5, -0.1, 0.9], [0.0, 0.0, 1.0], &tube(shear), &steel(), kind);
                // Rigid motions: translations and small rotations about the origin.
                let pts = [[0.1, 0.2, 0.3], [0.5, -0.1, 0.9]];
                let mut modes = Vec::new();
                for d in 0..3 {
                    let mut u = [0.0; 12];
                    u[d] = 1.0;
                    u[6 + d] = 1.0;
                    modes.push(u);
                }
                for axis in 0..3 {
                    let mut w = [0.0; 3];
                    w[axis] = 1.0;
                    let mut u = [0.0; 12];
                    for (n, p) in pts.iter().enumerate() {
                        let v = [w[1] * p[2] - w[2] * p[1], w[2] * p[0] - w[0] * p[2], w[0] * p[1] - w[1] * p[0]];
                        for c in 0..3 {
                            u[6 * n + c] = v[c];
                            u[6 * n + 3 + c] = w[c];
                        }
                    }
                    modes.push(u);
                }
                let scale = k.iter().flatten().fold(0.0f64, |a, &b| a.max(b.abs()));
                for u in &modes {
                    for row in &k {
                        let f: f64 = row.iter().zip(u).map(|(a, b)| a * b).sum();
                        assert!(f.abs() < 1e-9 * scale, "rigid motion strains the element: {f}");
                    }
                }
                // Translation kinetic energy gives the element mass.
                let l = (0.4f64 * 0.4 + 0.3 * 0.3 + 0.6 * 0.6).sqrt();
                let mass = 7850.0 * tube(shear).area * l;
                for u in modes.iter().take(3) {
                    let mu: f64 = (0..12).map(|i| (0..12).map(|j| u[i] * m[i][j] * u[j]).sum::<f64>()).sum();
                    assert!(close(mu, mass, 1e-12), "{mu} vs {mass}");
                }
                // Exactly six zero-energy modes: the other six eigenvalues of K are clearly positive.
                let kmat = faer::Mat::from_fn(12, 12, |i, j| k[i][j]);
                let mut ev = kmat.self_adjoint_eigenvalues(faer::Side::Lower).unwrap_or_default();
                ev.sort_by(f64::total_cmp);
                assert_eq!(ev.len(), 12);
                assert!(ev[5].abs() < 1e-9 * scale && ev[6] > 1e-6 * scale, "zero-energy count: {ev:?}");
                // Positive definite mass.
                let mmat = faer::Mat::from_fn(12, 12, |i, j| m[i][j]);
                let mev = mmat.self_adjoint_eigenvalues(faer::Side::Lower).unwrap_or_default();
                assert!(mev.iter().all(|&v| v > 0.0), "mass not positive definite: {mev:?}");
                // Symmetry.
                for i in 0..12 {
                    for j in 0..12 {
                        assert!((k[i][j] - k[j][i]).abs() <= 1e-9 * scale);
                        assert!((m[i][j] - m[j][i]).abs() <= 1e-12 * mass);
                    }
                }
            }
        }
    }
}
