//! Structured shell meshes for the reference tests (test-only builders of model JSON): rectangular
//! plates in the X-Y plane and circular tubes along X.

use serde_json::{Value, json};

/// Support of one plate edge.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Edge {
    /// Nothing fixed.
    Free,
    /// Simply supported: w = 0 and no rotation about the edge normal in the plate plane ("hard"
    /// simple support, the Kirchhoff condition w = 0 along the edge).
    Simple,
    /// All six DOFs fixed.
    Clamped,
}

/// Element shape of a structured mesh.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Cells {
    /// Quadrilaterals.
    Quads,
    /// Each quadrilateral cut into two triangles, diagonals alternating.
    Triangles,
}

fn material(e: f64, nu: f64, rho: f64) -> Value {
    json!({"youngs_modulus": e, "poisson_ratio": nu, "density": rho})
}

fn push_cells(shells: &mut Vec<Value>, cells: Cells, quad: [u64; 4], flip: bool, t: f64) {
    let next = shells.len() as u64 + 1;
    match cells {
        Cells::Quads => shells.push(json!({"id": next, "nodes": quad, "thickness": t, "material": "m"})),
        Cells::Triangles => {
            let [a, b, c, d] = quad;
            let (t1, t2) = if flip { ([a, b, d], [b, c, d]) } else { ([a, b, c], [a, c, d]) };
            shells.push(json!({"id": next, "nodes": t1, "thickness": t, "material": "m"}));
            shells.push(json!({"id": next + 1, "nodes": t2, "thickness": t, "material": "m"}));
        }
    }
}

/// A plate a × b × t in the X-Y plane on an nx × ny grid; `edges` for x = 0, x = a, y = 0, y = b.
/// In-plane motion (ux, uy, rz) is fixed on every supported edge node; membrane and bending do not
/// couple in a flat plate, so this only removes in-plane rigid motion.
#[allow(clippy::too_many_arguments)]
pub fn plate(
    a: f64,
    b: f64,
    t: f64,
    (e, nu, rho): (f64, f64, f64),
    nx: usize,
    ny: usize,
    edges: [Edge; 4],
    cells: Cells,
) -> String {
    let id = |i: usize, j: usize| (j * (nx + 1) + i + 1) as u64;
    let mut nodes = Vec::new();
    for j in 0..=ny {
        for i in 0..=nx {
            nodes.push(json!({"id": id(i, j), "xyz": [a * i as f64 / nx as f64, b * j as f64 / ny as f64, 0.0]}));
        }
    }
    let mut shells = Vec::new();
    for j in 0..ny {
        for i in 0..nx {
            push_cells(
                &mut shells,
                cells,
                [id(i, j), id(i + 1, j), id(i + 1, j + 1), id(i, j + 1)],
                (i + j) % 2 == 1,
                t,
            );
        }
    }
    let mut supports = Vec::new();
    for j in 0..=ny {
        for i in 0..=nx {
            // Which edges this node lies on, and the rotation that w = 0 along each edge forbids.
            let on = [(i == 0, "rx"), (i == nx, "rx"), (j == 0, "ry"), (j == ny, "ry")];
            let mut fixed: Vec<&str> = Vec::new();
            for (k, (is_on, rot)) in on.iter().enumerate() {
                if !is_on {
                    continue;
                }
                match edges[k] {
                    Edge::Free => {}
                    Edge::Simple => fixed.extend(["ux", "uy", "uz", "rz", rot]),
                    Edge::Clamped => fixed.extend(["ux", "uy", "uz", "rx", "ry", "rz"]),
                }
            }
            fixed.sort_unstable();
            fixed.dedup();
            if !fixed.is_empty() {
                supports.push(json!({"at": {"node": id(i, j)}, "fixed": fixed}));
            }
        }
    }
    let model = json!({
        "title": "test plate",
        "materials": {"m": material(e, nu, rho)},
        "nodes": nodes,
        "shells": shells,
        "supports": supports,
    });
    serde_json::to_string(&model).expect("JSON")
}

/// Ends of a tube.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TubeEnds {
    /// Nothing held: six rigid-body modes.
    Free,
    /// Shear diaphragm: radial and tangential displacement zero on both end circles, axial
    /// displacement and rotations free. The rigid axial translation remains (one zero mode, stated
    /// as `rigid_body_modes`): fixing ux at one node instead would split the cos nθ / sin nθ pairs.
    Diaphragm,
}

/// A tube of mid-surface radius `r`, length `l` along X, wall `t`, with `nc` elements around and
/// `nl` along; node order of each element counter-clockwise seen from outside.
#[allow(clippy::too_many_arguments)]
pub fn tube(
    r: f64,
    l: f64,
    t: f64,
    (e, nu, rho): (f64, f64, f64),
    nc: usize,
    nl: usize,
    ends: TubeEnds,
    cells: Cells,
) -> String {
    let id = |k: usize, j: usize| (j * nc + (k % nc) + 1) as u64;
    let mut nodes = Vec::new();
    for j in 0..=nl {
        for k in 0..nc {
            let th = 2.0 * std::f64::consts::PI * k as f64 / nc as f64;
            nodes.push(json!({"id": id(k, j), "xyz": [l * j as f64 / nl as f64, r * th.cos(), r * th.sin()]}));
        }
    }
    let mut shells = Vec::new();
    for j in 0..nl {
        for k in 0..nc {
            // θ then x: e_θ × e_x = e_r, an outward normal.
            push_cells(
                &mut shells,
                cells,
                [id(k, j), id(k + 1, j), id(k + 1, j + 1), id(k, j + 1)],
                (k + j) % 2 == 1,
                t,
            );
        }
    }
    let mut supports = Vec::new();
    if ends == TubeEnds::Diaphragm {
        // Radial and tangential displacements lie in the Y-Z plane of an end circle: fix uy and uz.
        for j in [0, nl] {
            for k in 0..nc {
                supports.push(json!({"at": {"node": id(k, j)}, "fixed": ["uy", "uz"]}));
            }
        }
    }
    let mut model = json!({
        "title": "test tube",
        "materials": {"m": material(e, nu, rho)},
        "nodes": nodes,
        "shells": shells,
        "supports": supports,
    });
    if ends == TubeEnds::Diaphragm {
        model["rigid_body_modes"] = json!(1);
    }
    serde_json::to_string(&model).expect("JSON")
}

/// Dominant circumferential wave number (0 to 8) of the radial displacement on one ring of `n`
/// nodes at angles 2πk/n from +Y towards +Z (a tube along X), by a discrete Fourier transform.
pub fn wave_number(ring: &[[f64; 6]]) -> usize {
    let n = ring.len();
    let radial: Vec<f64> = (0..n)
        .map(|k| {
            let th = 2.0 * std::f64::consts::PI * k as f64 / n as f64;
            ring[k][1] * th.cos() + ring[k][2] * th.sin()
        })
        .collect();
    let power = |m: usize| {
        let (mut c, mut s) = (0.0, 0.0);
        for (k, u) in radial.iter().enumerate() {
            let a = 2.0 * std::f64::consts::PI * (m * k) as f64 / n as f64;
            c += u * a.cos();
            s += u * a.sin();
        }
        c * c + s * s
    };
    (0..=8).max_by(|&a, &b| power(a).total_cmp(&power(b))).unwrap_or(0)
}
