//! Shape measures of shell elements, their thresholds, and the checks that reject unusable shapes.
//!
//! Definitions (for a quadrilateral a-b-c-d; a triangle has no warp):
//! - **area**: ½ |(c − a) × (d − b)| for a quadrilateral (the area of its projection on the mean
//!   plane, the plane normal to the cross product of the diagonals), ½ |(b − a) × (c − a)| for a
//!   triangle, in m².
//! - **aspect ratio**: longest side / shortest side for a quadrilateral; for a triangle, longest
//!   side / (2/√3 · shortest altitude), so an equilateral triangle has 1.
//! - **warp**: the largest angle between the normals of the two triangles of either diagonal split,
//!   in degrees (0 for a flat quadrilateral).
//! - **skew**: for a quadrilateral, 90° minus the smaller angle between the two lines joining
//!   midpoints of opposite sides; for a triangle, 60° minus its smallest interior angle.
//! - **Jacobian ratio**: the smallest corner value of (e_in × e_out) · n over the largest, with n the
//!   mean-plane normal; 1 for a parallelogram, ≤ 0 for a bow-tie or re-entrant (non-convex) corner.
//!   The bilinear map of a quadrilateral is invertible exactly when every corner value is positive.
//!
//! Thresholds are common practice for thin flat shells (warnings, the results stay usable but lose
//! accuracy): aspect ratio above 5, warp above 10°, skew above 45°, Jacobian ratio below 0.2.

use crate::structure::distance;

/// Aspect ratio above which a shell is reported (common practice).
pub const ASPECT_RATIO_WARNING: f64 = 5.0;
/// Warp angle above which a shell is reported, in degrees (common practice).
pub const WARP_WARNING_DEG: f64 = 10.0;
/// Skew angle above which a shell is reported, in degrees (common practice).
pub const SKEW_WARNING_DEG: f64 = 45.0;
/// Jacobian ratio below which a shell is reported (common practice).
pub const JACOBIAN_RATIO_WARNING: f64 = 0.2;

/// Shape measures of one shell element (see the module docs for definitions).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ShellShape {
    /// Area, in m².
    pub area: f64,
    /// Unit normal by the right-hand rule of the node order.
    pub normal: [f64; 3],
    /// Longest side / shortest side (quadrilateral) or its triangle equivalent.
    pub aspect_ratio: f64,
    /// Warp angle, in degrees.
    pub warp_deg: f64,
    /// Skew angle, in degrees.
    pub skew_deg: f64,
    /// Smallest over largest corner Jacobian.
    pub jacobian_ratio: f64,
    /// Shortest side, in m.
    pub shortest_side: f64,
    /// Centroid of the element's area, in m.
    pub centroid: [f64; 3],
}

/// Why a shell's shape cannot be used.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ShapeDefect {
    /// Two corners at the same point.
    CoincidentNodes,
    /// Zero area: the corners lie on one line.
    Collinear,
    /// A bow-tie or re-entrant corner (a corner Jacobian ≤ 0).
    Inverted,
}

impl std::fmt::Display for ShapeDefect {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            Self::CoincidentNodes => "two of its corners are at the same point",
            Self::Collinear => "its corners lie on one line (zero area)",
            Self::Inverted => {
                "it is inverted: a bow-tie or re-entrant corner (the node order must run around the element)"
            }
        })
    }
}

pub(crate) fn sub(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

pub(crate) fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]
}

pub(crate) fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

pub(crate) fn norm(a: [f64; 3]) -> f64 {
    dot(a, a).sqrt()
}

fn angle_deg(a: [f64; 3], b: [f64; 3]) -> f64 {
    let c = dot(a, b) / (norm(a) * norm(b));
    c.clamp(-1.0, 1.0).acos().to_degrees()
}

/// Shape measures of a shell with corners `xyz` (3 or 4 points).
///
/// # Errors
/// The [`ShapeDefect`] of a shape no element can be built on. Tolerances are relative to the
/// longest side: sides shorter than 1e-9 of it are coincident corners, an area below 1e-10 of its
/// square is collinear.
pub fn shell_shape(xyz: &[[f64; 3]]) -> Result<ShellShape, ShapeDefect> {
    let n = xyz.len();
    let sides: Vec<f64> = (0..n).map(|i| distance(xyz[i], xyz[(i + 1) % n])).collect();
    let longest = sides.iter().copied().fold(0.0, f64::max);
    let shortest = sides.iter().copied().fold(f64::INFINITY, f64::min);
    let diagonal_min = if n == 4 { distance(xyz[0], xyz[2]).min(distance(xyz[1], xyz[3])) } else { f64::INFINITY };
    if longest.is_nan() || longest <= 0.0 || shortest <= 1e-9 * longest || diagonal_min <= 1e-9 * longest {
        return Err(ShapeDefect::CoincidentNodes);
    }
    let c = if n == 4 {
        cross(sub(xyz[2], xyz[0]), sub(xyz[3], xyz[1]))
    } else {
        cross(sub(xyz[1], xyz[0]), sub(xyz[2], xyz[0]))
    };
    let area = 0.5 * norm(c);
    if area.is_nan() || area <= 1e-10 * longest * longest {
        // A quadrilateral whose halves have area but whose projected area vanishes is a bow-tie.
        let half = |a: usize, b: usize, c: usize| 0.5 * norm(cross(sub(xyz[b], xyz[a]), sub(xyz[c], xyz[a])));
        if n == 4 && half(0, 1, 2).max(half(0, 2, 3)) > 1e-10 * longest * longest {
            return Err(ShapeDefect::Inverted);
        }
        return Err(ShapeDefect::Collinear);
    }
    let normal = c.map(|v| v / (2.0 * area));
    // Corner Jacobians (e_in × e_out) · n.
    let corners: Vec<f64> = (0..n)
        .map(|i| {
            let prev = xyz[(i + n - 1) % n];
            let next = xyz[(i + 1) % n];
            dot(cross(sub(xyz[i], prev), sub(next, xyz[i])), normal)
        })
        .collect();
    let jmax = corners.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let jmin = corners.iter().copied().fold(f64::INFINITY, f64::min);
    if n == 3 {
        // A triangle cannot be re-entrant; its corner values are all 2 × area.
        let angles: Vec<f64> =
            (0..3).map(|i| angle_deg(sub(xyz[(i + 1) % 3], xyz[i]), sub(xyz[(i + 2) % 3], xyz[i]))).collect();
        let min_angle = angles.iter().copied().fold(f64::INFINITY, f64::min);
        let altitude = 2.0 * area / longest;
        let centroid = [0, 1, 2].map(|k| (xyz[0][k] + xyz[1][k] + xyz[2][k]) / 3.0);
        return Ok(ShellShape {
            area,
            normal,
            aspect_ratio: longest / (2.0 / 3f64.sqrt() * altitude),
            warp_deg: 0.0,
            skew_deg: (60.0 - min_angle).max(0.0),
            jacobian_ratio: 1.0,
            shortest_side: shortest,
            centroid,
        });
    }
    if jmin <= 1e-12 * jmax.abs().max(longest * longest) {
        return Err(ShapeDefect::Inverted);
    }
    let tri_normal = |a: usize, b: usize, c: usize| cross(sub(xyz[b], xyz[a]), sub(xyz[c], xyz[a]));
    let warp1 = angle_deg(tri_normal(0, 1, 2), tri_normal(0, 2, 3));
    let warp2 = angle_deg(tri_normal(1, 2, 3), tri_normal(1, 3, 0));
    let mid = |i: usize| [0, 1, 2].map(|k| 0.5 * (xyz[i][k] + xyz[(i + 1) % 4][k]));
    let (m1, m2) = (sub(mid(1), mid(3)), sub(mid(2), mid(0)));
    let theta = angle_deg(m1, m2);
    let skew = 90.0 - theta.min(180.0 - theta);
    // Centroid: area-weighted centroids of the triangles a-b-c and a-c-d.
    let t1 = 0.5 * norm(tri_normal(0, 1, 2));
    let t2 = 0.5 * norm(tri_normal(0, 2, 3));
    let centroid = [0, 1, 2].map(|k| {
        (t1 * (xyz[0][k] + xyz[1][k] + xyz[2][k]) + t2 * (xyz[0][k] + xyz[2][k] + xyz[3][k])) / (3.0 * (t1 + t2))
    });
    Ok(ShellShape {
        area,
        normal,
        aspect_ratio: longest / shortest,
        warp_deg: warp1.max(warp2),
        skew_deg: skew,
        jacobian_ratio: jmin / jmax,
        shortest_side: shortest,
        centroid,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, tol: f64) -> bool {
        (a - b).abs() <= tol * b.abs().max(1.0)
    }

    #[test]
    fn unit_square_is_perfect() {
        let s = shell_shape(&[[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [1.0, 1.0, 0.0], [0.0, 1.0, 0.0]]);
        let Ok(s) = s else { panic!("a square is valid") };
        assert!(close(s.area, 1.0, 1e-15));
        assert_eq!(s.normal, [0.0, 0.0, 1.0]);
        assert!(close(s.aspect_ratio, 1.0, 1e-15) && s.warp_deg == 0.0 && s.skew_deg.abs() < 1e-12);
        assert!(close(s.jacobian_ratio, 1.0, 1e-15));
        assert!(close(s.centroid[0], 0.5, 1e-15) && close(s.centroid[1], 0.5, 1e-15));
    }

    #[test]
    fn measures_of_distorted_shapes() {
        // A parallelogram with side vectors (2, 0) and (1, 1): its midlines run along the sides, 45°
        // apart, so the skew is 90° − 45°.
        let p = shell_shape(&[[0.0, 0.0, 0.0], [2.0, 0.0, 0.0], [3.0, 1.0, 0.0], [1.0, 1.0, 0.0]]);
        let Ok(p) = p else { panic!("a parallelogram is valid") };
        assert!(close(p.area, 2.0, 1e-14));
        assert!(close(p.aspect_ratio, 2.0 / 2f64.sqrt(), 1e-14));
        assert!(close(p.skew_deg, 45.0, 1e-12), "skew {}", p.skew_deg);
        assert!(close(p.jacobian_ratio, 1.0, 1e-14));
        // Lifting one corner warps the element.
        let w = shell_shape(&[[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [1.0, 1.0, 0.2], [0.0, 1.0, 0.0]]);
        let Ok(w) = w else { panic!("a warped quad is valid") };
        assert!(w.warp_deg > 10.0 && w.warp_deg < 20.0, "warp {}", w.warp_deg);
        // Equilateral triangle.
        let t = shell_shape(&[[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [0.5, 3f64.sqrt() / 2.0, 0.0]]);
        let Ok(t) = t else { panic!("a triangle is valid") };
        assert!(close(t.aspect_ratio, 1.0, 1e-14) && t.skew_deg.abs() < 1e-9);
    }

    #[test]
    fn rejects_unusable_shapes() {
        let z = [0.0, 0.0, 0.0];
        assert_eq!(
            shell_shape(&[z, [1.0, 0.0, 0.0], [1.0, 0.0, 0.0], [0.0, 1.0, 0.0]]),
            Err(ShapeDefect::CoincidentNodes)
        );
        assert_eq!(shell_shape(&[z, [1.0, 0.0, 0.0], [2.0, 0.0, 0.0]]), Err(ShapeDefect::Collinear));
        assert_eq!(shell_shape(&[z, [1.0, 0.0, 0.0], [2.0, 0.0, 0.0], [3.0, 0.0, 0.0]]), Err(ShapeDefect::Collinear));
        // Bow-tie (nodes 3 and 4 swapped) and a re-entrant (arrow-head) quadrilateral.
        assert_eq!(shell_shape(&[z, [1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [1.0, 1.0, 0.0]]), Err(ShapeDefect::Inverted));
        assert_eq!(shell_shape(&[z, [2.0, 0.0, 0.0], [0.5, 1.5, 0.0], [1.8, 1.1, 0.0]]), Err(ShapeDefect::Inverted));
        assert_eq!(shell_shape(&[z, [2.0, 0.0, 0.0], [0.5, 0.5, 0.0], [0.0, 2.0, 0.0]]), Err(ShapeDefect::Inverted));
    }
}
