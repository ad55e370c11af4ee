//! Structure-aware fuzzing of the model checks: start from one of the example and starter models
//! (known to be valid) and apply edits chosen by the fuzzer's bytes — a number replaced by an
//! extreme or arbitrary finite value, an array entry removed or duplicated, a string replaced by
//! another string of the same model, an object member removed. Every edited model must be accepted
//! or refused with an error; assembly of small accepted models must not panic either.

#![no_main]

use std::path::Path;

use antinode::mesh::{Limits, parse_model, validate_with};
use antinode::solver::{AssemblyOptions, assemble};
use libfuzzer_sys::fuzz_target;
use serde_json::Value;

const SEEDS: [&str; 7] = [
    include_str!("../seeds/model/fan-shaft.json"),
    include_str!("../seeds/model/gantry-boom.json"),
    include_str!("../seeds/model/enclosure-panel.json"),
    include_str!("../seeds/model/interface-example.json"),
    include_str!("../seeds/model/starter-tube.json"),
    include_str!("../seeds/model/starter-panel.json"),
    include_str!("../seeds/model/starter-beam.json"),
];

/// Values that sit on or beyond the edges of what the model checks allow.
const SPECIAL: [f64; 16] =
    [0.0, -0.0, 1.0, -1.0, 0.5, 2.0, 1e-300, -1e-300, 1e300, -1e300, 1e9, 360.0, 1e-9, 3.0, 100.0, -360.0];

/// Generated parts are capped well below the default limit, so that one input takes
/// milliseconds (the default limit itself is unit-tested in the mesh crate). The largest seed has
/// 425 nodes; edits that multiply element counts are refused by this limit (the refusal path is
/// what is exercised there) instead of spending most of the run generating large parts.
const LIMITS: Limits = Limits { max_nodes: 1000 };

/// Models above this many nodes are only read and validated.
const ASSEMBLE_MAX_NODES: usize = 30;

fuzz_target!(|data: &[u8]| {
    let Some((&pick, mut edits)) = data.split_first() else { return };
    let Ok(mut model) = serde_json::from_str::<Value>(SEEDS[pick as usize % SEEDS.len()]) else { return };
    while edits.len() >= 4 {
        let (op, rest) = edits.split_at(4);
        edits = rest;
        apply(&mut model, op, &mut edits);
    }
    let Ok(text) = serde_json::to_string(&model) else { return };
    let Ok(model) = parse_model(&text, Path::new("fuzz.json")) else { return };
    let Ok(structure) = validate_with(&model, Path::new(""), &LIMITS) else { return };
    if structure.nodes.len() > ASSEMBLE_MAX_NODES {
        return;
    }
    for include_absorbers in [false, true] {
        let _ = assemble(&structure, AssemblyOptions { include_absorbers });
    }
});

/// One edit: `op[0]` says what, `op[1..3]` which leaf (counted depth-first), `op[3]` how.
fn apply(model: &mut Value, op: &[u8], rest: &mut &[u8]) {
    let target = usize::from(u16::from_le_bytes([op[1], op[2]]));
    match op[0] % 5 {
        0 => {
            let value = SPECIAL[usize::from(op[3]) % SPECIAL.len()];
            set_number(model, target, value);
        }
        1 => {
            // An arbitrary finite number from the next eight bytes.
            if rest.len() >= 8 {
                let (bytes, tail) = rest.split_at(8);
                *rest = tail;
                let mut b = [0u8; 8];
                b.copy_from_slice(bytes);
                let value = f64::from_le_bytes(b);
                if value.is_finite() {
                    set_number(model, target, value);
                }
            }
        }
        2 => edit_array(model, target, op[3] % 2 == 0),
        3 => {
            let mut strings = Vec::new();
            collect_strings(model, &mut strings);
            if !strings.is_empty() {
                let replacement = strings[usize::from(op[3]) % strings.len()].clone();
                set_string(model, target, replacement);
            }
        }
        _ => remove_member(model, target),
    }
}

/// What kind of value an edit aims at.
#[derive(Clone, Copy, PartialEq)]
enum Kind {
    Number,
    Str,
    Array,
    Object,
}

/// JSON pointers of every value of `kind`, depth first.
fn paths(v: &Value, kind: Kind, at: &str, out: &mut Vec<String>) {
    let is = match v {
        Value::Number(_) => kind == Kind::Number,
        Value::String(_) => kind == Kind::Str,
        Value::Array(_) => kind == Kind::Array,
        Value::Object(_) => kind == Kind::Object,
        _ => false,
    };
    if is {
        out.push(at.to_string());
    }
    match v {
        Value::Array(items) => {
            for (i, x) in items.iter().enumerate() {
                paths(x, kind, &format!("{at}/{i}"), out);
            }
        }
        Value::Object(map) => {
            for (k, x) in map {
                let key = k.replace('~', "~0").replace('/', "~1");
                paths(x, kind, &format!("{at}/{key}"), out);
            }
        }
        _ => {}
    }
}

/// The `target`-th value of `kind` (modulo their count).
fn pick<'a>(model: &'a mut Value, kind: Kind, target: usize) -> Option<&'a mut Value> {
    let mut all = Vec::new();
    paths(model, kind, "", &mut all);
    if all.is_empty() {
        return None;
    }
    let path = all.swap_remove(target % all.len());
    model.pointer_mut(&path)
}

fn set_number(model: &mut Value, target: usize, value: f64) {
    if let (Some(slot), Some(number)) = (pick(model, Kind::Number, target), serde_json::Number::from_f64(value)) {
        *slot = Value::Number(number);
    }
}

fn set_string(model: &mut Value, target: usize, value: String) {
    if let Some(slot) = pick(model, Kind::Str, target) {
        *slot = Value::String(value);
    }
}

fn collect_strings(v: &Value, out: &mut Vec<String>) {
    match v {
        Value::Array(items) => items.iter().for_each(|x| collect_strings(x, out)),
        Value::Object(map) => {
            for (k, x) in map {
                out.push(k.clone());
                collect_strings(x, out);
            }
        }
        Value::String(s) => out.push(s.clone()),
        _ => {}
    }
}

fn edit_array(model: &mut Value, target: usize, remove: bool) {
    if let Some(Value::Array(items)) = pick(model, Kind::Array, target) {
        if items.is_empty() {
            return;
        }
        let i = target % items.len();
        if remove {
            items.remove(i);
        } else {
            let copy = items[i].clone();
            items.insert(i, copy);
        }
    }
}

fn remove_member(model: &mut Value, target: usize) {
    if let Some(Value::Object(map)) = pick(model, Kind::Object, target) {
        let key = map.keys().nth(target % map.len().max(1)).cloned();
        if let Some(key) = key {
            map.remove(&key);
        }
    }
}
