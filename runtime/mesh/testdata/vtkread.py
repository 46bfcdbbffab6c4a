"""Reads .vtu files with VTK's own vtkXMLUnstructuredGridReader and prints,
for each file named on the command line, one JSON object per line: the
point coordinates, the cells (VTK type and point ids), the cell-data array
formwright_part, and the field-data arrays formwright_part_ids and
formwright_part_names. Used by TestVTKReadsWrittenFiles; needs a python3
that can import vtk (Debian: python3-vtk9)."""
import json
import sys

import vtk

for path in sys.argv[1:]:
    r = vtk.vtkXMLUnstructuredGridReader()
    r.SetFileName(path)
    r.Update()
    if r.GetErrorCode() != 0:
        raise SystemExit(path + ": VTK error code %d" % r.GetErrorCode())
    g = r.GetOutput()
    out = {"path": path, "points": [], "cells": [], "part": None, "ids": None, "names": None}
    for i in range(g.GetNumberOfPoints()):
        out["points"].append(list(g.GetPoint(i)))
    for i in range(g.GetNumberOfCells()):
        c = g.GetCell(i)
        ids = c.GetPointIds()
        out["cells"].append([c.GetCellType()] + [ids.GetId(k) for k in range(ids.GetNumberOfIds())])
    a = g.GetCellData().GetArray("formwright_part")
    if a is not None:
        out["part"] = [int(a.GetValue(i)) for i in range(a.GetNumberOfTuples())]
    fd = g.GetFieldData()
    a = fd.GetAbstractArray("formwright_part_ids")
    if a is not None:
        out["ids"] = [int(a.GetValue(i)) for i in range(a.GetNumberOfTuples())]
    a = fd.GetAbstractArray("formwright_part_names")
    if a is not None:
        out["names"] = [a.GetValue(i) for i in range(a.GetNumberOfValues())]
    print(json.dumps(out))
