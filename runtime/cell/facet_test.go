package cell

import (
	"math"
	"testing"
)

// Facet reference vertices land on the facet's vertices; normals and
// scales against hand values: triangle hypotenuse normal (1,1)/√2, length
// √2; tetrahedron slanted face normal (1,1,1)/√3, area √3/2 = √3 × 1/2;
// quadrilateral sides length 2 = 2 × |[0,1]|; hexahedron faces area 4 = 1 × |[-1,1]²|.
func TestFacetMaps(t *testing.T) {
	refVerts := map[Type][]float64{
		Triangle: {0, 1}, Quadrilateral: {0, 1}, Tetrahedron: {0, 0, 1, 0, 0, 1},
		Hexahedron: {-1, -1, 1, -1, 1, 1, -1, 1},
	}
	for c, rv := range refVerts {
		d := c.Dim()
		xi := make([]float64, d)
		for f, fv := range c.Facets() {
			for k, v := range fv {
				c.FacetPoint(f, rv[k*(d-1):(k+1)*(d-1)], xi)
				for j := 0; j < d; j++ {
					if xi[j] != c.Vertices()[v*d+j] {
						t.Errorf("%v facet %d: ref vertex %d -> %v, want vertex %d", c, f, k, xi, v)
					}
				}
			}
		}
	}
	s2, s3 := 1/math.Sqrt2, 1/math.Sqrt(3)
	for _, tc := range []struct {
		c      Type
		f      int
		normal []float64
		scale  float64
	}{
		{Segment, 0, []float64{1}, 1}, {Segment, 1, []float64{-1}, 1},
		{Triangle, 0, []float64{s2, s2}, math.Sqrt2}, {Triangle, 1, []float64{-1, 0}, 1}, {Triangle, 2, []float64{0, -1}, 1},
		{Quadrilateral, 0, []float64{0, -1}, 2}, {Quadrilateral, 1, []float64{1, 0}, 2},
		{Tetrahedron, 0, []float64{s3, s3, s3}, math.Sqrt(3)}, {Tetrahedron, 3, []float64{0, 0, -1}, 1},
		{Hexahedron, 0, []float64{-1, 0, 0}, 1}, {Hexahedron, 5, []float64{0, 0, 1}, 1},
	} {
		n := tc.c.FacetNormal(tc.f)
		for k := range n {
			if math.Abs(n[k]-tc.normal[k]) > 1e-15 {
				t.Errorf("%v facet %d: normal %v want %v", tc.c, tc.f, n, tc.normal)
			}
		}
		if math.Abs(tc.c.FacetScale(tc.f)-tc.scale) > 1e-15 {
			t.Errorf("%v facet %d: scale %v want %v", tc.c, tc.f, tc.c.FacetScale(tc.f), tc.scale)
		}
	}
}
