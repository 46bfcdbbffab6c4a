package problem

import (
	"math"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/mesh"
)

// TestSplitBackwardEulerMatchesStepped: on a linear transient form, the
// Picard-capable stepping (step form plus mass form, old level as
// M uⁿ/Δt) gives the same steps as the stepped form whose old level is a
// linear-form term, to 1e-12: the two are algebraically the same backward
// Euler step (the two shapes of ir.SteppedForm that compiler.BackwardEuler
// produces, written out here by hand). Form: u_t − Δu + u_x = 1 on the
// unit square, u = 0 on the boundary, u(0) = sin πx sin πy.
func TestSplitBackwardEulerMatchesStepped(t *testing.T) {
	invDt := &ir.Pow{Base: &ir.CellQ{Q: ir.TimeStep}, Exp: num(-1, 1)}
	prevU := &ir.Field{Name: "u", Index: 0, Role: ir.Previous}
	mass := ir.Term{Coef: invDt, Trial: fd(trialU, 0), Test: fd(testU, 0)}
	bil := []ir.Term{mass, {Coef: num(1, 1), Trial: fd(trialU, 0, 1), Test: fd(testU, 0)}}
	for k := 0; k < 2; k++ {
		bil = append(bil, ir.Term{Coef: num(1, 1), Trial: fd(trialU, 0, axis(k)...), Test: fd(testU, 0, axis(k)...)})
	}
	source := ir.Term{Coef: num(1, 1), Test: fd(testU, 0)}
	form := func(lin ...ir.Term) *ir.LoweredForm {
		return &ir.LoweredForm{
			Method: "galerkin", Dim: 2,
			Unknowns:  []ir.LoweredUnknown{{Name: "u", Element: ir.P1}},
			Integrals: []ir.Integral{{Bilinear: bil, Linear: lin}},
			Dirichlet: []ir.DirichletCondition{{Side: mesh.All, Value: num(0, 1)}},
		}
	}
	fixed := &ir.SteppedForm{Step: form(source, ir.Term{Coef: mul(invDt, fd(prevU, 0)), Test: fd(testU, 0)})}
	massForm := form()
	massForm.Integrals, massForm.Dirichlet = []ir.Integral{{Bilinear: []ir.Term{mass}}}, nil
	split := &ir.SteppedForm{Step: form(source), Mass: massForm}

	init, _ := ExactFromExprs(2, []ir.Expr{sinSin()})
	msh := mesh.Span2(0, 1, 0, 1, 12, 12, mesh.DiagonalUp)
	opts := TransientOptions{Step: 0.02, Steps: 5, Initial: []Exact{init}}
	a, err := SolveTransient(fixed, msh, opts)
	if err != nil {
		t.Fatal(err)
	}
	b, err := SolveTransient(split, msh, opts)
	if err != nil {
		t.Fatal(err)
	}
	for i := range a.X {
		if math.Abs(a.X[i]-b.X[i]) > 1e-12 {
			t.Fatalf("dof %d: stepped %.17g, split %.17g", i, a.X[i], b.X[i])
		}
	}
}
