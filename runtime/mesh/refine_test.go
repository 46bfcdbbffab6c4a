package mesh

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/formwright/formwright/runtime/cell"
)

// Tolerance for sums of cell and facet measures: children's measures add
// up to the parent's in exact arithmetic (affine maps, restrictions of
// Q1 maps); rounding in a few hundred determinants stays far below 1e-13
// relative.
const measureTol = 1e-13

// refineCounts are the numbers of cells and vertices uniform refinement
// must give, computed from the mesh's own edges, faces and cells: every
// edge adds a midpoint, every hexahedron face and every quadrilateral or
// hexahedron a centre.
func refineCounts(m *Mesh) (cells, verts int) {
	edges := map[[2]int32]bool{}
	faces := map[facetKey]bool{}
	for c := 0; c < m.NumCells(); c++ {
		cv := m.CellVertices(c)
		for _, e := range m.Cell.Edges() {
			a, b := cv[e[0]], cv[e[1]]
			edges[[2]int32{min(a, b), max(a, b)}] = true
		}
		if m.Cell == cell.Hexahedron {
			for f := range m.Cell.Facets() {
				faces[m.facetKey(c, f)] = true
			}
		}
	}
	per := map[cell.Type]int{cell.Segment: 2, cell.Triangle: 4, cell.Quadrilateral: 4, cell.Tetrahedron: 8, cell.Hexahedron: 8}[m.Cell]
	verts = m.NumVertices() + len(edges) + len(faces)
	if !m.Cell.IsSimplex() {
		verts += m.NumCells()
	}
	if m.Cell == cell.Segment {
		verts = m.NumVertices() + m.NumCells() // the interval's edge is the cell
	}
	return per * m.NumCells(), verts
}

// checkRefined checks r = Refine(m): sizes, each parent's measure equals
// the sum of its children's, orientation, conformity, every boundary
// part's measure, "all" is the topological boundary, regions inherited.
func checkRefined(t *testing.T, name string, m, r *Mesh) {
	t.Helper()
	nc, nv := refineCounts(m)
	if r.NumCells() != nc || r.NumVertices() != nv {
		t.Fatalf("%s: %d cells %d vertices, want %d and %d", name, r.NumCells(), r.NumVertices(), nc, nv)
	}
	k := nc / m.NumCells()
	for c := 0; c < m.NumCells(); c++ {
		s := 0.0
		for j := 0; j < k; j++ {
			s += r.CellMeasure(c*k + j)
		}
		if p := m.CellMeasure(c); math.Abs(s-p) > measureTol*math.Abs(p) {
			t.Fatalf("%s: cell %d: children measure %.17g, parent %.17g", name, c, s, p)
		}
	}
	if err := r.CheckOrientation(); err != nil {
		t.Errorf("%s: %v", name, err)
	}
	for _, b := range m.BoundaryNames() {
		before, after := 0.0, 0.0
		for _, f := range m.Boundaries[b] {
			before += facetMeasure(m, f)
		}
		for _, f := range r.Boundaries[b] {
			after += facetMeasure(r, f)
		}
		if math.Abs(after-before) > measureTol*before || len(r.Boundaries[b]) != len(m.Boundaries[b])<<(m.Dim-1) {
			t.Errorf("%s: part %q: %d facets of measure %.17g, before %d of %.17g", name, b, len(r.Boundaries[b]), after, len(m.Boundaries[b]), before)
		}
		if !slices.IsSortedFunc(r.Boundaries[b], CompareFacetRef) {
			t.Errorf("%s: part %q not sorted", name, b)
		}
	}
	if !slices.Equal(r.Boundaries[All], r.TopologicalBoundary()) {
		t.Errorf("%s: all is not the topological boundary", name)
	}
	for c := 0; c < r.NumCells() && m.Regions != nil; c++ {
		if r.Regions[c] != m.Regions[c/k] {
			t.Fatalf("%s: child %d in region %d, parent %d", name, c, r.Regions[c], m.Regions[c/k])
		}
	}
}

func TestRefine(t *testing.T) {
	for name, m := range sampleMeshes() {
		r := Refine(m)
		checkRefined(t, name, m, r)
		checkRefined(t, name+" twice", r, Refine(r))
	}
	// Distorted cells: a random perturbation of the interior vertices,
	// small enough to keep every cell valid.
	rng := rand.New(rand.NewPCG(1, 2))
	for _, m := range []*Mesh{Span2(0, 1, 0, 1, 3, 3, Quads), Span3(0, 1, 0, 1, 0, 1, 2, 2, 2, Hexes), Span3(0, 1, 0, 1, 0, 1, 2, 2, 2, Kuhn)} {
		for v := 0; v < m.NumVertices(); v++ {
			x := m.Vertex(v)
			for k := range x {
				if x[k] != 0 && x[k] != 1 {
					x[k] += 0.15 * (rng.Float64() - 0.5) / 3
				}
			}
		}
		if err := m.CheckOrientation(); err != nil {
			t.Fatal(err)
		}
		checkRefined(t, "distorted "+m.Cell.String(), m, Refine(m))
	}
	// Refined box meshes are again meshes of the box with the same sides
	// (checkMesh: measure, conformity, Euler characteristic, sides).
	lo, hi := []float64{0, -1, 2}, []float64{1, 0.5, 2.25}
	for _, p := range []Pattern{Kuhn, Hexes} {
		m := Refine(Refine(Span3(lo[0], hi[0], lo[1], hi[1], lo[2], hi[2], 2, 1, 1, p)))
		checkMesh(t, "refined box "+p.String(), m, lo, hi)
	}
	for _, p := range []Pattern{DiagonalUp, DiagonalDown, Quartered, Quads} {
		checkMesh(t, "refined rect "+p.String(), Refine(Span2(0, 2, 0, 1, 2, 3, p)), []float64{0, 0}, []float64{2, 1})
	}
	checkMesh(t, "refined interval", Refine(Span1(-1, 2, 3, 1.2)), []float64{-1}, []float64{2})
}

// cellSet maps every cell to the sorted list of its vertex coordinates,
// for comparing meshes that number vertices differently.
func cellSet(m *Mesh) map[string]int {
	out := map[string]int{}
	for c := 0; c < m.NumCells(); c++ {
		var vs []string
		for _, v := range m.CellVertices(c) {
			vs = append(vs, fmt.Sprintf("%.12g", m.Vertex(int(v))))
		}
		slices.Sort(vs)
		out[fmt.Sprint(vs)]++
	}
	return out
}

// Refining the structured n×n square gives the structured 2n×2n square:
// the same numbers of cells and of facets on each side for every pattern,
// and the very same cells for the two diagonal patterns and quads (the
// midpoint children of a diagonal-pattern triangle are the diagonal-
// pattern triangles of the half-size squares). Likewise for boxes of
// hexahedra; Kuhn boxes agree in counts only (Box stores the odd Kuhn
// tetrahedra with two vertices swapped, which makes Bey's rule cut their
// octahedra along another diagonal).
func TestRefineStructured(t *testing.T) {
	for _, p := range []Pattern{DiagonalUp, DiagonalDown, Quartered, Quads} {
		r := Refine(Span2(0, 1, 0, 2, 3, 2, p))
		g := Span2(0, 1, 0, 2, 6, 4, p)
		compareStructured(t, "rect "+p.String(), r, g, p != Quartered)
	}
	for _, p := range []Pattern{Kuhn, Hexes} {
		r := Refine(Span3(0, 1, 0, 2, 0, 1, 2, 1, 1, p))
		g := Span3(0, 1, 0, 2, 0, 1, 4, 2, 2, p)
		compareStructured(t, "box "+p.String(), r, g, p == Hexes)
	}
	compareStructured(t, "interval", Refine(Span1(0, 1, 5, 1)), Span1(0, 1, 10, 1), true)
}

func compareStructured(t *testing.T, name string, r, g *Mesh, sameCells bool) {
	t.Helper()
	if r.NumCells() != g.NumCells() || r.NumVertices() != g.NumVertices() {
		t.Errorf("%s: refined %d cells %d vertices, generated %d and %d", name, r.NumCells(), r.NumVertices(), g.NumCells(), g.NumVertices())
	}
	for _, b := range g.BoundaryNames() {
		if len(r.Boundaries[b]) != len(g.Boundaries[b]) {
			t.Errorf("%s: side %s: %d facets refined, %d generated", name, b, len(r.Boundaries[b]), len(g.Boundaries[b]))
		}
	}
	if sameCells {
		a, b := cellSet(r), cellSet(g)
		for k, n := range b {
			if a[k] != n {
				t.Errorf("%s: generated cell %s not among the refined cells", name, k)
				return
			}
		}
	}
}

// congruenceClasses counts tetrahedra up to isometry (reflections
// included): the key of a tetrahedron is the smallest, over the 24
// orderings of its vertices, of its 6 edge lengths (scaled, rounded to
// 1e-9) listed in the order 01 02 03 12 13 23 — two tetrahedra with
// the same labelled edge lengths are congruent.
func congruenceClasses(m *Mesh, scale float64) int {
	seen := map[[6]int64]bool{}
	var perms [][4]int
	for a := range 4 {
		for b := range 4 {
			for c := range 4 {
				if d := 6 - a - b - c; a != b && a != c && b != c && d != a && d != b && d != c {
					perms = append(perms, [4]int{a, b, c, d})
				}
			}
		}
	}
	for c := 0; c < m.NumCells(); c++ {
		cv := m.CellVertices(c)
		var l [4][4]int64
		for i := range 4 {
			for j := range 4 {
				a, b := m.Vertex(int(cv[i])), m.Vertex(int(cv[j]))
				l[i][j] = int64(math.Round(math.Sqrt((a[0]-b[0])*(a[0]-b[0])+(a[1]-b[1])*(a[1]-b[1])+(a[2]-b[2])*(a[2]-b[2])) * scale * 1e9))
			}
		}
		var best [6]int64
		for k, p := range perms {
			key := [6]int64{l[p[0]][p[1]], l[p[0]][p[2]], l[p[0]][p[3]], l[p[1]][p[2]], l[p[1]][p[3]], l[p[2]][p[3]]}
			if k == 0 || slices.Compare(key[:], best[:]) < 0 {
				best = key
			}
		}
		seen[best] = true
	}
	return len(seen)
}

// Bey (1995, Computing 55, Theorem on the regular refinement; [memory] of
// the statement): repeated regular refinement of a tetrahedron produces at
// most 3 congruence classes. Checked for four levels (4096 tetrahedra) of
// a generic tetrahedron with the orientation repair tetFlip; repairing by
// swapping x0 and x1 instead lets the count grow, which shows the check
// can fail.
func TestRefineTetCongruence(t *testing.T) {
	start := &Mesh{Dim: 3, Cell: cell.Tetrahedron,
		Coords: []float64{0.1, 0.2, 0, 1.3, 0.1, 0.2, 0.4, 1.1, -0.1, 0.3, 0.2, 0.9},
		Cells:  []int32{0, 1, 2, 3}, Boundaries: map[string][]FacetRef{}}
	levels := func(rule *refineRule) []int {
		m := start
		var n []int
		for l := 1; l <= 4; l++ {
			m = refine(m, rule)
			n = append(n, congruenceClasses(m, math.Pow(2, float64(l))))
		}
		return n
	}
	got := levels(&refineRules[cell.Tetrahedron])
	if slices.Max(got) > 3 {
		t.Errorf("tetFlip: congruence classes per level %v, want at most 3 (Bey 1995)", got)
	}
	bad := beyRule([4]int{1, 0, 2, 3})
	if other := levels(&bad); slices.Max(other) <= 3 {
		t.Errorf("swapping x0,x1: classes %v; expected growth beyond 3", other)
	}
}

func benchmarkRefine(b *testing.B, m *Mesh) {
	for b.Loop() {
		meshSink = Refine(m)
	}
}

func BenchmarkRefineTriangles64(b *testing.B) {
	benchmarkRefine(b, Span2(0, 1, 0, 1, 64, 64, DiagonalUp))
}
func BenchmarkRefineTetrahedra16(b *testing.B) {
	benchmarkRefine(b, Span3(0, 1, 0, 1, 0, 1, 16, 16, 16, Kuhn))
}
