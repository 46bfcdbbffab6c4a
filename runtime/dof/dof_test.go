package dof

import (
	"math"
	"testing"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/mesh"
)

func facetsOf(m *mesh.Mesh, side string) []Facet {
	var out []Facet
	for _, f := range m.Boundaries[side] {
		out = append(out, Facet{Cell: int(f.Cell), Local: int(f.Facet)})
	}
	return out
}

func scalar(name string, c cell.Type, deg int) FieldSpec {
	return FieldSpec{Name: name, Element: element.MustLagrange(c, deg), Components: 1}
}

// lattice checks that the nodes of field 0 are exactly the points of the
// lattice with spacing 1/2 on the box [0,n_k] (integer-sized cells, so the
// half-integer coordinates are exact in floating point), each once. This is
// the outside truth of a conforming P2/Q2 space on a structured grid: its
// nodes are the vertices of the once-refined grid (Ciarlet 1978, §2.2; a
// counting fact, independent of the numbering code).
func lattice(t *testing.T, dm *Numbering, n []int) {
	t.Helper()
	want := 1
	for _, k := range n {
		want *= 2*k + 1
	}
	f := dm.Fields[0]
	if f.NumNodes != want {
		t.Fatalf("%v P%d: %d nodes, want %d", dm.Cell, f.Element.Degree, f.NumNodes, want)
	}
	seen := make([]bool, want)
	x := dm.NodeCoords(0)
	for g := 0; g < f.NumNodes; g++ {
		idx, stride := 0, 1
		for k := range n {
			v := 2 * x[g*dm.Dim+k]
			iv := int(math.Round(v))
			if v != float64(iv) || iv < 0 || iv > 2*n[k] {
				t.Fatalf("node %d coordinate %d = %v is not on the half lattice", g, k, x[g*dm.Dim+k])
			}
			idx += iv * stride
			stride *= 2*n[k] + 1
		}
		if seen[idx] {
			t.Fatalf("node %d duplicates a lattice point: an edge/face node is not shared", g)
		}
		seen[idx] = true
	}
}

// cellConsistency checks that, on every cell, the stored coordinates of
// the cell's nodes equal the image of the element's reference nodes under
// that cell's own linear map: a shared node numbered from two cells must
// be the same point seen from both.
func cellConsistency(t *testing.T, m *mesh.Mesh, dm *Numbering) {
	t.Helper()
	e := dm.Fields[0].Element
	geom := element.MustLagrange(m.Cell, 1)
	ref := e.RefNodes()
	d, nv := m.Dim, m.Cell.NumVertices()
	phi := make([]float64, nv)
	x := dm.NodeCoords(0)
	var buf []float64
	for c := 0; c < m.NumCells(); c++ {
		buf = m.CellCoords(c, buf)
		for i, g := range dm.CellNodes(0, c) {
			geom.Eval(ref[i*d:(i+1)*d], phi)
			for k := 0; k < d; k++ {
				s := 0.0
				for v := 0; v < nv; v++ {
					s += phi[v] * buf[v*d+k]
				}
				// 1e-13: sums of a few exact half-integers; rounding only.
				if math.Abs(s-x[int(g)*d+k]) > 1e-13 {
					t.Fatalf("cell %d node %d: stored coordinate %v, map gives %v", c, i, x[int(g)*d+k], s)
				}
			}
		}
	}
}

func TestP2Q2NodesAreTheRefinedLattice(t *testing.T) {
	cases := []struct {
		m *mesh.Mesh
		n []int
	}{
		{mesh.Span1(0, 5, 5, 1), []int{5}},
		{mesh.Span2(0, 4, 0, 3, 4, 3, mesh.DiagonalUp), []int{4, 3}},
		{mesh.Span2(0, 4, 0, 3, 4, 3, mesh.DiagonalDown), []int{4, 3}},
		{mesh.Span2(0, 4, 0, 3, 4, 3, mesh.Quads), []int{4, 3}},
		{mesh.Span3(0, 3, 0, 2, 0, 2, 3, 2, 2, mesh.Kuhn), []int{3, 2, 2}},
		{mesh.Span3(0, 3, 0, 2, 0, 2, 3, 2, 2, mesh.Hexes), []int{3, 2, 2}},
	}
	for _, tc := range cases {
		dm, err := New(tc.m.Cell, tc.m.Coords, tc.m.Cells, []FieldSpec{scalar("u", tc.m.Cell, 2)})
		if err != nil {
			t.Fatal(err)
		}
		lattice(t, dm, tc.n)
		cellConsistency(t, tc.m, dm)
		// P1/Q1: the vertices themselves.
		d1, err := New(tc.m.Cell, tc.m.Coords, tc.m.Cells, []FieldSpec{scalar("u", tc.m.Cell, 1)})
		if err != nil {
			t.Fatal(err)
		}
		if d1.NumDofs != tc.m.NumVertices() {
			t.Errorf("%v degree 1: %d dofs, want %d vertices", tc.m.Cell, d1.NumDofs, tc.m.NumVertices())
		}
	}
}

// Crossed pattern: P2 nodes = vertices + edges. Counting on an nx×ny grid
// with a centre vertex per square: V = (nx+1)(ny+1) + nx·ny, and by Euler's
// formula for a triangulated disc E = V + F − 1 with F = 4·nx·ny.
func TestCrossedEdgeCountEuler(t *testing.T) {
	nx, ny := 3, 5
	m := mesh.Span2(0, 1, 0, 1, nx, ny, mesh.Quartered)
	dm, err := New(m.Cell, m.Coords, m.Cells, []FieldSpec{scalar("u", m.Cell, 2)})
	if err != nil {
		t.Fatal(err)
	}
	V := (nx+1)*(ny+1) + nx*ny
	F := 4 * nx * ny
	E := V + F - 1
	if dm.NumEdges() != E || dm.NumDofs != V+E {
		t.Errorf("edges %d, dofs %d; want %d, %d", dm.NumEdges(), dm.NumDofs, E, V+E)
	}
	cellConsistency(t, m, dm)
}

func TestMixedOrderAndBoundaries(t *testing.T) {
	nx, ny := 4, 3
	m := mesh.Span2(0, 4, 0, 3, nx, ny, mesh.DiagonalUp)
	specs := []FieldSpec{
		{Name: "vel", Element: element.MustLagrange(cell.Triangle, 2), Components: 2},
		scalar("p", cell.Triangle, 1),
	}
	dm, err := New(m.Cell, m.Coords, m.Cells, specs)
	if err != nil {
		t.Fatal(err)
	}
	n2, n1 := (2*nx+1)*(2*ny+1), (nx+1)*(ny+1)
	if dm.NumDofs != 2*n2+n1 || dm.Fields[1].Offset != 2*n2 || dm.NumLocal != 2*6+3 {
		t.Fatalf("NumDofs %d offset %d NumLocal %d", dm.NumDofs, dm.Fields[1].Offset, dm.NumLocal)
	}
	// Local order: field-major, component, node; global: interleaved.
	for c := 0; c < dm.NumCells; c++ {
		cd := dm.CellDofs(c)
		for comp := 0; comp < 2; comp++ {
			for i, g := range dm.CellNodes(0, c) {
				if cd[dm.Local(0, comp, i)] != int32(2*int(g)+comp) {
					t.Fatal("vector field dof not node-major interleaved")
				}
			}
		}
		for i, g := range dm.CellNodes(1, c) {
			if cd[12+i] != int32(2*n2+int(g)) {
				t.Fatal("scalar field not in its own block after the vector field")
			}
			// P1 and P2 share vertex numbers.
			if g != dm.CellNodes(0, c)[i] {
				t.Fatal("P1 vertex node differs from P2 vertex node")
			}
		}
	}
	// Boundary nodes of the left side x = 0: 2ny+1 for P2, ny+1 for P1.
	left := facetsOf(m, mesh.Left)
	b2 := dm.BoundaryNodes(0, left)
	if len(b2) != 2*ny+1 {
		t.Errorf("P2 left nodes %d, want %d", len(b2), 2*ny+1)
	}
	for _, g := range b2 {
		if x := dm.NodeCoords(0)[2*g]; x != 0 {
			t.Errorf("left node at x = %v", x)
		}
	}
	if b := dm.BoundaryDofs(1, 0, left); len(b) != ny+1 || int(b[0]) < 2*n2 {
		t.Errorf("P1 left dofs %v", b)
	}
	bd := dm.BoundaryDofs(0, 1, facetsOf(m, mesh.All))
	if len(bd) != 2*(2*nx)+2*(2*ny) {
		t.Errorf("P2 boundary dofs of component 1: %d, want %d", len(bd), 4*(nx+ny))
	}
	for _, g := range bd {
		if g%2 != 1 {
			t.Fatal("component-1 boundary dof is not odd")
		}
	}
}

func TestNewErrors(t *testing.T) {
	m := mesh.Span2(0, 1, 0, 1, 2, 2, mesh.Quads)
	if _, err := New(m.Cell, m.Coords, m.Cells, []FieldSpec{scalar("u", cell.Triangle, 1)}); err == nil {
		t.Error("P1 triangle element on a quad mesh accepted")
	}
	bad := append([]int32(nil), m.Cells...)
	bad[3] = 99
	if _, err := New(m.Cell, m.Coords, bad, []FieldSpec{scalar("u", cell.Quadrilateral, 1)}); err == nil {
		t.Error("vertex index out of range accepted")
	}
}

func BenchmarkNewP2(b *testing.B) {
	m := mesh.Span2(0, 1, 0, 1, 500, 500, mesh.DiagonalUp)
	specs := []FieldSpec{scalar("u", cell.Triangle, 2)}
	for b.Loop() {
		if _, err := New(m.Cell, m.Coords, m.Cells, specs); err != nil {
			b.Fatal(err)
		}
	}
}
