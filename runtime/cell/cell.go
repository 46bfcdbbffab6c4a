package cell

import "fmt"

// Type is a reference-cell shape. The zero value is not a valid cell.
type Type uint8

// The reference cells. Their geometry is described in the package doc.
const (
	Segment Type = iota + 1
	Triangle
	Tetrahedron
	Quadrilateral
	Hexahedron
)

// All lists every valid cell type, in declaration order.
var All = []Type{Segment, Triangle, Tetrahedron, Quadrilateral, Hexahedron}

func (c Type) valid() bool { return c >= Segment && c <= Hexahedron }

func (c Type) must() {
	if !c.valid() {
		panic(fmt.Sprintf("cell: invalid cell type %d", uint8(c)))
	}
}

// String returns the lower-case name of the cell ("triangle", ...).
func (c Type) String() string {
	switch c {
	case Segment:
		return "segment"
	case Triangle:
		return "triangle"
	case Tetrahedron:
		return "tetrahedron"
	case Quadrilateral:
		return "quadrilateral"
	case Hexahedron:
		return "hexahedron"
	}
	return fmt.Sprintf("cell.Type(%d)", uint8(c))
}

// Parse returns the cell type whose String is name.
func Parse(name string) (Type, error) {
	for _, c := range All {
		if c.String() == name {
			return c, nil
		}
	}
	return 0, fmt.Errorf("cell: unknown cell type %q (want interval, triangle, tetrahedron, quadrilateral or hexahedron)", name)
}

// Of returns the cell of dimension dim (1, 2 or 3): the interval in 1D;
// otherwise the triangle or tetrahedron, or with tensorProduct the
// quadrilateral or hexahedron. It returns 0 for other dimensions.
func Of(dim int, tensorProduct bool) Type {
	switch {
	case dim == 1:
		return Segment
	case dim == 2 && tensorProduct:
		return Quadrilateral
	case dim == 2:
		return Triangle
	case dim == 3 && tensorProduct:
		return Hexahedron
	case dim == 3:
		return Tetrahedron
	}
	return 0
}

// Dim is the topological (and reference-space) dimension of the cell.
func (c Type) Dim() int {
	c.must()
	return cellInfo[c].dim
}

// NumVertices is the number of vertices of the cell.
func (c Type) NumVertices() int {
	c.must()
	return len(cellInfo[c].vertices) / cellInfo[c].dim
}

// IsSimplex reports whether the cell is an interval, triangle or tetrahedron.
func (c Type) IsSimplex() bool {
	c.must()
	return c == Segment || c == Triangle || c == Tetrahedron
}

// Vertices returns the reference vertex coordinates, flat
// (NumVertices*Dim). The slice is shared: do not modify it.
func (c Type) Vertices() []float64 {
	c.must()
	return cellInfo[c].vertices
}

// Edges returns the local edges as vertex pairs. Shared: do not modify.
func (c Type) Edges() [][2]int {
	c.must()
	return cellInfo[c].edges
}

// Facets returns the local facets as vertex lists, ordered for the outward
// normal as described in the package doc. Shared: do not modify.
func (c Type) Facets() [][]int {
	c.must()
	return cellInfo[c].facets
}

// NumEdges is len(c.Edges()).
func (c Type) NumEdges() int { return len(c.Edges()) }

// NumFacets is len(c.Facets()).
func (c Type) NumFacets() int { return len(c.Facets()) }

// FacetType is the cell type of the facets of c. It panics for Segment,
// whose facets are points.
func (c Type) FacetType() Type {
	switch c {
	case Triangle, Quadrilateral:
		return Segment
	case Tetrahedron:
		return Triangle
	case Hexahedron:
		return Quadrilateral
	}
	panic(fmt.Sprintf("cell: %v has no cell-type facets", c))
}

// Measure is the length, area or volume of the reference cell.
func (c Type) Measure() float64 {
	c.must()
	return cellInfo[c].measure
}

// Centroid writes the reference-cell centroid into x (len >= Dim) and
// returns x[:Dim].
func (c Type) Centroid(x []float64) []float64 {
	d, v := c.Dim(), c.Vertices()
	n := len(v) / d
	x = x[:d]
	for k := range x {
		s := 0.0
		for i := 0; i < n; i++ {
			s += v[i*d+k]
		}
		x[k] = s / float64(n)
	}
	return x
}

// VTKType returns the VTK cell type code for cell c carrying Lagrange
// nodes of the given degree (1 or 2, P on simplices, Q on tensor cells).
// Quadrilateral degree 2 is the 9-node VTK_BIQUADRATIC_QUAD; the 8-node
// serendipity code VTKQuadraticQuad is exported for completeness.
func VTKType(c Type, degree int) int {
	c.must()
	switch degree {
	case 1:
		return vtkLinear[c]
	case 2:
		return vtkQuadratic[c]
	}
	panic(fmt.Sprintf("cell: no VTK type for %v of degree %d", c, degree))
}

// VTKOrder returns the permutation from formwright's Lagrange node order to
// VTK's: VTK node i is formwright node VTKOrder(c, degree)[i]. Shared: do
// not modify.
func VTKOrder(c Type, degree int) []int {
	c.must()
	switch degree {
	case 1:
		return vtkOrder1[c]
	case 2:
		return vtkOrder2[c]
	}
	panic(fmt.Sprintf("cell: no VTK node order for %v of degree %d", c, degree))
}
