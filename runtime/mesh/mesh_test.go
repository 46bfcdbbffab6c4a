package mesh

import (
	"errors"
	"math"
	"slices"
	"testing"
	"time"

	"github.com/formwright/formwright/runtime/cell"
)

// facetMeasure: point 1; segment length; triangle |u×v|/2; planar quad
// |d1×d2|/2 with d1, d2 the diagonals (vector area of a planar polygon).
func facetMeasure(m *Mesh, f FacetRef) float64 {
	vs := m.FacetVertices(f, nil)
	d := m.Dim
	p := func(i int) []float64 { return m.Vertex(int(vs[i])) }
	sub := func(a, b []float64) [3]float64 {
		var r [3]float64
		for k := 0; k < d; k++ {
			r[k] = a[k] - b[k]
		}
		return r
	}
	cross := func(u, v [3]float64) float64 {
		c := [3]float64{u[1]*v[2] - u[2]*v[1], u[2]*v[0] - u[0]*v[2], u[0]*v[1] - u[1]*v[0]}
		return math.Sqrt(c[0]*c[0] + c[1]*c[1] + c[2]*c[2])
	}
	switch len(vs) {
	case 1:
		return 1
	case 2:
		u := sub(p(1), p(0))
		return math.Hypot(u[0], u[1])
	case 3:
		return cross(sub(p(1), p(0)), sub(p(2), p(0))) / 2
	}
	return cross(sub(p(2), p(0)), sub(p(3), p(1))) / 2
}

// checkMesh verifies a generated mesh of the box [lo,hi] independently of
// the generator's bookkeeping.
func checkMesh(t *testing.T, name string, m *Mesh, lo, hi []float64) {
	t.Helper()
	d := m.Dim
	if m.Cell.Dim() != d || len(m.Cells) != m.NumCells()*m.Cell.NumVertices() {
		t.Fatalf("%s: inconsistent sizes", name)
	}
	// Total measure = box measure (sum of positive cell measures).
	vol := 1.0
	for k := range lo {
		vol *= hi[k] - lo[k]
	}
	sum := 0.0
	for c := 0; c < m.NumCells(); c++ {
		mc := m.CellMeasure(c)
		if !(mc > 0) {
			t.Fatalf("%s: cell %d measure %v", name, c, mc)
		}
		sum += mc
	}
	if math.Abs(sum-vol) > 1e-12*vol {
		t.Errorf("%s: Σ|K| = %.16g, box measure %.16g", name, sum, vol)
	}
	if err := m.CheckOrientation(); err != nil {
		t.Errorf("%s: %v", name, err)
	}
	// Conformity: every facet belongs to one or two cells (hash of sorted
	// vertex sets), and the Euler characteristic of the closed box is 1:
	// V - E (+ F - C in 3D, + F in 2D with F = cells) = 1.
	facets := map[[4]int32]int{}
	edges := map[[2]int32]bool{}
	for c := 0; c < m.NumCells(); c++ {
		cv := m.CellVertices(c)
		for _, fv := range m.Cell.Facets() {
			k := [4]int32{-1, -1, -1, -1}
			for i, lv := range fv {
				k[i] = cv[lv]
			}
			slices.Sort(k[:len(fv)])
			facets[k]++
		}
		for _, e := range m.Cell.Edges() {
			a, b := cv[e[0]], cv[e[1]]
			edges[[2]int32{min(a, b), max(a, b)}] = true
		}
	}
	nb := 0
	for k, n := range facets {
		if n < 1 || n > 2 {
			t.Fatalf("%s: facet %v shared by %d cells", name, k, n)
		}
		if n == 1 {
			nb++
		}
	}
	var chi int
	switch d {
	case 1:
		chi = m.NumVertices() - m.NumCells()
	case 2:
		chi = m.NumVertices() - len(edges) + m.NumCells()
	case 3:
		chi = m.NumVertices() - len(edges) + len(facets) - m.NumCells()
	}
	if chi != 1 {
		t.Errorf("%s: Euler characteristic %d, want 1 (box is contractible)", name, chi)
	}
	// Boundaries: "all" is exactly the topological boundary; each side's
	// facets lie on it and cover its measure.
	if len(m.Boundaries[All]) != nb {
		t.Errorf("%s: %d facets in all, %d facets belong to one cell", name, len(m.Boundaries[All]), nb)
	}
	if !slices.Equal(m.Boundaries[All], m.TopologicalBoundary()) {
		t.Errorf("%s: all differs from the topological boundary", name)
	}
	union := 0
	for s := 0; s < 2*d; s++ {
		side := sideNames[s]
		refs, ok := m.Boundaries[side]
		if !ok {
			t.Errorf("%s: no boundary %q", name, side)
			continue
		}
		union += len(refs)
		if !slices.IsSortedFunc(refs, CompareFacetRef) {
			t.Errorf("%s: %s not sorted", name, side)
		}
		axis, val := s/2, lo[s/2]
		if s%2 == 1 {
			val = hi[axis]
		}
		meas := 0.0
		for _, f := range refs {
			for _, v := range m.FacetVertices(f, nil) {
				if m.Vertex(int(v))[axis] != val {
					t.Fatalf("%s: %s facet %v has vertex off x%d=%v", name, side, f, axis, val)
				}
			}
			meas += facetMeasure(m, f)
		}
		want := 1.0
		for k := range lo {
			if k != axis {
				want *= hi[k] - lo[k]
			}
		}
		if math.Abs(meas-want) > 1e-12*want {
			t.Errorf("%s: side %s measure %v, want %v", name, side, meas, want)
		}
	}
	if union != nb {
		t.Errorf("%s: sides hold %d facets, boundary has %d", name, union, nb)
	}
}

func TestGenerators(t *testing.T) {
	checkMesh(t, "interval", Span1(-1, 2, 7, 1), []float64{-1}, []float64{2})
	checkMesh(t, "graded interval", Span1(0, 1, 9, 1.3), []float64{0}, []float64{1})
	lo2, hi2 := []float64{0.1, -2}, []float64{0.7, 1.3}
	for _, p := range []Pattern{DiagonalUp, DiagonalDown, Quartered, Quads} {
		for _, n := range [][2]int{{1, 1}, {2, 3}, {5, 4}} {
			m := Span2(lo2[0], hi2[0], lo2[1], hi2[1], n[0], n[1], p)
			checkMesh(t, "rect "+p.String(), m, lo2, hi2)
			cellsPer := map[Pattern]int{DiagonalUp: 2, DiagonalDown: 2, Quartered: 4, Quads: 1}[p]
			nv := (n[0] + 1) * (n[1] + 1)
			if p == Quartered {
				nv += n[0] * n[1]
			}
			if m.NumCells() != cellsPer*n[0]*n[1] || m.NumVertices() != nv {
				t.Errorf("rect %v %v: %d cells %d vertices", p, n, m.NumCells(), m.NumVertices())
			}
		}
	}
	lo3, hi3 := []float64{0, -1, 2}, []float64{1, 0.5, 2.25}
	for _, p := range []Pattern{Kuhn, Hexes} {
		for _, n := range [][3]int{{1, 1, 1}, {2, 3, 2}} {
			m := Span3(lo3[0], hi3[0], lo3[1], hi3[1], lo3[2], hi3[2], n[0], n[1], n[2], p)
			checkMesh(t, "box "+p.String(), m, lo3, hi3)
			per := map[Pattern]int{Kuhn: 6, Hexes: 1}[p]
			if m.NumCells() != per*n[0]*n[1]*n[2] || m.NumVertices() != (n[0]+1)*(n[1]+1)*(n[2]+1) {
				t.Errorf("box %v %v: %d cells %d vertices", p, n, m.NumCells(), m.NumVertices())
			}
		}
	}
}

// Diagonal direction of the two triangle patterns, and the Kuhn
// tetrahedra all containing the cube's main diagonal.
func TestPatternShapes(t *testing.T) {
	up := Span2(0, 1, 0, 1, 1, 1, DiagonalUp)
	down := Span2(0, 1, 0, 1, 1, 1, DiagonalDown)
	hasEdge := func(m *Mesh, a, b int32) bool {
		for c := 0; c < m.NumCells(); c++ {
			cv := m.CellVertices(c)
			if slices.Contains(cv, a) && slices.Contains(cv, b) {
				return true
			}
		}
		return false
	}
	// vertices: 0=(0,0) 1=(1,0) 2=(0,1) 3=(1,1)
	if !hasEdge(up, 0, 3) || hasEdge(up, 1, 2) {
		t.Error("tri: want the diagonal (0,0)-(1,1)")
	}
	if !hasEdge(down, 1, 2) || hasEdge(down, 0, 3) {
		t.Error("tri-flip: want the diagonal (1,0)-(0,1)")
	}
	k := Span3(0, 1, 0, 1, 0, 1, 1, 1, 1, Kuhn)
	for c := 0; c < 6; c++ {
		cv := k.CellVertices(c)
		if !slices.Contains(cv, 0) || !slices.Contains(cv, 7) {
			t.Errorf("Kuhn tet %d = %v does not contain the diagonal 0-7", c, cv)
		}
	}
}

// The quartered pattern's centre vertices sit at the square centres and are
// shared by exactly the 4 triangles of their square.
func TestCrossedCentres(t *testing.T) {
	nx, ny := 3, 2
	m := Span2(0, 3, 0, 1, nx, ny, Quartered)
	base := (nx + 1) * (ny + 1)
	count := make([]int, m.NumVertices())
	for _, v := range m.Cells {
		count[v]++
	}
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			e := base + j*nx + i
			x := m.Vertex(e)
			if x[0] != float64(i)+0.5 || x[1] != (float64(j)+0.5)/2 {
				t.Errorf("centre (%d,%d) at %v", i, j, x)
			}
			if count[e] != 4 {
				t.Errorf("centre (%d,%d) in %d cells", i, j, count[e])
			}
		}
	}
}

// Graded interval: consecutive lengths have ratio r (geometric grading as
// documented) and sum to the length.
func TestGradedInterval(t *testing.T) {
	r := 1.05
	m := Span1(0, 2, 40, r)
	x := m.Coords
	for i := 1; i+1 < len(x); i++ {
		ratio := (x[i+1] - x[i]) / (x[i] - x[i-1])
		if math.Abs(ratio-r) > 1e-10 {
			t.Fatalf("cell %d: ratio %v want %v", i, ratio, r)
		}
	}
	if x[0] != 0 || x[40] != 2 {
		t.Errorf("ends %v %v", x[0], x[40])
	}
	// first cell h0 = L (r-1)/(r^n-1)
	if h0 := 2 * (r - 1) / (math.Pow(r, 40) - 1); math.Abs(x[1]-h0) > 1e-15 {
		t.Errorf("h0 = %v want %v", x[1], h0)
	}
}

// A 1000×1000-vertex rectangle (999² squares, 2 triangles each): a fixed
// handful of allocations (no per-cell allocation), and quick.
func TestLargeRectangle(t *testing.T) {
	if testing.Short() {
		t.Skip("large mesh")
	}
	var m *Mesh
	start := time.Now()
	allocs := testing.AllocsPerRun(1, func() { m = Span2(0, 1, 0, 1, 999, 999, DiagonalUp) })
	el := time.Since(start) / 2 // AllocsPerRun runs the function twice
	if m.NumVertices() != 1000*1000 || m.NumCells() != 2*999*999 {
		t.Fatalf("counts %d %d", m.NumVertices(), m.NumCells())
	}
	if allocs > 100 {
		t.Errorf("%v allocations: per-cell allocation somewhere", allocs)
	}
	if el > time.Second {
		t.Errorf("built in %v, want well under a second", el)
	}
	t.Logf("999x999 rectangle: %v, %v allocations", el, allocs)
	if len(m.Boundaries[All]) != 4*999 {
		t.Errorf("%d boundary facets", len(m.Boundaries[All]))
	}
}

var meshSink *Mesh

func benchmarkRectangle(b *testing.B, n int) {
	for b.Loop() {
		meshSink = Span2(0, 1, 0, 1, n, n, DiagonalUp)
	}
}

func BenchmarkRectangle100(b *testing.B) { benchmarkRectangle(b, 100) }
func BenchmarkRectangle999(b *testing.B) { benchmarkRectangle(b, 999) }

func TestCellTypes(t *testing.T) {
	if Span2(0, 1, 0, 1, 1, 1, Quads).Cell != cell.Quadrilateral || Span3(0, 1, 0, 1, 0, 1, 1, 1, 1, Kuhn).Cell != cell.Tetrahedron {
		t.Error("wrong cell types")
	}
}

// Reflected cells are reported: a hexahedron with its z=-1 and z=+1 faces
// swapped and a tetrahedron with two vertices swapped have negative
// Jacobians (orientation reverses under a reflection).
func TestCheckOrientation(t *testing.T) {
	h := Span3(0, 1, 0, 1, 0, 1, 2, 1, 1, Hexes)
	cv := h.CellVertices(1)
	for i := 0; i < 4; i++ {
		cv[i], cv[i+4] = cv[i+4], cv[i]
	}
	var oe *OrientationError
	if err := h.CheckOrientation(); !errors.As(err, &oe) || oe.Cell != 1 {
		t.Errorf("hex: got %v, want OrientationError for cell 1", err)
	}
	k := Span3(0, 1, 0, 1, 0, 1, 1, 1, 1, Kuhn)
	cv = k.CellVertices(4)
	cv[1], cv[2] = cv[2], cv[1]
	if err := k.CheckOrientation(); !errors.As(err, &oe) || oe.Cell != 4 {
		t.Errorf("tet: got %v, want OrientationError for cell 4", err)
	}
}
