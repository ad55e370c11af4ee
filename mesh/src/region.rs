//! Region selection: which nodes a named [`Region`] holds.
//!
//! Rules (the model-format docs repeat them):
//! - tube: the stations with axial fraction in [from, to] (1e-9 slack), or only the start/end ring;
//!   for shell tubes optionally only the nodes whose angle θ about the axis (from the reference
//!   direction) lies in [a0, a1], running upward from a0 and through 360° when a1 < a0: θ is in the
//!   range when (θ − a0) mod 360 ≤ span, span = a1 − a0 (+ 360 when negative).
//! - panel: the nodes on an edge, inside a box of panel coordinates (edges included), or the grid
//!   node nearest a point inside the panel.
//! - mesh: every point of an imported mesh file, or the nodes of its beams and shells of one
//!   property id.
//! - box: nodes inside an axis-aligned box (faces included, slack 1e-9 of the model size); sphere:
//!   nodes within the radius (the same slack); nodes: the listed ids.

use std::collections::HashMap;

use crate::error::ModelError;
use crate::model::{Fidelity, MeshRegion, NodeId, PanelEdge, PanelRegion, Region, RingEnd, TubeRegion};
use crate::structure::{MeshNodes, PanelNodes, StructureNode, TubeNodes, distance};

/// Slack of angle comparisons, in degrees.
const ANGLE_SLACK_DEG: f64 = 1e-9;

/// Slack of fraction comparisons.
const FRACTION_SLACK: f64 = 1e-9;

/// What region selection reads.
pub(crate) struct RegionContext<'a> {
    /// All nodes.
    pub nodes: &'a [StructureNode],
    /// Node index by id.
    pub node_index: &'a HashMap<NodeId, usize>,
    /// Generated tubes.
    pub tubes: &'a [TubeNodes],
    /// Generated panels.
    pub panels: &'a [PanelNodes],
    /// Imported meshes.
    pub meshes: &'a [MeshNodes],
    /// Length under which two coordinates count as equal, in m.
    pub slack: f64,
    /// The defined node ids, in words, for messages.
    pub node_hint: &'a dyn Fn() -> String,
}

fn invalid(at: &str, message: String) -> ModelError {
    ModelError::Invalid { at: at.to_string(), message }
}

fn names_hint<'n>(names: impl Iterator<Item = &'n str>) -> String {
    let names: Vec<String> = names.map(|k| format!("\"{k}\"")).collect();
    if names.is_empty() { " (none is defined)".into() } else { format!(" (defined: {})", names.join(", ")) }
}

/// The nodes of region `region` (named by `at`, e.g. `regions.top`), ascending, without repeats.
///
/// # Errors
/// An unknown tube, panel or node, a malformed range, or a region that selects no node.
pub(crate) fn select(at: &str, region: &Region, cx: &RegionContext<'_>) -> Result<Vec<usize>, ModelError> {
    let mut nodes = match region {
        Region::Tube(t) => tube_nodes(at, t, cx)?,
        Region::Panel(p) => panel_nodes(at, p, cx)?,
        Region::Mesh(m) => mesh_nodes(at, m, cx)?,
        Region::Box(b) => {
            let [lo, hi] = b.corners;
            for k in 0..3 {
                if !(lo[k].is_finite() && hi[k].is_finite() && lo[k] <= hi[k]) {
                    return Err(invalid(
                        &format!("{at}.box"),
                        format!(
                            "{:?} is not a box; give [[x0, y0, z0], [x1, y1, z1]] with x0 <= x1, y0 <= y1, z0 <= z1",
                            b.corners
                        ),
                    ));
                }
            }
            let s = cx.slack;
            (0..cx.nodes.len())
                .filter(|&i| (0..3).all(|k| cx.nodes[i].xyz[k] >= lo[k] - s && cx.nodes[i].xyz[k] <= hi[k] + s))
                .collect()
        }
        Region::Sphere(s) => {
            let c = s.sphere.centre;
            if !c.iter().all(|v| v.is_finite()) {
                return Err(invalid(&format!("{at}.sphere.centre"), format!("coordinates {c:?} are not finite")));
            }
            let r = s.sphere.radius;
            if !(r.is_finite() && r > 0.0) {
                return Err(invalid(
                    &format!("{at}.sphere.radius"),
                    format!("{r} is not allowed; it must be a positive finite number, in m"),
                ));
            }
            (0..cx.nodes.len()).filter(|&i| distance(cx.nodes[i].xyz, c) <= r + cx.slack).collect()
        }
        Region::Nodes(n) => {
            let mut out = Vec::with_capacity(n.nodes.len());
            for (k, id) in n.nodes.iter().enumerate() {
                let i = cx.node_index.get(id).copied().ok_or_else(|| ModelError::UnknownNode {
                    at: format!("{at}.nodes[{k}]"),
                    id: id.0,
                    hint: (cx.node_hint)(),
                })?;
                out.push(i);
            }
            out
        }
    };
    nodes.sort_unstable();
    nodes.dedup();
    if nodes.is_empty() {
        return Err(invalid(
            at,
            "this region selects no node; widen its range or check its coordinates against the model".into(),
        ));
    }
    Ok(nodes)
}

/// Whether angle `theta` (degrees) lies in the range from `a0` up to `a1`, through 360° when
/// `a1 < a0`.
pub(crate) fn angle_in_range(theta: f64, a0: f64, a1: f64) -> bool {
    let mut span = a1 - a0;
    if span < 0.0 {
        span += 360.0;
    }
    let d = (theta - a0).rem_euclid(360.0);
    d <= span + ANGLE_SLACK_DEG || d >= 360.0 - ANGLE_SLACK_DEG
}

fn check_fraction(at: &str, field: &str, v: f64) -> Result<(), ModelError> {
    if (0.0..=1.0).contains(&v) {
        Ok(())
    } else {
        Err(invalid(
            &format!("{at}.{field}"),
            format!("{v} is not a fraction of the length; give a number from 0 to 1"),
        ))
    }
}

fn tube_nodes(at: &str, r: &TubeRegion, cx: &RegionContext<'_>) -> Result<Vec<usize>, ModelError> {
    let tube = cx.tubes.iter().find(|t| t.name == r.tube).ok_or_else(|| ModelError::UnknownName {
        at: format!("{at}.tube"),
        kind: "tube",
        name: r.tube.clone(),
        hint: names_hint(cx.tubes.iter().map(|t| t.name.as_str())),
    })?;
    let last = tube.rings.len() - 1;
    let stations: Vec<usize> = match r.ring {
        Some(end) => {
            if r.from.is_some() || r.to.is_some() {
                return Err(invalid(at, "give \"ring\" or the fractions \"from\"/\"to\", not both".into()));
            }
            vec![if end == RingEnd::Start { 0 } else { last }]
        }
        None => {
            let (from, to) = (r.from.unwrap_or(0.0), r.to.unwrap_or(1.0));
            check_fraction(at, "from", from)?;
            check_fraction(at, "to", to)?;
            if from > to {
                return Err(invalid(at, format!("from = {from} is beyond to = {to}; give from <= to")));
            }
            (0..=last)
                .filter(|&j| tube.fractions[j] >= from - FRACTION_SLACK && tube.fractions[j] <= to + FRACTION_SLACK)
                .collect()
        }
    };
    let around = tube.rings[0].len();
    let keep: Vec<bool> = match r.angle_deg {
        None => vec![true; around],
        Some([a0, a1]) => {
            if tube.fidelity != Fidelity::Shell {
                return Err(invalid(
                    &format!("{at}.angle_deg"),
                    format!(
                        "tube \"{}\" is meshed as beams, so it has no angle; angle ranges need \"fidelity\": \"shell\"",
                        tube.name
                    ),
                ));
            }
            if !(a0.is_finite() && a1.is_finite()) {
                return Err(invalid(
                    &format!("{at}.angle_deg"),
                    format!("[{a0}, {a1}] is not a pair of finite angles in degrees"),
                ));
            }
            if (a1 - a0).abs() > 360.0 {
                return Err(invalid(
                    &format!("{at}.angle_deg"),
                    format!("[{a0}, {a1}] spans more than 360°; give a range of at most one turn"),
                ));
            }
            if a1 - a0 == 360.0 {
                vec![true; around]
            } else {
                (0..around).map(|k| angle_in_range(tube.angle_deg(k), a0, a1)).collect()
            }
        }
    };
    Ok(stations.iter().flat_map(|&j| (0..around).filter(|&k| keep[k]).map(move |k| tube.rings[j][k])).collect())
}

fn mesh_nodes(at: &str, r: &MeshRegion, cx: &RegionContext<'_>) -> Result<Vec<usize>, ModelError> {
    let mesh = cx.meshes.iter().find(|m| m.name == r.mesh).ok_or_else(|| ModelError::UnknownName {
        at: format!("{at}.mesh"),
        kind: "mesh",
        name: r.mesh.clone(),
        hint: names_hint(cx.meshes.iter().map(|m| m.name.as_str())),
    })?;
    match r.property {
        None => Ok(mesh.nodes.clone()),
        Some(p) => match mesh.property_nodes.get(&p) {
            Some(list) => Ok(list.clone()),
            None => {
                let used: Vec<String> = mesh.property_nodes.keys().map(i64::to_string).collect();
                Err(invalid(
                    &format!("{at}.property"),
                    format!(
                        "no beam or shell of mesh \"{}\" has property {p}, so this region selects no node (its cells \
                         have {})",
                        mesh.name,
                        if used.is_empty() {
                            "no property".to_string()
                        } else {
                            format!("properties {}", used.join(", "))
                        }
                    ),
                ))
            }
        },
    }
}

fn panel_nodes(at: &str, r: &PanelRegion, cx: &RegionContext<'_>) -> Result<Vec<usize>, ModelError> {
    let panel = cx.panels.iter().find(|p| p.name == r.panel).ok_or_else(|| ModelError::UnknownName {
        at: format!("{at}.panel"),
        kind: "panel",
        name: r.panel.clone(),
        hint: names_hint(cx.panels.iter().map(|p| p.name.as_str())),
    })?;
    let [nx, ny] = panel.divisions;
    let [a, b] = panel.size;
    let forms = [r.edge.is_some(), r.bounds.is_some(), r.point.is_some()];
    if forms.iter().filter(|&&f| f).count() != 1 {
        return Err(invalid(
            at,
            "a panel region needs exactly one of \"edge\": \"x0\"|\"x1\"|\"y0\"|\"y1\", \"box\": [[u0, v0], [u1, v1]] or \"point\": [u, v]".into(),
        ));
    }
    let grid = (0..=ny).flat_map(|j| (0..=nx).map(move |i| (i, j)));
    if let Some(edge) = r.edge {
        let on = |(i, j): (usize, usize)| match edge {
            PanelEdge::X0 => i == 0,
            PanelEdge::X1 => i == nx,
            PanelEdge::Y0 => j == 0,
            PanelEdge::Y1 => j == ny,
        };
        return Ok(grid.filter(|&g| on(g)).map(|(i, j)| panel.node(i, j)).collect());
    }
    let slack = 1e-9 * (a + b);
    if let Some([[u0, v0], [u1, v1]]) = r.bounds {
        if !([u0, v0, u1, v1].iter().all(|x| x.is_finite()) && u0 <= u1 && v0 <= v1) {
            return Err(invalid(
                &format!("{at}.box"),
                format!(
                    "[[{u0}, {v0}], [{u1}, {v1}]] is not a box; give [[u0, v0], [u1, v1]] with u0 <= u1 and v0 <= v1, in m"
                ),
            ));
        }
        return Ok(grid
            .filter(|&(i, j)| {
                let [u, v] = panel.uv(i, j);
                u >= u0 - slack && u <= u1 + slack && v >= v0 - slack && v <= v1 + slack
            })
            .map(|(i, j)| panel.node(i, j))
            .collect());
    }
    let Some([u, v]) = r.point else { return Ok(Vec::new()) };
    if !(u.is_finite() && v.is_finite() && u >= -slack && u <= a + slack && v >= -slack && v <= b + slack) {
        return Err(invalid(
            &format!("{at}.point"),
            format!("[{u}, {v}] lies outside the panel; give 0 <= u <= {a} and 0 <= v <= {b}, in m"),
        ));
    }
    let (i, j) = panel.nearest([u, v]);
    Ok(vec![panel.node(i, j)])
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::parse_model;
    use crate::structure::Structure;
    use crate::validate::validate;

    /// A model with a shell tube (8 around, 4 along, L = 1 along X, mid radius 0.049), a beam tube
    /// (10 elements from (0, 1, 0)), a 4 × 2 panel of 0.4 × 0.2 m at z = 1 and `regions`.
    fn model(regions: &str) -> Result<Structure, ModelError> {
        let text = format!(
            r#"{{
            "materials": {{"s": {{"youngs_modulus": 2e11, "poisson_ratio": 0.3, "density": 7800}}}},
            "tubes": [{{"name": "shell", "length": 1, "outer_diameter": 0.1, "wall_thickness": 0.002, "material": "s",
                        "fidelity": "shell", "around": 8, "along": 4}},
                      {{"name": "beam", "length": 1, "outer_diameter": 0.1, "wall_thickness": 0.002, "material": "s",
                        "start": [0, 1, 0], "along": 10}}],
            "panels": [{{"name": "lid", "size": [0.4, 0.2], "thickness": 0.002, "material": "s", "origin": [0, 0, 1],
                         "divisions": [4, 2]}}],
            "regions": {regions}
        }}"#
        );
        validate(&parse_model(&text, std::path::Path::new("t.json"))?)
    }

    fn region(regions: &str, name: &str) -> Vec<[f64; 3]> {
        let s = model(regions).unwrap_or_else(|e| panic!("{e}"));
        s.regions.get(name).map(|r| r.iter().map(|&i| s.nodes[i].xyz).collect()).unwrap_or_default()
    }

    fn error(regions: &str) -> String {
        model(regions).err().map(|e| e.to_string()).unwrap_or_default()
    }

    /// The points agree with `expected`, in order, to 1e-12 m.
    #[track_caller]
    fn assert_close(got: &[[f64; 3]], expected: &[[f64; 3]]) {
        assert_eq!(got.len(), expected.len(), "{got:?} vs {expected:?}");
        for (g, e) in got.iter().zip(expected) {
            assert!(distance(*g, *e) < 1e-12, "{got:?} vs {expected:?}");
        }
    }

    /// Angle of a shell-tube node about X from +Y, in degrees in [0, 360).
    fn angle(p: [f64; 3]) -> f64 {
        p[2].atan2(p[1]).to_degrees().rem_euclid(360.0).round()
    }

    #[test]
    fn angle_ranges_run_upward_and_wrap_through_360() {
        assert!(angle_in_range(10.0, 0.0, 90.0));
        assert!(!angle_in_range(100.0, 0.0, 90.0));
        assert!(angle_in_range(350.0, 315.0, 45.0));
        assert!(angle_in_range(0.0, 315.0, 45.0));
        assert!(angle_in_range(45.0, 315.0, 45.0));
        assert!(!angle_in_range(90.0, 315.0, 45.0));
        assert!(angle_in_range(0.0, -45.0, 45.0));
        assert!(angle_in_range(315.0, -45.0, 45.0));
        assert!(angle_in_range(360.0 - 1e-12, 0.0, 0.0), "360° is 0°");
        assert!(angle_in_range(90.0, 90.0, 90.0), "a single angle");
    }

    #[test]
    fn tube_region_by_fractions_includes_both_ends() {
        // Stations of the shell tube at 0, 0.25, 0.5, 0.75, 1; 8 nodes each.
        let all = region(r#"{"r": {"tube": "shell"}}"#, "r");
        assert_eq!(all.len(), 5 * 8);
        let half = region(r#"{"r": {"tube": "shell", "from": 0.0, "to": 0.5}}"#, "r");
        assert_eq!(half.len(), 3 * 8, "fractions 0 and 0.5 both included");
        assert!(half.iter().all(|p| p[0] <= 0.5 + 1e-12));
        let end = region(r#"{"r": {"tube": "shell", "from": 1.0, "to": 1.0}}"#, "r");
        assert_eq!(end.len(), 8);
        assert!(end.iter().all(|p| (p[0] - 1.0).abs() < 1e-12), "fraction 1 is the end ring");
        let beam = region(r#"{"r": {"tube": "beam", "from": 0.0, "to": 0.3}}"#, "r");
        assert_close(&beam, &[[0.0, 1.0, 0.0], [0.1, 1.0, 0.0], [0.2, 1.0, 0.0], [0.3, 1.0, 0.0]]);
    }

    #[test]
    fn tube_region_by_ring() {
        let start = region(r#"{"r": {"tube": "shell", "ring": "start"}}"#, "r");
        assert_eq!(start.len(), 8);
        assert!(start.iter().all(|p| p[0] == 0.0));
        let end = region(r#"{"r": {"tube": "beam", "ring": "end"}}"#, "r");
        assert_close(&end, &[[1.0, 1.0, 0.0]]);
        assert!(error(r#"{"r": {"tube": "shell", "ring": "end", "from": 0.5}}"#).contains("not both"));
    }

    #[test]
    fn tube_region_by_angle_wraps_through_360() {
        // 8 nodes at 0, 45, ..., 315° from +Y towards +Z.
        let top = region(r#"{"r": {"tube": "shell", "ring": "start", "angle_deg": [45, 135]}}"#, "r");
        let mut a: Vec<f64> = top.iter().map(|&p| angle(p)).collect();
        a.sort_by(f64::total_cmp);
        assert_eq!(a, vec![45.0, 90.0, 135.0]);
        let wrap = region(r#"{"r": {"tube": "shell", "ring": "start", "angle_deg": [300, 60]}}"#, "r");
        let mut a: Vec<f64> = wrap.iter().map(|&p| angle(p)).collect();
        a.sort_by(f64::total_cmp);
        assert_eq!(a, vec![0.0, 45.0, 315.0]);
        let negative = region(r#"{"r": {"tube": "shell", "ring": "start", "angle_deg": [-60, 60]}}"#, "r");
        assert_eq!(negative.len(), 3, "[-60, 60] is the same range as [300, 60]");
        let full = region(r#"{"r": {"tube": "shell", "ring": "start", "angle_deg": [0, 360]}}"#, "r");
        assert_eq!(full.len(), 8);
        let e = error(r#"{"r": {"tube": "beam", "angle_deg": [0, 90]}}"#);
        assert!(e.contains("regions.r.angle_deg") && e.contains("meshed as beams"), "{e}");
        assert!(error(r#"{"r": {"tube": "shell", "angle_deg": [0, 400]}}"#).contains("more than 360"));
    }

    #[test]
    fn panel_regions_by_edge_box_and_point() {
        let x1 = region(r#"{"r": {"panel": "lid", "edge": "x1"}}"#, "r");
        assert_close(&x1, &[[0.4, 0.0, 1.0], [0.4, 0.1, 1.0], [0.4, 0.2, 1.0]]);
        let y0 = region(r#"{"r": {"panel": "lid", "edge": "y0"}}"#, "r");
        assert_eq!(y0.len(), 5);
        assert!(y0.iter().all(|p| p[1] == 0.0));
        let b = region(r#"{"r": {"panel": "lid", "box": [[0.1, 0.0], [0.2, 0.1]]}}"#, "r");
        assert_eq!(b.len(), 4, "grid points (1..2) × (0..1), box edges included");
        let p = region(r#"{"r": {"panel": "lid", "point": [0.26, 0.14]}}"#, "r");
        assert_close(&p, &[[0.3, 0.1, 1.0]]);
        assert!(error(r#"{"r": {"panel": "lid", "point": [0.5, 0.1]}}"#).contains("outside the panel"));
        assert!(error(r#"{"r": {"panel": "lid", "edge": "x0", "point": [0.1, 0.1]}}"#).contains("exactly one"));
    }

    #[test]
    fn box_sphere_and_node_regions() {
        // Box around the beam tube's first half.
        let b = region(r#"{"r": {"box": [[-0.01, 0.9, -0.1], [0.5, 1.1, 0.1]]}}"#, "r");
        assert_eq!(b.len(), 6);
        let s = region(r#"{"r": {"sphere": {"centre": [0.5, 1, 0], "radius": 0.1}}}"#, "r");
        assert_eq!(s.len(), 3, "0.4, 0.5, 0.6 on the surface and inside");
        let s = model(r#"{"r": {"nodes": [1, 3, 3]}}"#).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(s.regions["r"], vec![0, 2], "ids 1 and 3, repeats dropped");
        let e = error(r#"{"r": {"nodes": [1, 9999]}}"#);
        assert!(e.contains("regions.r.nodes[1]") && e.contains("node 9999 does not exist"), "{e}");
    }

    #[test]
    fn empty_and_unknown_regions_are_errors_naming_them() {
        let e = error(r#"{"far": {"box": [[5, 5, 5], [6, 6, 6]]}}"#);
        assert!(e.contains("regions.far") && e.contains("selects no node"), "{e}");
        let e = error(r#"{"gap": {"tube": "shell", "from": 0.3, "to": 0.4}}"#);
        assert!(e.contains("regions.gap") && e.contains("selects no node"), "{e}");
        let e = error(r#"{"r": {"tube": "boom"}}"#);
        assert!(
            e.contains("regions.r.tube") && e.contains("tube \"boom\" is not defined") && e.contains("\"shell\""),
            "{e}"
        );
        let e = error(r#"{"r": {"panel": "door", "edge": "x0"}}"#);
        assert!(e.contains("regions.r.panel") && e.contains("panel \"door\" is not defined"), "{e}");
        let e = error(r#"{"r": {"sphere": {"centre": [0, 0, 0], "radius": 0}}}"#);
        assert!(e.contains("regions.r.sphere.radius"), "{e}");
    }

    #[test]
    fn region_json_is_read_by_its_form_key() {
        let e = error(r#"{"r": {"tube": "shell", "fom": 0.2}}"#);
        assert!(e.contains("regions.r") && e.contains("unknown field `fom`"), "{e}");
        let e = error(r#"{"r": {"where": 1}}"#);
        assert!(e.contains("needs one of the keys"), "{e}");
    }
}
