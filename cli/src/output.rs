//! Formatting helpers shared by the commands: result types of the JSON contract, tables.

use antinode_mesh::{Direction, DirectionSpec, Structure};
use comfy_table::presets::UTF8_BORDERS_ONLY;
use comfy_table::{CellAlignment, Table};
use serde::Serialize;

/// A place in the model: node id and coordinates.
#[derive(Debug, Clone, Serialize)]
pub struct LocationOut {
    /// Node id.
    pub node: u64,
    /// Coordinates, in m.
    pub xyz: [f64; 3],
}

impl LocationOut {
    pub fn of(s: &Structure, node: usize) -> Self {
        Self { node: s.nodes[node].id.0, xyz: s.nodes[node].xyz }
    }
}

/// Per-direction values.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct Xyz {
    pub x: f64,
    pub y: f64,
    pub z: f64,
}

impl From<[f64; 3]> for Xyz {
    fn from(v: [f64; 3]) -> Self {
        Self { x: v[0], y: v[1], z: v[2] }
    }
}

/// Values in the six rigid-body directions: translations x, y, z and rotations rx, ry, rz.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct Six {
    pub x: f64,
    pub y: f64,
    pub z: f64,
    pub rx: f64,
    pub ry: f64,
    pub rz: f64,
}

impl From<[f64; 6]> for Six {
    fn from(v: [f64; 6]) -> Self {
        Self { x: v[0], y: v[1], z: v[2], rx: v[3], ry: v[4], rz: v[5] }
    }
}

/// A direction as in the model file: `"x"`, `"y"`, `"z"` or a vector.
pub fn direction_json(d: &DirectionSpec) -> serde_json::Value {
    match &d.given {
        Direction::Axis(_) => serde_json::Value::String(d.label()),
        Direction::Vector(_) => serde_json::json!(d.unit),
    }
}

/// A table with a header row and right-aligned numeric columns.
pub fn table(header: &[&str], rows: Vec<Vec<String>>) -> String {
    let mut t = Table::new();
    t.load_style(UTF8_BORDERS_ONLY);
    t.set_header(header.iter().map(|h| h.to_string()));
    for r in rows {
        t.add_row(r);
    }
    for i in 0..header.len() {
        if let Some(c) = t.column_mut(i) {
            c.set_cell_alignment(CellAlignment::Right);
        }
    }
    t.to_string()
}

/// Prints JSON to standard output.
pub fn print_json<T: Serialize>(v: &T) -> anyhow::Result<()> {
    println!("{}", serde_json::to_string_pretty(v)?);
    Ok(())
}

/// Decibels of a ratio: 20 log10(after / before).
pub fn db(after: f64, before: f64) -> f64 {
    20.0 * (after / before).log10()
}

/// Prints the measured frequencies that replaced computed ones (nothing when there are none).
pub fn print_measured(m: &[antinode_placement::measured::MeasuredOverride]) {
    if m.is_empty() {
        return;
    }
    let rows = m
        .iter()
        .map(|o| {
            vec![
                o.mode.to_string(),
                format!("{:.4}", o.model_hz),
                format!("{:.4}", o.measured_hz),
                format!("{:+.2}", 100.0 * o.relative_change),
            ]
        })
        .collect();
    println!("measured frequencies used in place of the computed ones (shapes kept):");
    println!("{}", table(&["mode", "model [Hz]", "measured [Hz]", "change [%]"], rows));
}
