package problem_test

import (
	"fmt"
	"math/big"
	"sort"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"
)

// Solve −u″ = 1 on (0,1) with u(0) = u(1) = 0 on four P1 cells. In 1D the
// Galerkin P1 solution of this problem is nodally exact: u = x(1−x)/2.
func ExampleSolve() {
	u := &ir.Field{Name: "u", Index: 0, Role: ir.Trial}
	v := &ir.Field{Name: "u", Index: 0, Role: ir.Test}
	one := &ir.Num{Val: big.NewRat(1, 1)}
	form := &ir.LoweredForm{
		Method: "galerkin", Dim: 1,
		Unknowns: []ir.LoweredUnknown{{Name: "u", Element: ir.P1}},
		Integrals: []ir.Integral{{
			// ∫ u′ v′ = ∫ 1·v
			Bilinear: []ir.Term{{Coef: one, Trial: &ir.FieldD{Field: u, D: [3]uint8{1}}, Test: &ir.FieldD{Field: v, D: [3]uint8{1}}}},
			Linear:   []ir.Term{{Coef: one, Test: &ir.FieldD{Field: v}}},
		}},
		Dirichlet: []ir.DirichletCondition{{Side: mesh.All, Value: &ir.Num{Val: new(big.Rat)}}},
	}
	sol, err := problem.Solve(form, mesh.Span1(0, 1, 4, 1), problem.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	xs := sol.Dofs.NodeCoords(0)
	idx := []int{0, 1, 2, 3, 4}
	sort.Slice(idx, func(a, b int) bool { return xs[idx[a]] < xs[idx[b]] })
	for _, i := range idx {
		fmt.Printf("u(%.2f) = %.5f\n", xs[i], sol.Fields[0].Values[0][i])
	}
	fmt.Println(sol.Summary.KernelPath, sol.Summary.Solver, sol.Summary.Dofs, "dofs")
	// Output:
	// u(0.00) = 0.00000
	// u(0.25) = 0.09375
	// u(0.50) = 0.12500
	// u(0.75) = 0.09375
	// u(1.00) = 0.00000
	// interpreted direct 5 dofs
}
