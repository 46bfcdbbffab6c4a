// Package output writes formwright results to files: VTK XML unstructured
// grids (.vtu) for visualisation, CSV tables of nodal values, and the
// atomic file replacement both use.
//
// Place in the flow lang -> compiler -> runtime: after runtime/linsolve has
// solved the assembled system, the command converts the mesh and the
// fields into the mesh-independent Grid value defined here and calls
// WriteVTU or WriteCSV, usually through WriteFileAtomic so that a failed
// run never leaves a truncated file or clobbers a previous result.
//
// The .vtu writer follows the VTK XML file format, an open standard
// (Kitware, The VTK User's Guide, 11th ed., "VTK File Formats"): a
// VTKFile element of type "UnstructuredGrid", version "1.0",
// byte_order "LittleEndian" and an explicit header_type, one Piece with
// PointData, CellData, Points and Cells (connectivity, offsets, types).
// Two encodings are offered:
//
//   - ASCII: every DataArray has format="ascii"; numbers are written with
//     strconv 'g' and precision -1, i.e. the shortest text that reads back
//     to the same float64 (exact round trip).
//   - Binary: every DataArray has format="appended" and an offset
//     attribute; an AppendedData element with encoding="raw" holds, after
//     a single '_' marker, for each array a byte-count header (UInt32 or
//     UInt64, as header_type says, little endian) followed by the raw
//     little-endian values. Offsets count bytes from the first byte after
//     '_'. Points and fields are Float64, connectivity and offsets Int64,
//     cell types UInt8.
//
// The version string "1.0" together with header_type is what recent VTK
// writers emit (recalled from memory of files written by VTK 8/9, not
// re-checked against the reader source).
package output
