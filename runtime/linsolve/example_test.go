package linsolve_test

import (
	"fmt"

	"github.com/formwright/formwright/runtime/linsolve"
	"github.com/formwright/formwright/runtime/sparse"
)

// Solve the tridiagonal system of −u″ = 0 with u(0) = 0, u(1) = 1 on four
// interior nodes; the exact nodal solution is the line u = x.
func ExampleSolve() {
	A := &sparse.CSR{N: 4, M: 4,
		RowPtr: []int{0, 2, 5, 8, 10},
		Col:    []int32{0, 1, 0, 1, 2, 1, 2, 3, 2, 3},
		Val:    []float64{2, -1, -1, 2, -1, -1, 2, -1, -1, 2},
	}
	b := []float64{0, 0, 0, 1}
	for _, name := range []string{"cg", "gmres", "bicgstab", "direct"} {
		m, _ := linsolve.ParseMethod(name)
		p, _ := linsolve.ParsePrecond("ilu0")
		x := make([]float64, 4)
		res, err := linsolve.Solve(A, b, x, linsolve.Options{Method: m, Precond: p, RelTol: 1e-12})
		fmt.Printf("%-8s %.6f %v %v\n", res.Solver, x, res.Residual < 1e-12, err)
	}
	// Output:
	// cg       [0.200000 0.400000 0.600000 0.800000] true <nil>
	// gmres    [0.200000 0.400000 0.600000 0.800000] true <nil>
	// bicgstab [0.200000 0.400000 0.600000 0.800000] true <nil>
	// direct   [0.200000 0.400000 0.600000 0.800000] true <nil>
}
