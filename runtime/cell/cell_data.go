package cell

// Reference-cell data. Geometry and orientation conventions are in the
// package doc; VTK codes from "VTK File Formats" (Kitware, VTK User's
// Guide), cell-type table.

// Reference vertex coordinates, flat (vertex-major).
var (
	SegmentVertices       = []float64{0, 1}
	TriangleVertices      = []float64{0, 0, 1, 0, 0, 1}
	TetrahedronVertices   = []float64{0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 1}
	QuadrilateralVertices = []float64{-1, -1, 1, -1, 1, 1, -1, 1}
	HexahedronVertices    = []float64{
		-1, -1, -1, 1, -1, -1, 1, 1, -1, -1, 1, -1,
		-1, -1, 1, 1, -1, 1, 1, 1, 1, -1, 1, 1,
	}
)

// Local edges as vertex pairs.
var (
	SegmentEdges = [][2]int{{0, 1}}
	// Triangle edge i is opposite vertex i and equals facet i.
	TriangleEdges    = [][2]int{{1, 2}, {2, 0}, {0, 1}}
	TetrahedronEdges = [][2]int{{0, 1}, {0, 2}, {0, 3}, {1, 2}, {1, 3}, {2, 3}}
	// Quadrilateral edges equal its facets: bottom, right, top, left.
	QuadrilateralEdges = [][2]int{{0, 1}, {1, 2}, {2, 3}, {3, 0}}
	// Hexahedron edges in VTK order: ring z=-1, ring z=+1, vertical edges.
	HexahedronEdges = [][2]int{
		{0, 1}, {1, 2}, {2, 3}, {3, 0},
		{4, 5}, {5, 6}, {6, 7}, {7, 4},
		{0, 4}, {1, 5}, {2, 6}, {3, 7},
	}
)

// Local facets as vertex lists, oriented for the outward normal.
var (
	// Facet i is opposite vertex i, as on every simplex: facet 0 is the
	// point x=1 (normal +x), facet 1 the point x=0 (normal -x).
	SegmentFacets = [][]int{{1}, {0}}
	// Facet i is opposite vertex i; counter-clockwise traversal.
	TriangleFacets = [][]int{{1, 2}, {2, 0}, {0, 1}}
	// Facet i is opposite vertex i; (b-a)x(c-b) points outwards.
	TetrahedronFacets = [][]int{{1, 2, 3}, {0, 3, 2}, {0, 1, 3}, {0, 2, 1}}
	// Facets y=-1, x=+1, y=+1, x=-1.
	QuadrilateralFacets = [][]int{{0, 1}, {1, 2}, {2, 3}, {3, 0}}
	// Facets x=-1, x=+1, y=-1, y=+1, z=-1, z=+1 (the VTK face-centre
	// order of VTK_TRIQUADRATIC_HEXAHEDRON), listed cyclically.
	HexahedronFacets = [][]int{
		{0, 4, 7, 3}, {1, 2, 6, 5},
		{0, 1, 5, 4}, {3, 7, 6, 2},
		{0, 3, 2, 1}, {4, 5, 6, 7},
	}
)

// VTK cell type codes (open VTK file-format standard). VTKVertex, VTKPixel,
// VTKVoxel and VTKQuadraticHexahedron are never written for formwright
// fields; runtime/mesh reads them (a pixel or voxel is a quadrilateral or
// hexahedron with its vertices in lexicographic rather than cyclic order;
// the quadratic hexahedron is the 20-node serendipity cell).
const (
	VTKVertex                 = 1
	VTKLine                   = 3
	VTKTriangle               = 5
	VTKPixel                  = 8
	VTKQuad                   = 9
	VTKTetra                  = 10
	VTKVoxel                  = 11
	VTKHexahedron             = 12
	VTKQuadraticEdge          = 21
	VTKQuadraticTriangle      = 22
	VTKQuadraticQuad          = 23 // 8-node serendipity quad; not produced by formwright's Q2
	VTKQuadraticTetra         = 24
	VTKQuadraticHexahedron    = 25 // 20-node serendipity hexahedron
	VTKBiquadraticQuad        = 28
	VTKTriquadraticHexahedron = 29
)

var vtkLinear = [...]int{
	Segment: VTKLine, Triangle: VTKTriangle, Tetrahedron: VTKTetra,
	Quadrilateral: VTKQuad, Hexahedron: VTKHexahedron,
}

var vtkQuadratic = [...]int{
	Segment: VTKQuadraticEdge, Triangle: VTKQuadraticTriangle, Tetrahedron: VTKQuadraticTetra,
	Quadrilateral: VTKBiquadraticQuad, Hexahedron: VTKTriquadraticHexahedron,
}

// Permutations from formwright node order to VTK node order:
// VTK node i = formwright node order[i].
var vtkOrder1 = [...][]int{
	Segment:       {0, 1},
	Triangle:      {0, 1, 2},
	Tetrahedron:   {0, 1, 2, 3},
	Quadrilateral: {0, 1, 2, 3},
	Hexahedron:    {0, 1, 2, 3, 4, 5, 6, 7},
}

var vtkOrder2 = [...][]int{
	// VTK_QUADRATIC_EDGE: v0, v1, midpoint.
	Segment: {0, 1, 2},
	// VTK_QUADRATIC_TRIANGLE: v0 v1 v2, mid(0,1), mid(1,2), mid(2,0);
	// formwright edge nodes are 3=mid(1,2), 4=mid(2,0), 5=mid(0,1).
	Triangle: {0, 1, 2, 5, 3, 4},
	// VTK_QUADRATIC_TETRA: v0..v3, mid(0,1), mid(1,2), mid(2,0), mid(0,3),
	// mid(1,3), mid(2,3); formwright edge nodes 4..9 are (0,1), (0,2),
	// (0,3), (1,2), (1,3), (2,3).
	Tetrahedron: {0, 1, 2, 3, 4, 7, 5, 6, 8, 9},
	// VTK_BIQUADRATIC_QUAD: vertices, mid-edges (0,1),(1,2),(2,3),(3,0), centre.
	Quadrilateral: {0, 1, 2, 3, 4, 5, 6, 7, 8},
	// VTK_TRIQUADRATIC_HEXAHEDRON: vertices, 12 edges (same order), six face
	// centres x-,x+,y-,y+,z-,z+, centre.
	Hexahedron: {
		0, 1, 2, 3, 4, 5, 6, 7,
		8, 9, 10, 11, 12, 13, 14, 15, 16, 17, 18, 19,
		20, 21, 22, 23, 24, 25, 26,
	},
}

type info struct {
	dim      int
	vertices []float64
	edges    [][2]int
	facets   [][]int
	measure  float64
}

var cellInfo = [...]info{
	Segment:       {1, SegmentVertices, SegmentEdges, SegmentFacets, 1},
	Triangle:      {2, TriangleVertices, TriangleEdges, TriangleFacets, 0.5},
	Tetrahedron:   {3, TetrahedronVertices, TetrahedronEdges, TetrahedronFacets, 1.0 / 6},
	Quadrilateral: {2, QuadrilateralVertices, QuadrilateralEdges, QuadrilateralFacets, 4},
	Hexahedron:    {3, HexahedronVertices, HexahedronEdges, HexahedronFacets, 8},
}
