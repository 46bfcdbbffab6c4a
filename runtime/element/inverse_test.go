package element

import (
	"math"
	"testing"

	"github.com/formwright/formwright/runtime/cell"
)

// TestInverseEstimate checks C_inv = sup h²‖Δv‖²/‖∇v‖² on every reference
// cell against an independent exact computation with sympy
// (testdata/inverse_estimate.py: monomial bases, exact integrals, the
// largest root of det(L − μS) = 0). The 1D quadratic value also follows by
// hand: v = x(1 − x) on [0, 1] gives ‖v″‖² = 4 and ‖v′‖² = 1/3, so 12.
// Linear simplices and Q1 cells (a + bx + cy + dxy is harmonic) give 0.
func TestInverseEstimate(t *testing.T) {
	want := map[cell.Type][2]float64{
		cell.Segment:       {0, 12},
		cell.Triangle:      {0, 96},
		cell.Tetrahedron:   {0, 240},
		cell.Quadrilateral: {0, 48},
		cell.Hexahedron:    {0, 108},
	}
	for c, w := range want {
		for k := 1; k <= 2; k++ {
			got, err := InverseEstimate(MustLagrange(c, k))
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(got-w[k-1]) > 1e-9*math.Max(1, w[k-1]) {
				t.Errorf("%v degree %d: C_inv = %.15g, sympy gives %g", c, k, got, w[k-1])
			}
		}
	}
}
