package mesh

import (
	"bytes"
	"flag"
	"math"
	"os"
	"path/filepath"
	"slices"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the domain mesh files in testdata")

// carve keeps the cells of base whose centroid satisfies keep, drops the
// vertices no kept cell uses (the others keep their order), and puts each
// boundary facet in the part side(midpoint) names.
func carve(base *Mesh, keep func(x []float64) bool, side func(x []float64) string) *Mesh {
	d := base.Dim
	newIdx := make([]int32, base.NumVertices())
	for i := range newIdx {
		newIdx[i] = -1
	}
	var cells []int32
	var buf []float64
	for c := 0; c < base.NumCells(); c++ {
		x := base.CellCoords(c, buf)
		ctr := make([]float64, d)
		n := len(x) / d
		for i := 0; i < n; i++ {
			for k := 0; k < d; k++ {
				ctr[k] += x[i*d+k] / float64(n)
			}
		}
		if keep(ctr) {
			cells = append(cells, base.CellVertices(c)...)
		}
	}
	for _, v := range cells {
		newIdx[v] = 0
	}
	var coords []float64
	nv := int32(0)
	for v, k := range newIdx {
		if k == 0 {
			newIdx[v] = nv
			nv++
			coords = append(coords, base.Vertex(v)...)
		}
	}
	for i, v := range cells {
		cells[i] = newIdx[v]
	}
	m := &Mesh{Dim: d, Cell: base.Cell, Coords: coords, Cells: cells, Boundaries: map[string][]FacetRef{}}
	all := m.TopologicalBoundary()
	for _, f := range all {
		mid := make([]float64, d)
		vs := m.FacetVertices(f, nil)
		for _, v := range vs {
			for k := 0; k < d; k++ {
				mid[k] += m.Vertex(int(v))[k] / float64(len(vs))
			}
		}
		name := side(mid)
		m.Boundaries[name] = append(m.Boundaries[name], f)
	}
	m.Boundaries[All] = all
	return m
}

// near is the tolerance for placing a facet midpoint on a side: grid
// coordinates are exact to a few ulps.
func near(a, b float64) bool { return math.Abs(a-b) < 1e-12 }

// lShape is (-1,1)² without the quadrant [0,1]×[0,1], from a 4×4 grid
// (h = 1/2). Parts: left (x = -1), right (x = 1), bottom (y = -1), top
// (y = 1), and notch, the two edges that meet at the re-entrant corner.
func lShape(p Pattern) *Mesh {
	return carve(Span2(-1, 1, -1, 1, 4, 4, p),
		func(x []float64) bool { return !(x[0] > 0 && x[1] > 0) },
		func(x []float64) string {
			switch {
			case near(x[0], -1):
				return Left
			case near(x[0], 1):
				return Right
			case near(x[1], -1):
				return Bottom
			case near(x[1], 1):
				return Top
			}
			return "notch"
		})
}

// squareWithHole is (0,1)² without the square [1/3,2/3]², from a 6×6 grid
// (h = 1/6). Parts: outer (the four sides of the unit square) and hole.
func squareWithHole(p Pattern) *Mesh {
	return carve(Span2(0, 1, 0, 1, 6, 6, p),
		func(x []float64) bool { return !(x[0] > 1.0/3 && x[0] < 2.0/3 && x[1] > 1.0/3 && x[1] < 2.0/3) },
		func(x []float64) string {
			if near(x[0], 0) || near(x[0], 1) || near(x[1], 0) || near(x[1], 1) {
				return "outer"
			}
			return "hole"
		})
}

// The non-square domains in testdata (for convergence studies on domains
// with a re-entrant corner or a hole) are what the generators above make,
// and they have the area, part lengths and topology of their domains:
// L-shape area 4 - 1 = 3, Euler characteristic 1; square with hole area
// 1 - 1/9 = 8/9, Euler characteristic 0 (one hole). Regenerate with
//
//	go test ./runtime/mesh -run TestDomainFiles -update
func TestDomainFiles(t *testing.T) {
	type domain struct {
		file    string
		m       *Mesh
		area    float64
		lengths map[string]float64
		euler   int
	}
	lLengths := map[string]float64{Left: 2, Bottom: 2, Right: 1, Top: 1, "notch": 2, All: 8}
	hLengths := map[string]float64{"outer": 4, "hole": 4.0 / 3, All: 4 + 4.0/3}
	domains := []domain{
		{"lshape-tri.vtu", lShape(DiagonalUp), 3, lLengths, 1},
		{"lshape-quad.vtu", lShape(Quads), 3, lLengths, 1},
		{"hole-tri.vtu", squareWithHole(DiagonalUp), 8.0 / 9, hLengths, 0},
		{"hole-quad.vtu", squareWithHole(Quads), 8.0 / 9, hLengths, 0},
	}
	for _, dm := range domains {
		p := filepath.Join("testdata", dm.file)
		if *update {
			var buf bytes.Buffer
			if err := WriteVTU(&buf, dm.m, ASCII); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(p, buf.Bytes(), 0o644); err != nil {
				t.Fatal(err)
			}
		}
		m, err := ReadVTUFile(p)
		if err != nil {
			t.Fatal(err)
		}
		if d := meshDiff(dm.m, m); d != "" {
			t.Errorf("%s differs from its generator (run with -update): %s", dm.file, d)
		}
		for _, mm := range []*Mesh{m, Refine(m)} {
			checkDomain(t, dm.file, mm, dm.area, dm.lengths, dm.euler)
		}
	}
}

func checkDomain(t *testing.T, name string, m *Mesh, area float64, lengths map[string]float64, euler int) {
	t.Helper()
	if err := m.CheckOrientation(); err != nil {
		t.Errorf("%s: %v", name, err)
	}
	if a := m.Measure(); math.Abs(a-area) > measureTol*area {
		t.Errorf("%s: area %.17g, want %.17g", name, a, area)
	}
	if !slices.Equal(m.BoundaryNames(), slices.Sorted(func(yield func(string) bool) {
		for n := range lengths {
			if !yield(n) {
				return
			}
		}
	})) {
		t.Errorf("%s: parts %v", name, m.BoundaryNames())
	}
	union := 0
	for n, want := range lengths {
		l := 0.0
		for _, f := range m.Boundaries[n] {
			l += facetMeasure(m, f)
		}
		if math.Abs(l-want) > measureTol*want {
			t.Errorf("%s: part %s has length %.17g, want %.17g", name, n, l, want)
		}
		if n != All {
			union += len(m.Boundaries[n])
		}
	}
	if union != len(m.Boundaries[All]) {
		t.Errorf("%s: parts hold %d facets, the boundary %d", name, union, len(m.Boundaries[All]))
	}
	edges := map[[2]int32]bool{}
	for c := 0; c < m.NumCells(); c++ {
		cv := m.CellVertices(c)
		for _, e := range m.Cell.Edges() {
			a, b := cv[e[0]], cv[e[1]]
			edges[[2]int32{min(a, b), max(a, b)}] = true
		}
	}
	if chi := m.NumVertices() - len(edges) + m.NumCells(); chi != euler {
		t.Errorf("%s: Euler characteristic %d, want %d", name, chi, euler)
	}
}
