package problem

import (
	"math"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/mesh"
)

// neumannPoisson is −Δu = f on the unit square with zero flux on the whole
// boundary (the natural condition: no boundary integral), where u is
// determined only up to a constant, and the mean condition mean u = c.
func neumannPoisson(f ir.Expr, c int64) *ir.LoweredForm {
	var bil []ir.Term
	for k := 0; k < 2; k++ {
		bil = append(bil, ir.Term{Coef: num(1, 1), Trial: fd(trialU, 0, axis(k)...), Test: fd(testU, 0, axis(k)...)})
	}
	return &ir.LoweredForm{
		Method: "galerkin", Dim: 2,
		Unknowns:  []ir.LoweredUnknown{{Name: "u", Element: ir.P1}},
		Integrals: []ir.Integral{{Bilinear: bil, Linear: []ir.Term{{Coef: f, Test: fd(testU, 0)}}}},
		Means:     []ir.MeanCondition{{Unknown: 0, Value: num(c, 1)}},
	}
}

// TestMeanCondition: the pure Neumann problem with f = 2π² cos πx cos πy
// has the solutions cos πx cos πy + C (mean of cos πx cos πy over the
// square: 0). With mean u = 0 the P1 solution converges to it at L² order
// 2 (Ciarlet 1978); with mean u = 2 it is the same solution plus 2; its
// mean, integrated independently (errorIntegrals, a higher quadrature),
// is the prescribed one. The equation replaced by fixing one node holds up
// to the quadrature error of ∫ f = 0, which falls at order 2 (the default
// rule, exact for the P1 mass terms, integrates f with an O(h²) error).
// With f = 1, ∫ f ≠ 0 and the problem has no solution: the replaced
// equation's residual says so.
func TestMeanCondition(t *testing.T) {
	x, y := coord(0), coord(1)
	cc := mul(call(ir.Cos, mul(pi, x)), call(ir.Cos, mul(pi, y)))
	f := mul(num(2, 1), pi, pi, cc)
	ex, err := ExactFromExprs(2, []ir.Expr{cc})
	if err != nil {
		t.Fatal(err)
	}
	zero, _ := ExactFromExprs(2, []ir.Expr{num(0, 1)})
	var l2, res []float64
	for _, n := range []int{16, 32} {
		msh := mesh.Span2(0, 1, 0, 1, n, n, mesh.DiagonalUp)
		sol, err := Solve(neumannPoisson(f, 0), msh, Options{})
		if err != nil {
			t.Fatal(err)
		}
		e, _ := sol.ErrorNorms(0, ex, 0, 0)
		l2 = append(l2, e)
		res = append(res, sol.Summary.MeanResidual)
		shifted, err := Solve(neumannPoisson(f, 2), msh, Options{})
		if err != nil {
			t.Fatal(err)
		}
		for i := range sol.X {
			if math.Abs(shifted.X[i]-sol.X[i]-2) > 1e-12 {
				t.Fatalf("n = %d: mean 2 solution is not mean 0 solution + 2 at dof %d", n, i)
			}
		}
		_, _, e1, vol := shifted.errorIntegrals(0, zero, 0, 0)
		if mean := -e1 / vol; math.Abs(mean-2) > 1e-12 {
			t.Errorf("n = %d: mean of u_h = %.15g, prescribed 2", n, mean)
		}
	}
	if r := math.Log2(l2[0] / l2[1]); math.Abs(r-2) > 0.1 {
		t.Errorf("L2 order %.3f, want 2", r)
	}
	// The replaced equation's residual is the quadrature error of ∫f
	// (zero for exact integration of compatible data): it falls at least
	// at order 2, the rate of a rule exact for the basis alone; the
	// automatic degree, with its surplus for a source that is not a
	// polynomial, gives about 4.
	if r := math.Log2(res[0] / res[1]); res[0] > 1e-3 || r < 1.8 {
		t.Errorf("replaced equation residuals %.2e, %.2e (order %.2f): want below 1e-3 and falling at order 2 or faster", res[0], res[1], r)
	}
	sol, err := Solve(neumannPoisson(num(1, 1), 0), mesh.Span2(0, 1, 0, 1, 8, 8, mesh.DiagonalUp), Options{})
	if err != nil {
		t.Fatal(err)
	}
	if r := sol.Summary.MeanResidual; r < 0.1 {
		t.Errorf("incompatible data (∫f = 1): replaced equation residual %.2e, want it large", r)
	}
}
