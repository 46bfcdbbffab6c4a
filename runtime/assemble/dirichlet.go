package assemble

import "github.com/formwright/formwright/runtime/sparse"

// SymmetryTol is the relative tolerance of the symmetry test in
// Constrain: assembled symmetric forms differ from exact symmetry only by
// the rounding of the kernel's products (common practice, no source).
const SymmetryTol = 1e-12

// Constrain imposes the value conditions x_i = values[i] (fixed[i]) on
// A x = b in place by row elimination (sparse.CSR.EliminateRows). When A
// is symmetric to SymmetryTol the fixed columns are eliminated as well, so
// A stays symmetric (and positive definite if it was), for CG. It reports
// whether A was found symmetric.
func Constrain(A *sparse.CSR, b []float64, fixed []bool, values []float64) (symmetric bool) {
	symmetric = A.IsSymmetric(SymmetryTol)
	A.EliminateRows(fixed, values, b, symmetric)
	return symmetric
}
