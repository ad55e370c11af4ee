//! `antinode correlate`: MAC and frequency comparison of a model's modes with measured modes (our
//! CSV format, docs/correlation.md) or with the modes of a second model on the same nodes; writes
//! correlation.json and correlation.svg.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use antinode_mesh::{Structure, distance};
use antinode_solver::{ModalSolution, ModeRequest, System, mac_matrix, pair_by_mac, sampled_shapes, solve_modes};
use anyhow::{Context, Result, bail};
use serde::Serialize;

use crate::output::{print_json, table};
use crate::pipeline::{CAUTION, Loaded, Outputs, Progress, assemble_checked, confirm_zero_energy, eigen_params, load};
use crate::plot;

/// MAC under which a pair is poor (common practice: 0.9 for a good pair in model updating).
pub const MAC_POOR: f64 = 0.9;
/// Relative frequency error over which a pair is poor (common practice: 5 %).
pub const FREQUENCY_POOR: f64 = 0.05;
/// Largest distance of a measured point from its node, as a fraction of the model's bounding-box
/// diagonal (the snapping tolerance of `xyz` locations in the model format).
pub const POINT_TOLERANCE: f64 = 0.01;
/// Largest distance between nodes matched by coordinates in model-to-model MAC, as a fraction of
/// the model's bounding-box diagonal (common practice for "the same node").
pub const NODE_TOLERANCE: f64 = 1e-6;
/// The fewest measured points a correlation accepts (a MAC on fewer points tells little).
pub const MIN_POINTS: usize = 3;

/// What the model is compared with.
pub enum Reference {
    /// A measured CSV file.
    Measured(PathBuf),
    /// A second model file.
    Model(PathBuf),
}

pub struct Options {
    pub model: PathBuf,
    pub reference: Reference,
    pub count: Option<usize>,
    pub out: Option<PathBuf>,
    pub json: bool,
}

/// Measured modes read from the CSV file.
struct Measured {
    points: Vec<MeasuredPoint>,
    /// Mode names (column headers without `mode_`).
    modes: Vec<String>,
    frequencies_hz: Vec<f64>,
    /// values[point][mode].
    values: Vec<Vec<f64>>,
}

struct MeasuredPoint {
    name: String,
    xyz: [f64; 3],
    direction: [f64; 3],
}

/// The fixed columns of a measured CSV file, in order.
const FIXED_COLUMNS: [&str; 7] = ["point", "x", "y", "z", "direction_x", "direction_y", "direction_z"];

/// Reads a measured CSV file (docs/correlation.md); errors name the file, line and column.
fn read_measured(path: &Path) -> Result<Measured> {
    let text = std::fs::read_to_string(path).with_context(|| format!("cannot read {}", path.display()))?;
    let mut reader = csv::ReaderBuilder::new().comment(Some(b'#')).trim(csv::Trim::All).from_reader(text.as_bytes());
    let headers = reader.headers().with_context(|| format!("{}: cannot read the header line", path.display()))?.clone();
    let names: Vec<&str> = headers.iter().collect();
    for (i, want) in FIXED_COLUMNS.iter().enumerate() {
        if names.get(i) != Some(want) {
            bail!(
                "{}: column {} of the header is {:?}; the header must start with {} and go on with one mode_<name> column per measured mode",
                path.display(),
                i + 1,
                names.get(i).copied().unwrap_or(""),
                FIXED_COLUMNS.join(",")
            );
        }
    }
    let mut modes = Vec::new();
    for (i, n) in names.iter().enumerate().skip(FIXED_COLUMNS.len()) {
        match n.strip_prefix("mode_") {
            Some(m) if !m.is_empty() => modes.push(m.to_string()),
            _ => bail!(
                "{}: column {} {:?} is not known; allowed after {} are mode_<name> columns (one per measured mode)",
                path.display(),
                i + 1,
                n,
                FIXED_COLUMNS.join(",")
            ),
        }
    }
    if modes.is_empty() {
        bail!("{}: no mode_<name> column: give at least one measured mode", path.display());
    }
    let mut frequencies_hz: Option<Vec<f64>> = None;
    let mut points = Vec::new();
    let mut values = Vec::new();
    for rec in reader.records() {
        let rec = rec.with_context(|| format!("{}: malformed line", path.display()))?;
        let line = rec.position().map_or(0, |p| p.line());
        let cell = |i: usize| -> Result<f64> {
            let text = rec.get(i).unwrap_or("");
            let v: f64 = text.parse().map_err(|_| {
                anyhow::anyhow!(
                    "{}: line {line}, column {} ({}): {text:?} is not a number",
                    path.display(),
                    i + 1,
                    names[i]
                )
            })?;
            if !v.is_finite() {
                bail!(
                    "{}: line {line}, column {} ({}): {text} is not a finite number",
                    path.display(),
                    i + 1,
                    names[i]
                );
            }
            Ok(v)
        };
        let name = rec.get(0).unwrap_or("").to_string();
        if name == "frequency_hz" {
            if frequencies_hz.is_some() {
                bail!("{}: line {line}: a second frequency_hz row; give it once", path.display());
            }
            let f: Vec<f64> = (FIXED_COLUMNS.len()..names.len()).map(cell).collect::<Result<_>>()?;
            if let Some((k, v)) = f.iter().enumerate().find(|(_, v)| **v <= 0.0) {
                bail!("{}: line {line}: frequency of mode_{} is {v} Hz; it must be positive", path.display(), modes[k]);
            }
            frequencies_hz = Some(f);
            continue;
        }
        let xyz = [cell(1)?, cell(2)?, cell(3)?];
        let d = [cell(4)?, cell(5)?, cell(6)?];
        let norm = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
        if norm == 0.0 {
            bail!("{}: line {line}: point {name:?} has a zero direction; give a non-zero vector", path.display());
        }
        points.push(MeasuredPoint { name, xyz, direction: d.map(|v| v / norm) });
        values.push((FIXED_COLUMNS.len()..names.len()).map(cell).collect::<Result<Vec<f64>>>()?);
    }
    let Some(frequencies_hz) = frequencies_hz else {
        bail!(
            "{}: no frequency_hz row: give the measured frequency of every mode in a row named frequency_hz",
            path.display()
        )
    };
    if points.len() < MIN_POINTS {
        bail!(
            "{}: {} measured point(s); a correlation needs at least {MIN_POINTS} (MAC on fewer points cannot tell modes apart)",
            path.display(),
            points.len()
        );
    }
    Ok(Measured { points, modes, frequencies_hz, values })
}

#[derive(Serialize)]
struct PointOut {
    name: String,
    node: u64,
    distance_m: f64,
}

#[derive(Serialize)]
struct ModeOut {
    name: String,
    frequency_hz: f64,
}

#[derive(Serialize)]
struct PairOut {
    reference: String,
    reference_frequency_hz: f64,
    model_mode: Option<usize>,
    model_frequency_hz: Option<f64>,
    mac: Option<f64>,
    /// (f_model − f_reference) / f_reference.
    frequency_error: Option<f64>,
    poor: bool,
    reasons: Vec<String>,
}

#[derive(Serialize)]
struct Thresholds {
    mac_below: f64,
    frequency_error_above: f64,
    source: &'static str,
}

#[derive(Serialize)]
struct Report {
    model: String,
    reference: String,
    reference_kind: &'static str,
    points: Vec<PointOut>,
    reference_modes: Vec<ModeOut>,
    /// Elastic modes of the model (numbers as in `antinode modes`).
    model_modes: Vec<ModeOut>,
    /// mac[reference mode][model mode].
    mac: Vec<Vec<f64>>,
    pairs: Vec<PairOut>,
    thresholds: Thresholds,
    files: Vec<String>,
}

fn modes_of(l: &Loaded, count: usize) -> Result<(System, ModalSolution)> {
    let (system, zero) = assemble_checked(l, false)?;
    let n = (count + zero).min(system.n_dofs());
    let sol = solve_modes(&system, ModeRequest::Lowest(n), &eigen_params(l, zero))
        .with_context(|| format!("modes of {}", l.path.display()))?;
    confirm_zero_energy(l, &system, &sol)?;
    Ok((system, sol))
}

/// Relative size under which a mode's motion at the compared points counts as none (MAC is blind
/// to scale, so round-off motion of a mode that does not move there would otherwise look like any
/// shape): below this fraction of the largest mode's norm at those points the shape is zeroed and
/// its MAC is 0 (common practice).
const INVISIBLE: f64 = 1e-6;

/// Elastic-mode shapes sampled at `points`, with their numbers (from 1) and frequencies. Modes
/// that do not move at the points (see [`INVISIBLE`]) get a zero shape.
fn elastic(system: &System, sol: &ModalSolution, points: &[(usize, [f64; 6])]) -> (Vec<Vec<f64>>, Vec<ModeOut>) {
    let all = sampled_shapes(system, sol, points);
    let mut shapes: Vec<Vec<f64>> = all.into_iter().skip(sol.n_zero_energy).collect();
    let norm = |v: &[f64]| v.iter().map(|x| x * x).sum::<f64>().sqrt();
    let largest = shapes.iter().map(|v| norm(v)).fold(0.0, f64::max);
    for v in &mut shapes {
        if norm(v) < INVISIBLE * largest {
            v.fill(0.0);
        }
    }
    let modes = (sol.n_zero_energy..sol.n_modes())
        .map(|i| ModeOut { name: (i + 1).to_string(), frequency_hz: sol.frequency_hz(i) })
        .collect();
    (shapes, modes)
}

/// Nearest node of `s` to `p` and its distance.
fn nearest(s: &Structure, p: [f64; 3]) -> (usize, f64) {
    s.nodes
        .iter()
        .enumerate()
        .map(|(i, n)| (i, distance(n.xyz, p)))
        .fold((0, f64::INFINITY), |a, b| if b.1 < a.1 { b } else { a })
}

/// For each node of `a`, the node of `b` at the same place (within `tol`), or an error naming the
/// first node without one.
fn match_nodes(a: &Loaded, b: &Loaded, tol: f64) -> Result<Vec<usize>> {
    let key = |x: [f64; 3]| x.map(|v| (v / tol).floor() as i64);
    let mut grid: HashMap<[i64; 3], Vec<usize>> = HashMap::new();
    for (i, n) in b.structure.nodes.iter().enumerate() {
        grid.entry(key(n.xyz)).or_default().push(i);
    }
    let mut out = Vec::with_capacity(a.structure.nodes.len());
    for n in &a.structure.nodes {
        let k = key(n.xyz);
        let mut found = None;
        for dx in -1..=1 {
            for dy in -1..=1 {
                for dz in -1..=1 {
                    for &j in grid.get(&[k[0] + dx, k[1] + dy, k[2] + dz]).into_iter().flatten() {
                        let d = distance(b.structure.nodes[j].xyz, n.xyz);
                        if d <= tol && found.is_none_or(|(_, bd)| d < bd) {
                            found = Some((j, d));
                        }
                    }
                }
            }
        }
        match found {
            Some((j, _)) => out.push(j),
            None => {
                let (j, d) = nearest(&b.structure, n.xyz);
                bail!(
                    "the meshes differ: node {} of {} at ({}, {}, {}) m has no node of {} within {tol:.3e} m (nearest: node {} at {d:.3e} m); \
                     model-to-model MAC compares the same nodes, so both models need the same mesh",
                    n.id.0,
                    a.path.display(),
                    n.xyz[0],
                    n.xyz[1],
                    n.xyz[2],
                    b.path.display(),
                    b.structure.nodes[j].id.0
                );
            }
        }
    }
    Ok(out)
}

pub fn run(o: &Options) -> Result<()> {
    let progress = Progress::new();
    progress.stage("loading");
    let model = load(&o.model)?;
    let (reference_name, kind, points_out, ref_shapes, ref_modes, model_points) = match &o.reference {
        Reference::Measured(path) => {
            let m = read_measured(path)?;
            let tol = POINT_TOLERANCE * model.structure.size();
            let mut points_out = Vec::new();
            let mut model_points = Vec::new();
            for p in &m.points {
                let (node, d) = nearest(&model.structure, p.xyz);
                if d > tol {
                    bail!(
                        "{}: measured point {:?} at ({}, {}, {}) m is {d:.4} m from the nearest node of {} (node {}); \
                         points must lie within {tol:.4} m (1 % of the model's size) of a node",
                        path.display(),
                        p.name,
                        p.xyz[0],
                        p.xyz[1],
                        p.xyz[2],
                        o.model.display(),
                        model.structure.nodes[node].id.0
                    );
                }
                points_out.push(PointOut {
                    name: p.name.clone(),
                    node: model.structure.nodes[node].id.0,
                    distance_m: d,
                });
                let d = p.direction;
                model_points.push((node, [d[0], d[1], d[2], 0.0, 0.0, 0.0]));
            }
            let shapes: Vec<Vec<f64>> =
                (0..m.modes.len()).map(|k| m.values.iter().map(|row| row[k]).collect()).collect();
            let modes = m
                .modes
                .iter()
                .zip(&m.frequencies_hz)
                .map(|(n, &f)| ModeOut { name: n.clone(), frequency_hz: f })
                .collect::<Vec<_>>();
            (path.display().to_string(), "measured", points_out, shapes, modes, model_points)
        }
        Reference::Model(path) => {
            let other = load(path)?;
            let tol = NODE_TOLERANCE * model.structure.size().max(other.structure.size());
            let map = match_nodes(&model, &other, tol)?;
            progress.stage(&format!("computing modes of {}", path.display()));
            let (sys_b, sol_b) = modes_of(&other, o.count.unwrap_or(20))?;
            // All six components of every node (translations and rotations, as in the VTK files).
            let dirs: [[f64; 6]; 6] = std::array::from_fn(|c| std::array::from_fn(|k| if k == c { 1.0 } else { 0.0 }));
            let b_points: Vec<(usize, [f64; 6])> = map.iter().flat_map(|&j| dirs.map(|d| (j, d))).collect();
            let (shapes, modes) = elastic(&sys_b, &sol_b, &b_points);
            let model_points: Vec<(usize, [f64; 6])> =
                (0..model.structure.nodes.len()).flat_map(|i| dirs.map(|d| (i, d))).collect();
            (path.display().to_string(), "model", Vec::new(), shapes, modes, model_points)
        }
    };
    if ref_modes.is_empty() {
        bail!("{reference_name}: no elastic mode to compare");
    }
    progress.stage(&format!("computing modes of {}", o.model.display()));
    let count = o.count.unwrap_or((2 * ref_modes.len()).max(10));
    let (system, sol) = modes_of(&model, count)?;
    let (model_shapes, model_modes) = elastic(&system, &sol, &model_points);
    if model_modes.is_empty() {
        bail!("{}: no elastic mode among the {} computed", o.model.display(), sol.n_modes());
    }
    let mac = mac_matrix(&ref_shapes, &model_shapes);
    let pairing = pair_by_mac(&mac);
    let pairs: Vec<PairOut> = ref_modes
        .iter()
        .zip(&pairing)
        .enumerate()
        .map(|(r, (m, p))| {
            let model_freq = p.map(|c| model_modes[c].frequency_hz);
            let err = model_freq.map(|f| (f - m.frequency_hz) / m.frequency_hz);
            let value = p.map(|c| mac[r][c]);
            let mut reasons = Vec::new();
            match (value, err) {
                (Some(v), Some(e)) => {
                    if v < MAC_POOR {
                        reasons.push(format!("MAC {v:.3} below {MAC_POOR}"));
                    }
                    if e.abs() > FREQUENCY_POOR {
                        reasons.push(format!(
                            "frequency error {:+.1} % beyond ±{:.0} %",
                            100.0 * e,
                            100.0 * FREQUENCY_POOR
                        ));
                    }
                }
                _ => reasons.push("no model mode left to pair with (compute more with --count)".into()),
            }
            PairOut {
                reference: m.name.clone(),
                reference_frequency_hz: m.frequency_hz,
                model_mode: p.map(|c| model_modes[c].name.parse().unwrap_or(0)),
                model_frequency_hz: model_freq,
                mac: value,
                frequency_error: err,
                poor: !reasons.is_empty(),
                reasons,
            }
        })
        .collect();
    let mut outputs = Outputs::create(&o.model, o.out.as_deref())?;
    let files = [outputs.path("correlation.json"), outputs.path("correlation.svg")];
    let report = Report {
        model: o.model.display().to_string(),
        reference: reference_name,
        reference_kind: kind,
        points: points_out,
        reference_modes: ref_modes,
        model_modes,
        mac,
        pairs,
        thresholds: Thresholds {
            mac_below: MAC_POOR,
            frequency_error_above: FREQUENCY_POOR,
            source: "common practice",
        },
        files: files.iter().map(|p| p.display().to_string()).collect(),
    };
    let svg = plot::heat_map_svg(
        &format!("MAC: {} modes against the model's", report.reference_kind),
        "model elastic mode (in order)",
        "reference mode (in order)",
        &report.mac,
    )?;
    outputs.write("correlation.svg", svg.as_bytes())?;
    outputs.write("correlation.json", serde_json::to_string_pretty(&report)?.as_bytes())?;
    outputs.commit()?;
    drop(progress);
    if o.json {
        return print_json(&report);
    }
    print_human(&report);
    Ok(())
}

fn print_human(r: &Report) {
    println!("{} against {} ({} modes)", r.model, r.reference, r.reference_kind);
    let shown = r.model_modes.len().min(12);
    let mut header: Vec<String> = vec!["reference".into(), "Hz".into()];
    header.extend(r.model_modes.iter().take(shown).map(|m| format!("{} ({:.1})", m.name, m.frequency_hz)));
    let rows: Vec<Vec<String>> = r
        .reference_modes
        .iter()
        .zip(&r.mac)
        .map(|(m, row)| {
            let mut v = vec![m.name.clone(), format!("{:.2}", m.frequency_hz)];
            v.extend(row.iter().take(shown).map(|x| format!("{x:.2}")));
            v
        })
        .collect();
    let h: Vec<&str> = header.iter().map(String::as_str).collect();
    println!("MAC (rows: reference modes; columns: model modes, Hz in brackets)");
    println!("{}", table(&h, rows));
    let pair_rows = r
        .pairs
        .iter()
        .map(|p| {
            vec![
                p.reference.clone(),
                format!("{:.2}", p.reference_frequency_hz),
                p.model_mode.map(|m| m.to_string()).unwrap_or_else(|| "-".into()),
                p.model_frequency_hz.map(|f| format!("{f:.2}")).unwrap_or_else(|| "-".into()),
                p.mac.map(|m| format!("{m:.3}")).unwrap_or_else(|| "-".into()),
                p.frequency_error.map(|e| format!("{:+.2}", 100.0 * e)).unwrap_or_else(|| "-".into()),
                if p.poor { format!("POOR: {}", p.reasons.join("; ")) } else { "ok".into() },
            ]
        })
        .collect();
    println!("{}", table(&["reference", "Hz", "model mode", "model Hz", "MAC", "error [%]", "pair"], pair_rows));
    println!(
        "poor pair: MAC below {} or frequency error beyond ±{:.0} % ({})",
        r.thresholds.mac_below,
        100.0 * r.thresholds.frequency_error_above,
        r.thresholds.source
    );
    println!("wrote {}", r.files.join(", "));
    println!("{CAUTION}");
}
