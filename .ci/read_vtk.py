#!/usr/bin/env python3
"""An outside reader opens every VTK file the examples write.

Run by .ci/run inside a virtual environment with meshio (and numpy) installed from PyPI. It runs the
example commands with the built `antinode` binary, then reads every .vtu and .pvd they wrote with
meshio (an independent VTK reader) and checks:

- point counts against the node count of `antinode check --json`, cell counts against its beam and
  shell counts (cell array `kind`: 1 beam, 5 shell);
- every frame a .pvd collection lists exists, reads, and has the same points and cells;
- one mode vector: the translation of each mode at its `largest_translation` node in modes.json
  equals the VTK point vector there (to the 1e-9 relative of the text round trip and base64 floats),
  and no point of the VTK vector is larger.

Usage: read_vtk.py ANTINODE_BINARY OUTPUT_FOLDER
Exits non-zero on the first failed check.
"""

import json
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import meshio
import numpy as np


def run(binary, *args):
    out = subprocess.run([binary, *args], check=True, capture_output=True, text=True)
    return out.stdout


def fail(message):
    print(f"read_vtk: FAILED: {message}", file=sys.stderr)
    sys.exit(1)


def counts(mesh):
    n_cells = sum(len(block.data) for block in mesh.cells)
    kinds = np.concatenate([np.asarray(k).ravel() for k in mesh.cell_data["kind"]])
    return len(mesh.points), n_cells, kinds


def check_grid(path, model):
    mesh = meshio.read(path)
    points, cells, kinds = counts(mesh)
    if points != model["nodes"]:
        fail(f"{path}: {points} points, the model has {model['nodes']} nodes")
    if (kinds == 1).sum() != model["beams"] or (kinds == 5).sum() != model["shells"]:
        fail(f"{path}: {(kinds == 1).sum()} beam and {(kinds == 5).sum()} shell cells, "
             f"the model has {model['beams']} and {model['shells']}")
    if cells < model["beams"] + model["shells"]:
        fail(f"{path}: {cells} cells")
    for name in ["part", "thickness", "kind"]:
        if name not in mesh.cell_data:
            fail(f"{path}: no cell array {name!r}")
    print(f"read_vtk: {path}: {points} points, {cells} cells")
    return mesh


def check_modes(folder, model):
    report = json.loads((folder / "modes.json").read_text())
    mesh = check_grid(folder / "modes.vtu", model)
    for mode in report["modes"]:
        number = mode["number"]
        name = next((k for k in mesh.point_data if k.startswith(f"mode_{number}_") and k.endswith("Hz")), None)
        if name is None:
            fail(f"{folder / 'modes.vtu'}: no vector of mode {number}")
        if f"mode_{number}_mass_ratio_per_kg_normal" not in mesh.point_data:
            fail(f"{folder / 'modes.vtu'}: no mass-ratio map of mode {number}")
        vectors = np.asarray(mesh.point_data[name])
        largest = mode["largest_translation"]
        got = vectors[largest["point_index"]]
        want = np.asarray(largest["translation"])
        if np.linalg.norm(got - want) > 1e-9 * np.linalg.norm(want):
            fail(f"mode {number}: VTK vector {got} at point {largest['point_index']}, modes.json {want}")
        if np.linalg.norm(vectors, axis=1).max() > np.linalg.norm(want) * (1 + 1e-12):
            fail(f"mode {number}: a VTK point moves more than modes.json's largest translation")
        f_vtk = float(name.split("_")[2][:-2])
        if abs(f_vtk - mode["frequency_hz"]) > 1e-4 * max(1.0, mode["frequency_hz"]):
            fail(f"mode {number}: VTK names {f_vtk} Hz, modes.json {mode['frequency_hz']} Hz")
    print(f"read_vtk: {folder / 'modes.vtu'}: {len(report['modes'])} mode vectors match modes.json")


def check_collection(path, model):
    tree = ET.parse(path)
    files = [d.get("file") for d in tree.getroot().iter("DataSet")]
    if not files:
        fail(f"{path}: no data sets")
    for f in files:
        frame = path.parent / f
        if not frame.exists():
            fail(f"{path}: lists {f}, which does not exist")
        mesh = check_grid(frame, model)
        if "displacement" not in mesh.point_data:
            fail(f"{frame}: no displacement vectors")
    print(f"read_vtk: {path}: {len(files)} frames")


def main():
    binary, out = sys.argv[1], Path(sys.argv[2])
    jobs = [
        ("fan-shaft", "models/fan-shaft.json", ["modes", "models/fan-shaft.json"]),
        ("gantry-boom", "models/gantry-boom.json", ["modes", "models/gantry-boom.json", "--animate", "1", "--frames", "6"]),
        ("design", "models/fan-shaft.json", ["design", "models/fan-shaft.json"]),
    ]
    seen = 0
    for folder, model_file, args in jobs:
        target = out / folder
        run(binary, *args, "--out", str(target))
        model = json.loads(run(binary, "check", model_file, "--json"))
        if (target / "modes.json").exists():
            check_modes(target, model)
        for path in sorted(target.glob("*.pvd")):
            check_collection(path, model)
            seen += 1
        for path in sorted(target.glob("*.vtu")):
            # design.vtu holds the designed model: the same nodes and elements plus absorber cells.
            check_grid(path, model)
            seen += 1
    if seen < 4:
        fail(f"only {seen} VTK files were read")
    print(f"read_vtk: {seen} VTK files read by meshio {meshio.__version__}")


if __name__ == "__main__":
    main()
