package mesh

import "github.com/formwright/formwright/runtime/cell"

// VTK cell types the reader accepts. Codes, node counts and node orders
// from the cell-type figures of "VTK File Formats" (Kitware, The VTK
// User's Guide, 11th ed.): every listed type numbers its corner vertices
// first, in the corner order of the linear cell of the same shape, except
// VTK_PIXEL and VTK_VOXEL, whose corners are in lexicographic (x fastest)
// order. The codes were checked against the constants of VTK 9.1's Python
// module (vtk.VTK_QUADRATIC_HEXAHEDRON == 25, ...).
type vtkCell struct {
	name  string    // the VTK name, for messages
	shape cell.Type // 0 for VTK_VERTEX
	dim   int
	nodes int // nodes in the connectivity list
	// perm[i] is the VTK node that is formwright vertex i; nil means the
	// first NumVertices nodes in order.
	perm []int
}

// vertex returns the VTK node index of formwright vertex i.
func (c *vtkCell) vertex(i int) int {
	if c.perm != nil {
		return c.perm[i]
	}
	return i
}

// numVertices is the number of corner vertices.
func (c *vtkCell) numVertices() int {
	if c.shape == 0 {
		return 1
	}
	return c.shape.NumVertices()
}

var vtkCells = map[int]*vtkCell{
	cell.VTKVertex:                 {"VTK_VERTEX", 0, 0, 1, nil},
	cell.VTKLine:                   {"VTK_LINE", cell.Segment, 1, 2, nil},
	cell.VTKQuadraticEdge:          {"VTK_QUADRATIC_EDGE", cell.Segment, 1, 3, nil},
	cell.VTKTriangle:               {"VTK_TRIANGLE", cell.Triangle, 2, 3, nil},
	cell.VTKQuadraticTriangle:      {"VTK_QUADRATIC_TRIANGLE", cell.Triangle, 2, 6, nil},
	cell.VTKQuad:                   {"VTK_QUAD", cell.Quadrilateral, 2, 4, nil},
	cell.VTKPixel:                  {"VTK_PIXEL", cell.Quadrilateral, 2, 4, []int{0, 1, 3, 2}},
	cell.VTKQuadraticQuad:          {"VTK_QUADRATIC_QUAD", cell.Quadrilateral, 2, 8, nil},
	cell.VTKBiquadraticQuad:        {"VTK_BIQUADRATIC_QUAD", cell.Quadrilateral, 2, 9, nil},
	cell.VTKTetra:                  {"VTK_TETRA", cell.Tetrahedron, 3, 4, nil},
	cell.VTKQuadraticTetra:         {"VTK_QUADRATIC_TETRA", cell.Tetrahedron, 3, 10, nil},
	cell.VTKHexahedron:             {"VTK_HEXAHEDRON", cell.Hexahedron, 3, 8, nil},
	cell.VTKVoxel:                  {"VTK_VOXEL", cell.Hexahedron, 3, 8, []int{0, 1, 3, 2, 4, 5, 7, 6}},
	cell.VTKQuadraticHexahedron:    {"VTK_QUADRATIC_HEXAHEDRON", cell.Hexahedron, 3, 20, nil},
	cell.VTKTriquadraticHexahedron: {"VTK_TRIQUADRATIC_HEXAHEDRON", cell.Hexahedron, 3, 27, nil},
}

// maxCellNodes is the largest node count in vtkCells (the triquadratic
// hexahedron); it bounds the connectivity length by 27 × NumberOfCells.
const maxCellNodes = 27

// facetVTKType is the linear VTK type the writer uses for the facets of a
// mesh of cell c.
func facetVTKType(c cell.Type) int {
	switch c {
	case cell.Segment:
		return cell.VTKVertex
	case cell.Triangle, cell.Quadrilateral:
		return cell.VTKLine
	case cell.Tetrahedron:
		return cell.VTKTriangle
	}
	return cell.VTKQuad
}

// Orientation repairs, in formwright's vertex numbering: a cell whose
// corner Jacobian determinants are all negative is a mirror image of a
// valid cell, and the permutation below reflects it back. For simplices
// it swaps the last two vertices (the interval's two vertices); for the
// quadrilateral it reverses the cyclic order (0,3,2,1); for the
// hexahedron it reverses both rings, (0,3,2,1,4,7,6,5). Each is a
// reflection of the reference cell, so it negates every Jacobian
// determinant of the P1/Q1 map at once.
var flipOrder = [...][]int{
	cell.Segment:       {1, 0},
	cell.Triangle:      {0, 2, 1},
	cell.Tetrahedron:   {0, 1, 3, 2},
	cell.Quadrilateral: {0, 3, 2, 1},
	cell.Hexahedron:    {0, 3, 2, 1, 4, 7, 6, 5},
}
