package element

import (
	"math"
	"testing"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/quadrature"
)

// Gauss's divergence theorem on curved and distorted cells:
// ∫_K div v dx = Σ_f ∫_f v·n ds. Both integrands are polynomials in the
// reference coordinates (div v · det J, and v·cof(J)N by Nanson's formula),
// so degree-10 rules make both sides exact up to rounding; tolerance
// 1e-12. v = (x², xy) in 2D (div v = 3x), v = (xy, yz, zx + x²) in 3D
// (div v = x + y + z), v = x³ in 1D (div v = 3x²).
func TestDivergenceTheorem(t *testing.T) {
	type fieldFn func(x []float64, v []float64) float64 // returns div, fills v
	f1 := func(x, v []float64) float64 { v[0] = x[0] * x[0] * x[0]; return 3 * x[0] * x[0] }
	f2 := func(x, v []float64) float64 { v[0], v[1] = x[0]*x[0], x[0]*x[1]; return 3 * x[0] }
	f3 := func(x, v []float64) float64 {
		v[0], v[1], v[2] = x[0]*x[1], x[1]*x[2], x[2]*x[0]+x[0]*x[0]
		return x[0] + x[1] + x[2]
	}
	p2 := MustLagrange(cell.Triangle, 2)
	tri := nodeCoords(p2, func(x []float64) []float64 { return []float64{1 + 2*x[0] + 0.3*x[1], x[1] + 0.1*x[0]} })
	tri[6] += 0.25 // bend edge (1,2)
	tri[9] -= 0.1  // bend edge (2,0)
	p2t := MustLagrange(cell.Tetrahedron, 2)
	tet := nodeCoords(p2t, func(x []float64) []float64 { return []float64{x[0], x[1] + 0.2*x[0], 1.5 * x[2]} })
	tet[4*3+1] -= 0.1
	tet[9*3] += 0.15
	q1h := MustLagrange(cell.Hexahedron, 1)
	hex := nodeCoords(q1h, func(x []float64) []float64 { return []float64{x[0], x[1], x[2]} })
	hex[6*3] += 0.3
	hex[6*3+2] += 0.2
	hex[1*3+1] -= 0.2
	q2 := MustLagrange(cell.Quadrilateral, 2)
	quad := nodeCoords(q2, func(x []float64) []float64 { return []float64{x[0] + 0.2*x[1], x[1]} })
	quad[8*2] += 0.3 // move the centre: curved interior map
	quad[5*2] += 0.2 // bend the right side
	for _, tc := range []struct {
		name   string
		e      *Element
		coords []float64
		f      fieldFn
	}{
		{"interval P2", MustLagrange(cell.Segment, 2), []float64{0.5, 2, 1.1}, f1},
		{"curved P2 triangle", p2, tri, f2},
		{"curved Q2 quadrilateral", q2, quad, f2},
		{"curved P2 tetrahedron", p2t, tet, f3},
		{"distorted Q1 hexahedron", q1h, hex, f3},
	} {
		c, d := tc.e.Cell, tc.e.Dim()
		v := make([]float64, d)
		tab := tc.e.Sample(quadrature.For(c, 10))
		pg := tab.NewPointGeometry()
		vol := 0.0
		for q := 0; q < tab.NumPoints(); q++ {
			if err := tab.Map(tc.coords, q, pg); err != nil {
				t.Fatalf("%s: %v", tc.name, err)
			}
			vol += pg.Weight * tc.f(pg.X, v)
		}
		surf := 0.0
		for f := 0; f < c.NumFacets(); f++ {
			var rule quadrature.Rule
			if d > 1 {
				rule = quadrature.For(c.FacetType(), 10)
			}
			ft := tc.e.SampleFacet(tc.e, f, rule)
			fg := ft.NewPointGeometry()
			for q := 0; q < ft.NumPoints(); q++ {
				if err := ft.Map(tc.coords, q, fg); err != nil {
					t.Fatalf("%s facet %d: %v", tc.name, f, err)
				}
				tc.f(fg.X, v)
				dot := 0.0
				for k := 0; k < d; k++ {
					dot += v[k] * fg.Normal[k]
				}
				surf += fg.Weight * dot
			}
		}
		if math.Abs(vol-surf) > 1e-12*max(1, math.Abs(vol)) {
			t.Errorf("%s: ∫div v = %.16g, ∮v·n = %.16g", tc.name, vol, surf)
		}
		if math.Abs(vol) < 1e-3 {
			t.Errorf("%s: test field integrates to ~0 (%v); choose another", tc.name, vol)
		}
	}
}

// Facet lengths and unit normals of the affine triangle (1,1), (3,2),
// (1.5,4), by hand: facet 0 = (3,2)->(1.5,4), tangent (-1.5,2), length 2.5,
// outward normal (2,1.5)/2.5; facet 2 = (1,1)->(3,2), tangent (2,1),
// length √5, normal (1,-2)/√5.
func TestFacetAffineTriangle(t *testing.T) {
	v := []float64{1, 1, 3, 2, 1.5, 4}
	p1 := MustLagrange(cell.Triangle, 1)
	for _, tc := range []struct {
		f      int
		length float64
		n      [2]float64
	}{
		{0, 2.5, [2]float64{0.8, 0.6}},
		{2, math.Sqrt(5), [2]float64{1 / math.Sqrt(5), -2 / math.Sqrt(5)}},
	} {
		ft := p1.SampleFacet(p1, tc.f, quadrature.For(cell.Segment, 1))
		pg := ft.NewPointGeometry()
		l := 0.0
		for q := 0; q < ft.NumPoints(); q++ {
			if err := ft.Map(v, q, pg); err != nil {
				t.Fatal(err)
			}
			l += pg.Weight
			for k := 0; k < 2; k++ {
				if math.Abs(pg.Normal[k]-tc.n[k]) > 1e-15 {
					t.Errorf("facet %d: normal %v want %v", tc.f, pg.Normal, tc.n)
				}
			}
		}
		if math.Abs(l-tc.length) > 1e-14 {
			t.Errorf("facet %d: length %v want %v", tc.f, l, tc.length)
		}
	}
}
