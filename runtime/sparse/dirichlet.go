package sparse

import "fmt"

// EliminateRows imposes x_i = values[i] for every i with fixed[i] on the
// system A x = b, in place.
//
// Row elimination (keepSymmetric = false): each fixed row becomes the unit
// row (1 on the diagonal, 0 elsewhere, pattern kept) and b[i] = values[i].
// The solution of the modified system is the constrained solution, but a
// symmetric A loses its symmetry.
//
// With keepSymmetric = true the fixed columns are eliminated as well: for
// every free row i and fixed column j, b[i] -= a_ij·values[j] and a_ij = 0.
// A symmetric (positive definite) A stays symmetric (positive definite),
// since the result is the free–free block plus an identity block.
//
// values is read only at fixed positions. The diagonal of every fixed row
// must be in the pattern (it always is for a pattern from
// PatternFromElements); A must be square.
func (A *CSR) EliminateRows(fixed []bool, values []float64, b []float64, keepSymmetric bool) {
	if A.N != A.M || len(fixed) != A.N || len(values) != A.N || len(b) != A.N {
		panic(fmt.Sprintf("sparse: EliminateRows: A is %d×%d, len(fixed) = %d, len(values) = %d, len(b) = %d", A.N, A.M, len(fixed), len(values), len(b)))
	}
	if keepSymmetric {
		for i := 0; i < A.N; i++ {
			if fixed[i] {
				continue
			}
			for k := A.RowPtr[i]; k < A.RowPtr[i+1]; k++ {
				if j := A.Col[k]; fixed[j] {
					b[i] -= A.Val[k] * values[j]
					A.Val[k] = 0
				}
			}
		}
	}
	for i := 0; i < A.N; i++ {
		if !fixed[i] {
			continue
		}
		diag := false
		for k := A.RowPtr[i]; k < A.RowPtr[i+1]; k++ {
			if int(A.Col[k]) == i {
				A.Val[k] = 1
				diag = true
			} else {
				A.Val[k] = 0
			}
		}
		if !diag {
			panic(fmt.Sprintf("sparse: EliminateRows: row %d has no diagonal entry in the pattern", i))
		}
		b[i] = values[i]
	}
}
