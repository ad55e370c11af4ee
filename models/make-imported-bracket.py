"""Writes models/imported-bracket.vtk: the invented sensor bracket of models/imported-bracket.json.

Legacy ASCII VTK, coordinates in millimetres (the model's "scale" is 0.001).
- property 1: base plate 240 x 160 mm in the X-Y plane at z = 0, 12 x 8 quads;
- property 2: upright flange in the Y-Z plane at x = 0, 160 mm wide and 80 mm high, split into
  triangles (8 x 4 squares, two triangles each); it shares the plate's nodes along x = 0;
- property 3: four flexure rods, one polyline of 4 segments from each plate corner 50 mm down.
Run: python3 models/make-imported-bracket.py > models/imported-bracket.vtk
"""

nx, ny = 12, 8
a, b = 240.0, 160.0
points = []
index = {}


def point(p):
    key = tuple(round(v, 9) for v in p)
    if key not in index:
        index[key] = len(points)
        points.append(p)
    return index[key]


cells = []  # (vtk type, [points], property)
for j in range(ny):
    for i in range(nx):
        q = [point((a * (i + di) / nx, b * (j + dj) / ny, 0.0)) for di, dj in ((0, 0), (1, 0), (1, 1), (0, 1))]
        cells.append((9, q, 1))
my, mz, h = 8, 4, 80.0
for k in range(mz):
    for j in range(my):
        c = [point((0.0, b * (j + dj) / my, h * (k + dk) / mz)) for dj, dk in ((0, 0), (1, 0), (1, 1), (0, 1))]
        cells.append((5, [c[0], c[1], c[2]], 2))
        cells.append((5, [c[0], c[2], c[3]], 2))
for x, y in ((0.0, 0.0), (a, 0.0), (a, b), (0.0, b)):
    rod = [point((x, y, -50.0 * s / 4)) for s in range(5)]
    cells.append((4, rod, 3))

print("# vtk DataFile Version 4.2")
print("Invented sensor bracket on four flexure rods (mm)")
print("ASCII")
print("DATASET UNSTRUCTURED_GRID")
print(f"POINTS {len(points)} double")
for p in points:
    print(" ".join(f"{v:g}" for v in p))
size = sum(len(c[1]) + 1 for c in cells)
print(f"CELLS {len(cells)} {size}")
for _, pts, _ in cells:
    print(len(pts), " ".join(str(p) for p in pts))
print(f"CELL_TYPES {len(cells)}")
for t, _, _ in cells:
    print(t)
print(f"CELL_DATA {len(cells)}")
print("SCALARS property int 1")
print("LOOKUP_TABLE default")
print(" ".join(str(c[2]) for c in cells))
