//! Cross-section properties from dimensions.
//!
//! Local axes: x along the beam; a `height` runs along local y and a `width` along local z.
//! `second_moment_z` (about local z) governs bending in the local x-y plane.

use std::f64::consts::PI;

use serde::Serialize;

use crate::model::Section;

/// Properties of a beam cross-section, in SI units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SectionProperties {
    /// Area, in m².
    pub area: f64,
    /// Second moment of area about local y, in m⁴.
    pub second_moment_y: f64,
    /// Second moment of area about local z, in m⁴.
    pub second_moment_z: f64,
    /// Saint-Venant torsion constant J, in m⁴.
    pub torsion_constant: f64,
    /// Polar moment of area used for torsional inertia, in m⁴.
    pub polar_moment: f64,
    /// Effective shear area for shear along local y, in m² (`None`: no shear deformation).
    pub shear_area_y: Option<f64>,
    /// Effective shear area for shear along local z, in m² (`None`: no shear deformation).
    pub shear_area_z: Option<f64>,
}

/// Properties of `section` for a material of Poisson's ratio `poisson_ratio` (which enters only the
/// shear coefficients).
///
/// Formulas:
/// - circle of diameter d: A = πd²/4, I = πd⁴/64, J = πd⁴/32.
/// - circular tube (r_o, r_i): A = π(r_o² − r_i²), I = π(r_o⁴ − r_i⁴)/4, J = π(r_o⁴ − r_i⁴)/2 (exact).
/// - rectangle (b along z, h along y): A = bh, I_z = bh³/12, I_y = hb³/12, and the Saint-Venant series
///   J = (a c³/3) [1 − (192/π⁵)(c/a) Σ_{n odd} tanh(nπa/2c)/n⁵], a ≥ c the side lengths
///   (Timoshenko & Goodier, Theory of Elasticity, torsion of a rectangular bar).
/// - rectangular tube: A, I by subtraction; J by Bredt's thin-wall formula J = 4A_m² t / s with the
///   mid-line area A_m = (b − t)(h − t) and perimeter s = 2[(b − t) + (h − t)].
/// - shear coefficients κ (shear area κA): Cowper, "The shear coefficient in Timoshenko's beam theory",
///   J. Appl. Mech. 33(2), 1966: solid circle 6(1+ν)/(7+6ν); hollow circle with m = r_i/r_o
///   6(1+ν)(1+m²)² / [(7+6ν)(1+m²)² + (20+12ν)m²]; rectangle 10(1+ν)/(12+11ν). Rectangular tube: the
///   wall area parallel to the shear, 2t(h − t) and 2t(b − t) (common practice).
///
/// Dimensions must already be validated (positive, wall thinner than half the outer size).
pub fn section_properties(section: &Section, poisson_ratio: f64) -> SectionProperties {
    let nu = poisson_ratio;
    match section {
        Section::Circle(c) => {
            let d = c.diameter;
            let area = PI * d * d / 4.0;
            let i = PI * d.powi(4) / 64.0;
            let kappa = 6.0 * (1.0 + nu) / (7.0 + 6.0 * nu);
            let shear = c.shear_deformation.then_some(kappa * area);
            SectionProperties {
                area,
                second_moment_y: i,
                second_moment_z: i,
                torsion_constant: 2.0 * i,
                polar_moment: 2.0 * i,
                shear_area_y: shear,
                shear_area_z: shear,
            }
        }
        Section::CircularTube(t) => {
            let ro = t.outer_diameter / 2.0;
            let ri = ro - t.wall_thickness;
            let area = PI * (ro * ro - ri * ri);
            let i = PI * (ro.powi(4) - ri.powi(4)) / 4.0;
            let m2 = (ri / ro).powi(2);
            let kappa = 6.0 * (1.0 + nu) * (1.0 + m2).powi(2)
                / ((7.0 + 6.0 * nu) * (1.0 + m2).powi(2) + (20.0 + 12.0 * nu) * m2);
            let shear = t.shear_deformation.then_some(kappa * area);
            SectionProperties {
                area,
                second_moment_y: i,
                second_moment_z: i,
                torsion_constant: 2.0 * i,
                polar_moment: 2.0 * i,
                shear_area_y: shear,
                shear_area_z: shear,
            }
        }
        Section::Rectangle(r) => {
            let (b, h) = (r.width, r.height);
            let area = b * h;
            let kappa = 10.0 * (1.0 + nu) / (12.0 + 11.0 * nu);
            let shear = r.shear_deformation.then_some(kappa * area);
            SectionProperties {
                area,
                second_moment_y: h * b.powi(3) / 12.0,
                second_moment_z: b * h.powi(3) / 12.0,
                torsion_constant: rectangle_torsion_constant(b, h),
                polar_moment: b * h * (b * b + h * h) / 12.0,
                shear_area_y: shear,
                shear_area_z: shear,
            }
        }
        Section::RectangularTube(r) => {
            let (b, h, t) = (r.width, r.height, r.wall_thickness);
            let (bi, hi) = (b - 2.0 * t, h - 2.0 * t);
            let area = b * h - bi * hi;
            let iz = (b * h.powi(3) - bi * hi.powi(3)) / 12.0;
            let iy = (h * b.powi(3) - hi * bi.powi(3)) / 12.0;
            let (bm, hm) = (b - t, h - t);
            let j = 2.0 * t * bm * bm * hm * hm / (bm + hm);
            SectionProperties {
                area,
                second_moment_y: iy,
                second_moment_z: iz,
                torsion_constant: j,
                polar_moment: iy + iz,
                shear_area_y: r.shear_deformation.then_some(2.0 * t * hm),
                shear_area_z: r.shear_deformation.then_some(2.0 * t * bm),
            }
        }
        Section::Properties(p) => SectionProperties {
            area: p.area,
            second_moment_y: p.second_moment_y,
            second_moment_z: p.second_moment_z,
            torsion_constant: p.torsion_constant,
            polar_moment: p.polar_moment.unwrap_or(p.second_moment_y + p.second_moment_z),
            shear_area_y: p.shear_area_y,
            shear_area_z: p.shear_area_z,
        },
    }
}

/// Saint-Venant torsion constant of a solid rectangle with sides `b` and `h`, in m⁴ (series of
/// Timoshenko & Goodier; 20 odd terms reach machine precision for any aspect ratio).
fn rectangle_torsion_constant(b: f64, h: f64) -> f64 {
    let (a, c) = if b >= h { (b, h) } else { (h, b) };
    let sum: f64 = (0..20)
        .map(|k| {
            let n = (2 * k + 1) as f64;
            (n * PI * a / (2.0 * c)).tanh() / n.powi(5)
        })
        .sum();
    a * c.powi(3) / 3.0 * (1.0 - 192.0 / PI.powi(5) * (c / a) * sum)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{CircularTubeSection, RectangleSection};

    fn rel(a: f64, b: f64) -> f64 {
        (a - b).abs() / b.abs()
    }

    #[test]
    fn square_torsion_constant_is_0_1406_a4() {
        // Timoshenko & Goodier: J = 0.1406 a⁴ for a square (k1 = 0.141 in their table).
        let j = rectangle_torsion_constant(1.0, 1.0);
        assert!(rel(j, 0.140_577) < 1e-5, "{j}");
    }

    #[test]
    fn thin_strip_torsion_tends_to_bt3_over_3() {
        let j = rectangle_torsion_constant(1.0, 0.001);
        assert!(rel(j, 1.0 * 0.001f64.powi(3) / 3.0 * (1.0 - 0.630 * 0.001)) < 1e-3);
    }

    #[test]
    fn tube_torsion_constant_is_exact_polar_moment() {
        // Worked example of the reference sheet: r_o = 50 mm, r_i = 45 mm gives J = 3.376230e-6 m⁴.
        let s = Section::CircularTube(CircularTubeSection {
            outer_diameter: 0.1,
            wall_thickness: 0.005,
            shear_deformation: false,
        });
        let p = section_properties(&s, 0.3);
        assert!(rel(p.torsion_constant, 3.376230e-6) < 1e-6);
        assert!(rel(p.second_moment_y, 3.376230e-6 / 2.0) < 1e-6);
    }

    #[test]
    fn rectangle_axes_follow_height_along_y() {
        let s = Section::Rectangle(RectangleSection { width: 0.05, height: 0.01, shear_deformation: true });
        let p = section_properties(&s, 0.3);
        assert!(rel(p.second_moment_z, 0.05 * 0.01f64.powi(3) / 12.0) < 1e-12);
        assert!(rel(p.second_moment_y, 0.01 * 0.05f64.powi(3) / 12.0) < 1e-12);
        let kappa = p.shear_area_y.unwrap_or(0.0) / p.area;
        assert!(rel(kappa, 13.0 / 15.3) < 1e-12);
    }
}
