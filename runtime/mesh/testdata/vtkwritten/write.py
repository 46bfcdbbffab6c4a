"""Writes the .vtu files of this directory with VTK's own XML writer.

Run from this directory with a python3 that can import vtk (Debian:
python3-vtk9):

    python3 write.py

The files were made with VTK 9.1.0. The Go test TestVTKWrittenFiles reads
each of them with mesh.ReadVTU and compares with the meshes it expects;
the fixtures below and the expectations there describe the same meshes.
Every fixture is an invented example, not taken from any application.
"""
import vtk

PART = "formwright_part"
IDS = "formwright_part_ids"
NAMES = "formwright_part_names"


def grid(points, cells, parts, names, part_array=vtk.vtkIntArray):
    g = vtk.vtkUnstructuredGrid()
    pts = vtk.vtkPoints()
    pts.SetDataTypeToDouble()
    for p in points:
        pts.InsertNextPoint(p)
    g.SetPoints(pts)
    for vtk_type, nodes in cells:
        g.InsertNextCell(vtk_type, len(nodes), nodes)
    a = part_array()
    a.SetName(PART)
    for v in parts:
        a.InsertNextValue(v)
    g.GetCellData().AddArray(a)
    if names:
        ids = vtk.vtkIntArray()
        ids.SetName(IDS)
        s = vtk.vtkStringArray()
        s.SetName(NAMES)
        for i, n in names:
            ids.InsertNextValue(i)
            s.InsertNextValue(n)
        g.GetFieldData().AddArray(ids)
        g.GetFieldData().AddArray(s)
    return g


def write(g, name, mode, header64=False, zlib=False, base64=False,
          big=False, block=None):
    w = vtk.vtkXMLUnstructuredGridWriter()
    w.SetInputData(g)
    w.SetFileName(name)
    {"ascii": w.SetDataModeToAscii, "binary": w.SetDataModeToBinary,
     "appended": w.SetDataModeToAppended}[mode]()
    if mode == "appended":
        w.SetEncodeAppendedData(base64)
    if header64:
        w.SetHeaderTypeToUInt64()
    else:
        w.SetHeaderTypeToUInt32()
    if zlib:
        w.SetCompressorTypeToZLib()
    else:
        w.SetCompressorTypeToNone()
    if block:
        w.SetBlockSize(block)
    if big:
        w.SetByteOrderToBigEndian()
    else:
        w.SetByteOrderToLittleEndian()
    if not w.Write():
        raise SystemExit("writing " + name + " failed")


# The unit square as two triangles, the second one listed clockwise (the
# reader repairs it), with the bottom edge in part 1 "bottom" and the left
# edge in part 2 "left"; point 4 is used by no cell.
square = grid(
    [(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0), (5, 5, 0)],
    [(vtk.VTK_TRIANGLE, [0, 1, 2]), (vtk.VTK_TRIANGLE, [0, 3, 2]),
     (vtk.VTK_LINE, [0, 1]), (vtk.VTK_LINE, [3, 0])],
    [0, 0, 1, 2], [(1, "bottom"), (2, "left")])

variants = [
    ("ascii", dict(mode="ascii")),
    ("binary-u32", dict(mode="binary")),
    ("binary-u64-zlib16", dict(mode="binary", header64=True, zlib=True, block=16)),
    ("appended-raw-u32", dict(mode="appended")),
    ("appended-raw-u64-zlib", dict(mode="appended", header64=True, zlib=True)),
    ("appended-raw-u32-zlib16", dict(mode="appended", zlib=True, block=16)),
    ("appended-base64-u32", dict(mode="appended", base64=True)),
    ("appended-base64-u64-zlib16", dict(mode="appended", base64=True, header64=True, zlib=True, block=16)),
    ("bigendian-appended-raw-u32", dict(mode="appended", big=True)),
    ("bigendian-binary-u64-zlib16", dict(mode="binary", big=True, header64=True, zlib=True, block=16)),
    ("bigendian-appended-base64-u64", dict(mode="appended", big=True, base64=True, header64=True)),
]
for suffix, kw in variants:
    write(square, "square-" + suffix + ".vtu", **kw)

# The same square with Float32 points, Int32 connectivity and offsets,
# and the part numbers as UInt16.
f32 = vtk.vtkPoints()
f32.SetDataTypeToFloat()
for i in range(square.GetNumberOfPoints()):
    f32.InsertNextPoint(square.GetPoint(i))
small = grid([], [], [], [(1, "bottom"), (2, "left")], vtk.vtkUnsignedShortArray)
small.SetPoints(f32)
small.Allocate(4)
for i in range(square.GetNumberOfCells()):
    c = square.GetCell(i)
    small.InsertNextCell(c.GetCellType(), c.GetPointIds())
small.GetCells().ConvertTo32BitStorage()
for v in [0, 0, 1, 2]:
    small.GetCellData().GetArray(PART).InsertNextValue(v)
write(small, "square-float32-int32-ascii.vtu", mode="ascii")
write(small, "square-float32-int32-appended-raw-zlib.vtu", mode="appended", zlib=True)

# A quadratic tetrahedron (10 nodes, the mid-edge nodes dropped) with
# its face z = 0 as a quadratic triangle in part 3 "base", and region 5.
tet = grid(
    [(0, 0, 0), (1, 0, 0), (0, 1, 0), (0, 0, 1),
     (0.5, 0, 0), (0.5, 0.5, 0), (0, 0.5, 0), (0, 0, 0.5), (0.5, 0, 0.5), (0, 0.5, 0.5)],
    [(vtk.VTK_QUADRATIC_TETRA, list(range(10))),
     (vtk.VTK_QUADRATIC_TRIANGLE, [0, 2, 1, 6, 5, 4])],
    [5, 3], [(3, "base")])
write(tet, "quadratic-tetra-ascii.vtu", mode="ascii")
write(tet, "quadratic-tetra-appended-raw-zlib.vtu", mode="appended", zlib=True)

# A 20-node quadratic hexahedron [0,1]^3 beside a 27-node triquadratic
# hexahedron [1,2]x[0,1]x[0,1]; the face x = 2 is a biquadratic quad in
# part 1 "outlet"; the face x = 0 is a linear quad in part 2 "inlet".
def hexnodes(x0):
    c = [(x0, 0, 0), (x0 + 1, 0, 0), (x0 + 1, 1, 0), (x0, 1, 0),
         (x0, 0, 1), (x0 + 1, 0, 1), (x0 + 1, 1, 1), (x0, 1, 1)]
    edges = [(0, 1), (1, 2), (2, 3), (3, 0), (4, 5), (5, 6), (6, 7), (7, 4),
             (0, 4), (1, 5), (2, 6), (3, 7)]
    mids = [tuple((a + b) / 2 for a, b in zip(c[i], c[j])) for i, j in edges]
    faces = [(0, 4, 7, 3), (1, 2, 6, 5), (0, 1, 5, 4), (3, 7, 6, 2), (0, 3, 2, 1), (4, 5, 6, 7)]
    fc = [tuple(sum(c[k][d] for k in f) / 4 for d in range(3)) for f in faces]
    centre = (x0 + 0.5, 0.5, 0.5)
    return c + mids + fc + [centre]


pts, index = [], {}


def pid(p):
    if p not in index:
        index[p] = len(pts)
        pts.append(p)
    return index[p]


h0 = [pid(p) for p in hexnodes(0)[:20]]
h1 = [pid(p) for p in hexnodes(1)]
outlet = [h1[1], h1[2], h1[6], h1[5], h1[9], h1[18], h1[13], h1[17], h1[21]]
inlet = [h0[0], h0[4], h0[7], h0[3]]
hexes = grid(pts,
             [(vtk.VTK_QUADRATIC_HEXAHEDRON, h0), (vtk.VTK_TRIQUADRATIC_HEXAHEDRON, h1),
              (vtk.VTK_BIQUADRATIC_QUAD, outlet), (vtk.VTK_QUAD, inlet)],
             [0, 0, 1, 2], [(1, "outlet"), (2, "inlet")])
write(hexes, "quadratic-hexahedra-ascii.vtu", mode="ascii")
write(hexes, "quadratic-hexahedra-binary-zlib.vtu", mode="binary", zlib=True)

# 2D: an 8-node quadratic quad [0,1]^2 beside a 9-node biquadratic quad
# [1,2]x[0,1], edge x = 0 a quadratic edge in part 1 "wall".
q8 = [(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0), (0.5, 0, 0), (1, 0.5, 0), (0.5, 1, 0), (0, 0.5, 0)]
q9 = [(1.5, 0, 0), (2, 0.5, 0), (1.5, 1, 0), (2, 0, 0), (2, 1, 0), (1.5, 0.5, 0)]
quads = grid(q8 + q9,
             [(vtk.VTK_QUADRATIC_QUAD, list(range(8))),
              (vtk.VTK_BIQUADRATIC_QUAD, [1, 11, 12, 2, 8, 9, 10, 5, 13]),
              (vtk.VTK_QUADRATIC_EDGE, [3, 0, 7])],
             [0, 0, 1], [(1, "wall")])
write(quads, "quadratic-quads-ascii.vtu", mode="ascii")
write(quads, "quadratic-quads-appended-base64.vtu", mode="appended", base64=True)

# 1D: two quadratic edges on [0,2] (the second listed right to left) and
# the end points as vertex cells in parts 1 "inflow" and 2 "outflow".
line = grid([(0, 0, 0), (1, 0, 0), (2, 0, 0), (0.5, 0, 0), (1.5, 0, 0)],
            [(vtk.VTK_QUADRATIC_EDGE, [0, 1, 3]), (vtk.VTK_QUADRATIC_EDGE, [2, 1, 4]),
             (vtk.VTK_VERTEX, [0]), (vtk.VTK_VERTEX, [2])],
            [0, 0, 1, 2], [(1, "inflow"), (2, "outflow")])
write(line, "quadratic-edges-ascii.vtu", mode="ascii")
write(line, "quadratic-edges-appended-raw.vtu", mode="appended")
