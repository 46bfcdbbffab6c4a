// Package cell defines the reference cells of the formwright runtime and
// their topology: vertex coordinates, local edges and local facets, and
// the mapping of each cell (and Lagrange degree) onto the cell types of
// the open VTK file-format standard.
//
// Place in the flow lang -> compiler -> runtime: cell is the lowest
// runtime package. The generated element kernels never see it directly;
// runtime/quadrature, runtime/element and runtime/mesh build on it, and
// the assembly and output packages use its VTK tables.
//
// # Reference geometry
//
// Simplices live on the unit simplex with vertex 0 at the origin and
// vertex k at the unit vector e_k:
//
//	Segment     [0,1]:                 v0=0, v1=1
//	Triangle     {x,y >= 0, x+y <= 1}:  v0=(0,0), v1=(1,0), v2=(0,1)
//	Tetrahedron  {x,y,z >= 0, x+y+z <= 1}: v0=0, v1=e1, v2=e2, v3=e3
//
// Tensor-product cells live on [-1,1]^d, vertices counted
// counter-clockwise in the plane z=-1 and then again in z=+1
// (the VTK order):
//
//	Quadrilateral  v0=(-1,-1) v1=(1,-1) v2=(1,1) v3=(-1,1)
//	Hexahedron     v0..v3 as the quadrilateral at z=-1, v4..v7 at z=+1
//
// Reference measures: segment 1, triangle 1/2, tetrahedron 1/6,
// quadrilateral 4, hexahedron 8 (see Measure).
//
// # Local facets and their orientation
//
// On simplices, local facet i is the facet opposite local vertex i. The
// vertex list of every facet is ordered so that the outward normal follows
// from it:
//
//   - 1D: a facet is one vertex; facet 0 is vertex 1 (x=1, normal +x),
//     facet 1 is vertex 0 (x=0, normal -x).
//   - 2D: a facet (a,b) is traversed with the cell on its left, so the
//     outward normal is the tangent b-a turned clockwise: n = (t_y, -t_x).
//   - 3D: for a facet (a,b,c[,d]) the outward normal is the right-hand-rule
//     normal (b-a) x (c-b); quadrilateral faces are listed cyclically.
//
// FacetPoint maps the reference cell of a facet (FacetType) onto a local
// facet; FacetNormal and FacetScale give its outward unit normal and the
// measure ratio of that map, for boundary integrals (runtime/element).
//
// # Local edges
//
// The edge list is the one Lagrange P2/Q2 elements use for their edge
// nodes (runtime/element). On 2D cells it equals the facet list. On the
// interval the single edge is the cell itself. Tetrahedron edges are the
// vertex pairs in lexicographic order; hexahedron edges follow the VTK
// order (bottom ring, top ring, vertical edges).
//
// # VTK
//
// VTKType gives the VTK cell type code of a cell with Lagrange nodes of a
// degree, and VTKOrder the permutation from formwright's local node order
// (vertices, then edges, then faces, then interior; see runtime/element)
// to VTK's: VTK node i is formwright node VTKOrder(c, degree)[i].
// Sources: "VTK File Formats", VTK User's Guide (Kitware), the cell-type
// figures; the face-centre order of VTK_TRIQUADRATIC_HEXAHEDRON
// (x=-1, x=+1, y=-1, y=+1, z=-1, z=+1) is the one of the reference
// implementation vtkTriQuadraticHexahedron, recalled from memory.
package cell
