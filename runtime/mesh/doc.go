// Package mesh holds conforming meshes of one reference-cell type
// (runtime/cell), their named boundaries, structured generators for
// intervals, rectangles and boxes, a command-line mesh spec, and a
// plain-text mesh file format.
//
// Place in the flow lang -> compiler -> runtime: a model is compiled to
// element kernels; at run time a Mesh supplies the cells those kernels are
// applied to, and its named boundaries are where the model's boundary
// conditions are imposed. A Mesh holds vertices only; the dof numbering
// creates P2/Q2 nodes on edges and faces (runtime/element node entities).
//
// # Boundaries
//
// Every mesh has named boundaries: name -> facets as (cell, local facet)
// pairs, sorted, in the facet numbering of runtime/cell. Generated meshes
// name the sides of their box: left/right (x = x0/x1), bottom/top
// (y = y0/y1, 2D and 3D), front/back (z = z0/z1, 3D); "all" is the whole
// boundary.
//
// # Mesh spec
//
//	interval:0,1:64                 64 uniform cells
//	interval:0,1:64:graded=1.05     h_{i+1} = 1.05 h_i
//	rect:0,1,0,1:128x128:tri        diagonal lower-left to upper-right
//	rect:0,1,0,1:128x128:tri-flip   the other diagonal
//	rect:0,1,0,1:128x128:crossed    4 triangles per square around its centre
//	rect:0,1,0,1:128x128:quad       quadrilaterals
//	box:0,1,0,1,0,1:8x8x8:tet       6 Kuhn tetrahedra per cube
//	box:0,1,0,1,0,1:8x8x8:hex       hexahedra
//	path/to/file.mesh               anything else: a mesh file
//
// # Mesh file format (formwright mesh, version 1)
//
// A text file of records, one per line; fields are separated by blanks;
// '#' starts a comment running to the end of the line; blank lines are
// ignored. The records come in this order:
//
//	formwright-mesh 1            magic word and format version
//	dimension D                  1, 2 or 3
//	cell NAME                    interval, triangle, tetrahedron,
//	                             quadrilateral or hexahedron (dimension D)
//	vertices NV                  then NV records of D coordinates each
//	cells NC                     then NC records of vertex indices, 0-based,
//	                             in the reference vertex order of the cell
//	                             (runtime/cell), positively oriented
//	boundary NAME NF             zero or more: NF records, each the vertex
//	                             indices of one facet, in any order
//	end
//
// Boundary names start with a letter and continue with letters, digits,
// '_' or '-'; a name appears once; "all" is reserved and computed by the
// reader as the set of facets that belong to exactly one cell. A boundary
// facet must be a facet of exactly one cell. Coordinates are decimal
// floating-point numbers (as Go's strconv.ParseFloat reads them, finite
// only). An example, the unit square as two triangles:
//
//	formwright-mesh 1
//	dimension 2
//	cell triangle
//	vertices 4
//	0 0
//	1 0
//	1 1
//	0 1
//	cells 2
//	0 1 2
//	0 2 3
//	boundary bottom 1
//	0 1
//	boundary left 1
//	3 0
//	end
//
// Read reports malformed input as a *FormatError with the line number:
// wrong counts, bad numbers, indices out of range, facets that are no
// cell's facet (or are interior), inverted or degenerate cells, misplaced
// records. Write writes this format; Read(Write(m)) reproduces m exactly.
package mesh
