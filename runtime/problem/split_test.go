package problem

import (
	"math"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/mesh"
)

// TestSplitBackwardEulerMatchesStepped: on a linear transient form, the
// Picard-capable stepping (step form plus mass form, old level as
// M uⁿ/Δt) gives the same steps as the stepped form of BackwardEuler, whose
// old level is a linear-form term, to 1e-12: the two are algebraically the
// same backward Euler step. Form: u_t − Δu + u_x = 1 on the unit square,
// u = 0 on the boundary, u(0) = sin πx sin πy.
func TestSplitBackwardEulerMatchesStepped(t *testing.T) {
	dtU := fd(trialU, 0)
	dtU.DT = 1
	bil := []ir.Term{{Coef: num(1, 1), Trial: dtU, Test: fd(testU, 0)}, {Coef: num(1, 1), Trial: fd(trialU, 0, 1), Test: fd(testU, 0)}}
	for k := 0; k < 2; k++ {
		bil = append(bil, ir.Term{Coef: num(1, 1), Trial: fd(trialU, 0, axis(k)...), Test: fd(testU, 0, axis(k)...)})
	}
	form := &ir.LoweredForm{
		Method: "galerkin", Dim: 2,
		Unknowns:  []ir.LoweredUnknown{{Name: "u", Element: ir.P1}},
		Integrals: []ir.Integral{{Bilinear: bil, Linear: []ir.Term{{Coef: num(1, 1), Test: fd(testU, 0)}}}},
		Dirichlet: []ir.DirichletCondition{{Side: mesh.All, Value: num(0, 1)}},
	}
	init, _ := ExactFromExprs(2, []ir.Expr{sinSin()})
	msh := mesh.Rectangle(0, 1, 0, 1, 12, 12, mesh.DiagonalUp)
	opts := TransientOptions{Step: 0.02, Steps: 5, Initial: []Exact{init}}
	a, err := SolveTransient(form, msh, opts)
	if err != nil {
		t.Fatal(err)
	}
	b, err := solveTransientPicard(form, msh, opts)
	if err != nil {
		t.Fatal(err)
	}
	for i := range a.X {
		if math.Abs(a.X[i]-b.X[i]) > 1e-12 {
			t.Fatalf("dof %d: stepped %.17g, split %.17g", i, a.X[i], b.X[i])
		}
	}
}
