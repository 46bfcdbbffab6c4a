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

// Solve a 5-point Laplacian on a 100×100 grid by CG with the AMG
// preconditioner and print what Recommend would choose for it (a system
// this small goes to the direct solver).
func ExampleNewAMG() {
	const m = 100
	A := &sparse.CSR{N: m * m, M: m * m, RowPtr: []int{0}}
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			r := j*m + i
			add := func(c int, v float64) { A.Col = append(A.Col, int32(c)); A.Val = append(A.Val, v) }
			if j > 0 {
				add(r-m, -1)
			}
			if i > 0 {
				add(r-1, -1)
			}
			add(r, 4)
			if i < m-1 {
				add(r+1, -1)
			}
			if j < m-1 {
				add(r+m, -1)
			}
			A.RowPtr = append(A.RowPtr, len(A.Col))
		}
	}
	b := make([]float64, A.N)
	for i := range b {
		b[i] = 1
	}
	h, err := linsolve.NewAMG(A, nil, linsolve.AMGOptions{MaxCoarse: 100})
	if err != nil {
		fmt.Println(err)
		return
	}
	rows, _ := h.Levels()
	x := make([]float64, A.N)
	res, err := linsolve.CG(A, b, x, h, linsolve.Options{RelTol: 1e-8})
	fmt.Println(len(rows), "levels, converged:", err == nil && res.Residual <= 1e-8, "in at most 15 iterations:", res.Iterations <= 15)
	r := linsolve.Recommend(A, nil)
	fmt.Println(r.Options.Method, r.Options.Precond)
	// Output:
	// 4 levels, converged: true in at most 15 iterations: true
	// direct none
}
