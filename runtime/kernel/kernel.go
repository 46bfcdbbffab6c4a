package kernel

import (
	"math"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
)

// FieldLayout is one field of a kernel's element: its Lagrange element and
// number of components.
type FieldLayout struct {
	Element    *element.Element
	Components int
}

// Layout describes the element matrix a kernel computes: the cell type,
// the geometry element whose node coordinates CellInput.Coords holds (the
// P1/Q1 element of the cell for meshes of straight-sided cells), and the
// fields in local dof order (field-major, then component, then element
// node, as in runtime/dof).
type Layout struct {
	Cell     cell.Type
	Geometry *element.Element
	Fields   []FieldLayout
}

// N is the number of local dofs, the size of the element matrix.
func (l Layout) N() int {
	n := 0
	for _, f := range l.Fields {
		n += f.Element.NumNodes() * f.Components
	}
	return n
}

// CellInput is what a kernel receives for one cell.
type CellInput struct {
	Index int // cell index in the mesh
	// Coords holds the coordinates of the geometry element's nodes,
	// NumNodes*Dim, node-major.
	Coords []float64
	Time   float64
	// Step is the time step Δt of a time-stepped form (time_step).
	Step float64
	// Previous holds the local dof values of the previous iterate, in
	// local dof order; nil when there is none.
	Previous []float64
	// Recovered holds the recovered gradient of the previous iterate at
	// the element nodes, for forms that read recovered second derivatives
	// (ir.Recovered): ∂_k of local dof l at l·Dim + k, Dim values per
	// local dof; nil when the form reads none (kernels then read zeros).
	Recovered []float64
}

// FacetInput is what a facet kernel receives: the cell input of the cell
// owning the facet and the local facet index (cell.Type.Facets order).
type FacetInput struct {
	CellInput
	Facet int
}

// Kernel computes one cell's element matrix and vector. A is row-major
// N×N (rows = test dofs, columns = trial dofs) and b has length N, N =
// Layout().N(); Cell OVERWRITES both. A kernel must not allocate in Cell.
//
// Cell may be called from several goroutines at once. A kernel that keeps
// scratch space implements Forker, and the assembler then calls each fork
// from one goroutine only.
type Kernel interface {
	Layout() Layout
	Cell(in *CellInput, A, b []float64)
}

// FacetKernel computes the contribution of one boundary facet on side
// Side() to the element matrix and vector of the facet's cell (same layout
// as the cell kernel of the form); it OVERWRITES A and b.
type FacetKernel interface {
	Side() string
	Facet(in *FacetInput, A, b []float64)
}

// Forker is an optional capability of a Kernel: Fork returns a kernel with
// the same results and its own scratch space, for use by one worker.
type Forker interface {
	Fork() Kernel
}

// CellDiameter is the diameter of a cell of straight edges, the largest
// distance between two of its vertices (vertexCoords: NumVertices*Dim).
// On simplices it is the longest edge; on quadrilaterals and hexahedra a
// diagonal. It is the value of the quantity ir.Diameter for both the
// interpreted and the generated kernels. No allocation.
func CellDiameter(c cell.Type, vertexCoords []float64) float64 {
	return element.Diameter(c, vertexCoords)
}

// CellVolume is the length, area or volume of a cell under its P1/Q1 map
// (element.Measure), the quantity ir.Volume.
func CellVolume(c cell.Type, vertexCoords []float64) float64 {
	return math.Abs(element.Measure(c, vertexCoords))
}
