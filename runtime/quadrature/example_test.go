package quadrature_test

import (
	"fmt"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/quadrature"
)

// Integrate x*y over the reference triangle: 1!1!/4! = 1/24.
func ExampleFor() {
	r := quadrature.For(cell.Triangle, 2)
	s := 0.0
	for q := 0; q < r.NumPoints(); q++ {
		p := r.Point(q)
		s += r.Weights[q] * p[0] * p[1]
	}
	fmt.Printf("%d points, degree %d, ∫xy = %.6f (1/24 = %.6f)\n", r.NumPoints(), r.Degree, s, 1.0/24)
	// Output: 3 points, degree 2, ∫xy = 0.041667 (1/24 = 0.041667)
}
