package cell

import (
	"math"
	"testing"
)

func sub(a, b []float64) []float64 {
	r := make([]float64, len(a))
	for i := range a {
		r[i] = a[i] - b[i]
	}
	return r
}

func vert(c Type, i int) []float64 {
	d := c.Dim()
	return c.Vertices()[i*d : (i+1)*d]
}

// The outward normal built from the facet's vertex order (rule in the package
// doc) must point from the cell centroid towards the facet centroid. This is
// a geometric fact independent of the tables.
func TestFacetOrientation(t *testing.T) {
	for _, c := range All {
		d := c.Dim()
		cc := c.Centroid(make([]float64, 3))
		for f, fv := range c.Facets() {
			fc := make([]float64, d)
			for _, v := range fv {
				for k := range fc {
					fc[k] += vert(c, v)[k] / float64(len(fv))
				}
			}
			var n []float64
			switch d {
			case 1:
				n = []float64{map[int]float64{0: 1, 1: -1}[f]} // documented: facet 0 is x=1
			case 2:
				tg := sub(vert(c, fv[1]), vert(c, fv[0]))
				n = []float64{tg[1], -tg[0]}
			case 3:
				a, b, cc3 := vert(c, fv[0]), vert(c, fv[1]), vert(c, fv[2])
				u, w := sub(b, a), sub(cc3, b)
				n = []float64{u[1]*w[2] - u[2]*w[1], u[2]*w[0] - u[0]*w[2], u[0]*w[1] - u[1]*w[0]}
			}
			out := sub(fc, cc)
			dot := 0.0
			for k := range n {
				dot += n[k] * out[k]
			}
			if dot <= 0 {
				t.Errorf("%v facet %d %v: normal %v points inwards", c, f, fv, n)
			}
			// All facet vertices coplanar with the normal (quad faces of the hex).
			for _, v := range fv {
				dd := 0.0
				for k := range n {
					dd += n[k] * (vert(c, v)[k] - fc[k])
				}
				if math.Abs(dd) > 1e-14 {
					t.Errorf("%v facet %d: vertex %d off the facet plane", c, f, v)
				}
			}
		}
	}
}

// Simplex facet i is opposite vertex i.
func TestSimplexFacetOppositeVertex(t *testing.T) {
	for _, c := range []Type{Segment, Triangle, Tetrahedron} {
		for f, fv := range c.Facets() {
			if c == Segment {
				if fv[0] == f {
					t.Errorf("interval facet %d is vertex %d; want opposite", f, fv[0])
				}
				continue
			}
			for _, v := range fv {
				if v == f {
					t.Errorf("%v facet %d contains vertex %d", c, f, v)
				}
			}
		}
	}
}

// Counts from elementary geometry, and edges are pairs of vertices at
// the distance of a cell edge (no diagonals).
func TestCounts(t *testing.T) {
	want := map[Type][4]int{ // dim, vertices, edges, facets
		Segment: {1, 2, 1, 2}, Triangle: {2, 3, 3, 3}, Tetrahedron: {3, 4, 6, 4},
		Quadrilateral: {2, 4, 4, 4}, Hexahedron: {3, 8, 12, 6},
	}
	for c, w := range want {
		if got := [4]int{c.Dim(), c.NumVertices(), c.NumEdges(), c.NumFacets()}; got != w {
			t.Errorf("%v: counts %v, want %v", c, got, w)
		}
		seen := map[[2]int]bool{}
		for _, e := range c.Edges() {
			k := [2]int{min(e[0], e[1]), max(e[0], e[1])}
			if seen[k] || e[0] == e[1] {
				t.Errorf("%v: edge %v repeated or degenerate", c, e)
			}
			seen[k] = true
			if !c.IsSimplex() {
				l := 0.0
				for _, x := range sub(vert(c, e[0]), vert(c, e[1])) {
					l += x * x
				}
				if l != 4 {
					t.Errorf("%v: edge %v is not a cell edge (|e|^2=%v)", c, e, l)
				}
			}
		}
		got, err := Parse(c.String())
		if err != nil || got != c {
			t.Errorf("Parse(%q) = %v, %v", c.String(), got, err)
		}
	}
	if _, err := Parse("pyramid"); err == nil {
		t.Error("Parse(pyramid): no error")
	}
}

// VTK codes from the VTK file-format standard (cell-type table).
func TestVTKCodes(t *testing.T) {
	want := map[Type][2]int{
		Segment: {3, 21}, Triangle: {5, 22}, Tetrahedron: {10, 24}, Quadrilateral: {9, 28}, Hexahedron: {12, 29},
	}
	for c, w := range want {
		if VTKType(c, 1) != w[0] || VTKType(c, 2) != w[1] {
			t.Errorf("%v: VTK codes %d,%d want %v", c, VTKType(c, 1), VTKType(c, 2), w)
		}
		for _, p := range []int{1, 2} {
			perm := VTKOrder(c, p)
			seen := make([]bool, len(perm))
			for _, i := range perm {
				if i < 0 || i >= len(perm) || seen[i] {
					t.Fatalf("%v degree %d: VTK order %v is not a permutation", c, p, perm)
				}
				seen[i] = true
			}
		}
	}
}

// Codes of the VTK cell types runtime/mesh reads besides the ones above:
// the VTK file-format cell-type table ([memory]), confirmed against the
// constants of VTK 9.1's Python module (vtk.VTK_VERTEX == 1,
// vtk.VTK_PIXEL == 8, vtk.VTK_VOXEL == 11, vtk.VTK_QUADRATIC_QUAD == 23,
// vtk.VTK_QUADRATIC_HEXAHEDRON == 25).
func TestVTKReadCodes(t *testing.T) {
	got := []int{VTKVertex, VTKPixel, VTKVoxel, VTKQuadraticQuad, VTKQuadraticHexahedron}
	want := []int{1, 8, 11, 23, 25}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("code %d is %d, want %d", i, got[i], want[i])
		}
	}
}

func TestMeasure(t *testing.T) {
	// Unit simplex measure 1/d!; [-1,1]^d measure 2^d.
	want := map[Type]float64{Segment: 1, Triangle: 0.5, Tetrahedron: 1.0 / 6, Quadrilateral: 4, Hexahedron: 8}
	for c, w := range want {
		if c.Measure() != w {
			t.Errorf("%v measure %v want %v", c, c.Measure(), w)
		}
	}
}
