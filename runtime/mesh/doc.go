// Package mesh holds conforming meshes of one reference-cell type
// (runtime/cell), their named boundaries, structured generators for
// segments, rectangles and boxes (Span1, Span2, Span3), a command-line
// mesh spec, uniform
// refinement, and the reading and writing of meshes as VTK XML
// unstructured-grid files (.vtu), so that meshes from any mesh generator
// that writes VTK can be used.
//
// Place in the flow lang -> compiler -> runtime: a model is compiled to
// element kernels; at run time a Mesh supplies the cells those kernels are
// applied to, and its named boundaries are where the model's boundary
// conditions are imposed. A Mesh holds vertices only; the dof numbering
// creates P2/Q2 nodes on edges and faces (runtime/element node entities).
//
// # Boundaries
//
// Every mesh has named boundaries (boundary parts): name -> facets as
// (cell, local facet) pairs, sorted, in the facet numbering of
// runtime/cell. Parts may overlap. Generated meshes name the sides of
// their box: left/right (x = x0/x1), bottom/top (y = y0/y1, 2D and 3D),
// front/back (z = z0/z1, 3D); "all" is the whole boundary, on every mesh.
//
// # Mesh spec
//
// One generator word, span, followed by the bounds of the box (their
// number gives the dimension), the cell counts and an option:
//
//	span:0,1:64                         64 uniform cells
//	span:0,1:64:graded=1.05             h_{i+1} = 1.05 h_i
//	span:0,1,0,1:128x128:tri            diagonal lower-left to upper-right
//	span:0,1,0,1:128x128:tri-flip       the other diagonal
//	span:0,1,0,1:128x128:quartered      4 triangles per square around its centre
//	span:0,1,0,1:128x128:quad           quadrilaterals
//	span:0,1,0,1,0,1:8x8x8:tet          6 Kuhn tetrahedra per cube
//	span:0,1,0,1,0,1:8x8x8:hex          hexahedra
//	path/to/domain.vtu                  a mesh file (ReadVTUFile)
//
// The spellings of earlier versions (interval:, rect:, box:, the pattern
// crossed) are refused with the new spelling in the message.
//
// # Mesh files
//
// A mesh file is a VTK XML UnstructuredGrid file, the open VTK file
// format (Kitware, The VTK User's Guide, 11th ed., "VTK File Formats").
// ReadVTU reads what VTK's own writer and other programs produce: one
// <Piece>; DataArray formats ascii, binary (inline base64) and appended
// (raw or base64); header_type UInt32 (the default) or UInt64;
// compressor vtkZLibDataCompressor or none; byte_order LittleEndian or
// BigEndian; value types Int8 ... UInt64, Float32, Float64 and String.
// Point data and cell or field data other than the arrays below are
// skipped.
//
// Cells. The cells of the highest dimension present are the mesh; they
// must all have one shape: VTK_LINE or VTK_QUADRATIC_EDGE (1D);
// VTK_TRIANGLE or VTK_QUADRATIC_TRIANGLE; VTK_QUAD, VTK_PIXEL,
// VTK_QUADRATIC_QUAD or VTK_BIQUADRATIC_QUAD (2D); VTK_TETRA or
// VTK_QUADRATIC_TETRA; VTK_HEXAHEDRON, VTK_VOXEL,
// VTK_QUADRATIC_HEXAHEDRON or VTK_TRIQUADRATIC_HEXAHEDRON (3D). Only the
// corner vertices are kept (a curved quadratic cell becomes straight);
// points that are no corner of such a cell are dropped and the others
// renumbered in file order. A 2D mesh must have z = 0, a 1D mesh y = z = 0.
// A cell listed with the opposite orientation (all its Jacobian
// determinants negative) is repaired silently: simplices swap their last
// two vertices, a quadrilateral becomes (0,3,2,1), a hexahedron
// (0,3,2,1,4,7,6,5). A degenerate cell (a Jacobian determinant at some
// corner within 1e-12·h^d of zero, h its longest edge), a tangled one
// (determinants of both signs: vertices out of cyclic order, or a
// non-convex quadrilateral), non-finite coordinates and mixed cell types
// are errors.
//
// Facet cells. Cells of one dimension less — VTK_VERTEX in 1D, lines in
// 2D, triangles (tetrahedral meshes) or quadrilaterals (hexahedral
// meshes) in 3D, linear or quadratic — mark boundary facets; each must be
// a facet of exactly one cell. Cells of still lower dimension are
// ignored. The arrays, names chosen for formwright:
//
//	formwright_part        CellData, integer, one value per cell. On a
//	                       facet cell: the number of its boundary part
//	                       (>= 1; 0 = none). On a mesh cell: its region
//	                       number (>= 0), kept in Mesh.Regions.
//	formwright_part_ids    FieldData, integer, one tuple per named part:
//	                       the part numbers ...
//	formwright_part_names  FieldData, String (<Array type="String">, the
//	                       names NUL-terminated): ... and their names.
//
// A part name starts with a letter and continues with letters, digits,
// '_' or '-' (at most 255 bytes); "all" is reserved, the reader computes
// it as the facets that belong to exactly one cell. A part number used by
// facet cells but absent from the table is named "part" followed by the
// number ("part7"); a named part without facet cells is an empty part. A
// facet listed twice in one part is an error; a facet may be in several
// parts.
//
// WriteVTU writes any Mesh this way: version "1.0", LittleEndian,
// header_type UInt64; the cells (linear VTK types), then each boundary
// part except "all" in name order as facet cells (linear, oriented as
// Mesh.FacetVertices), parts numbered 1, 2, ... in name order; Float64
// points with three coordinates, Int64 connectivity and offsets, UInt8
// types, Int32 part numbers; either all arrays appended raw (Binary) or
// all as text (ASCII). ReadVTU(WriteVTU(m)) reproduces m exactly. Files
// written this way are read by VTK's own vtkXMLUnstructuredGridReader
// (TestVTKReadsWrittenFiles). The unit square as two triangles with its
// bottom edge as part "bottom", in ASCII:
//
//	<?xml version="1.0"?>
//	<VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" header_type="UInt64">
//	  <UnstructuredGrid>
//	    <FieldData>
//	      <DataArray type="Int32" Name="formwright_part_ids" NumberOfTuples="1" format="ascii">1</DataArray>
//	      <Array type="String" Name="formwright_part_names" NumberOfTuples="1" format="ascii">98 111 116 116 111 109 0</Array>
//	    </FieldData>
//	    <Piece NumberOfPoints="4" NumberOfCells="3">
//	      <CellData>
//	        <DataArray type="Int32" Name="formwright_part" format="ascii">0 0 1</DataArray>
//	      </CellData>
//	      <Points>
//	        <DataArray type="Float64" NumberOfComponents="3" format="ascii">0 0 0  1 0 0  1 1 0  0 1 0</DataArray>
//	      </Points>
//	      <Cells>
//	        <DataArray type="Int64" Name="connectivity" format="ascii">0 1 2  0 2 3  0 1</DataArray>
//	        <DataArray type="Int64" Name="offsets" format="ascii">3 6 8</DataArray>
//	        <DataArray type="UInt8" Name="types" format="ascii">5 5 3</DataArray>
//	      </Cells>
//	    </Piece>
//	  </UnstructuredGrid>
//	</VTKFile>
//
// Errors are *FileError values naming the file and, where known, the XML
// line, the cell index or the point index in the file. Memory is bounded:
// NumberOfPoints, NumberOfCells and the connectivity length are checked
// against Limits (DefaultLimits: 2^24 points and cells, 2^27 connectivity
// entries) and every binary byte count against the size those imply,
// before arrays are allocated; buffers grow only as data actually
// arrives. The XML markup outside array data may not exceed 1 MiB, a file
// may name at most 65536 parts.
//
// testdata holds meshes of an L-shaped domain and of a square with a
// square hole (triangles and quadrilaterals, named parts), and files
// written by VTK itself (testdata/vtkwritten, with the script that made
// them).
//
// # Refinement
//
// Refine cuts every cell into 2^d children — midpoint subdivision of
// triangles, the regular refinement of J. Bey (Tetrahedral grid
// refinement, Computing 55 (1995) 355–378) for tetrahedra, halving along
// each reference axis for intervals, quadrilaterals and hexahedra — and
// passes boundary parts and regions to the children, all positively
// oriented.
package mesh
