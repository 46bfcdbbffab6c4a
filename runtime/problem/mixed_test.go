package problem

import (
	"math"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/mesh"
)

// A one-way coupled system of two fields of different degree (u: P2,
// p: P1), which exercises the off-diagonal block of a mixed-order matrix:
//
//	−Δu = f₁,  −Δp + u = f₂  in (0,1)², u = p = 0 on the boundary,
//
// weak form Σ_k ∫ ∂_k u ∂_k v + Σ_k ∫ ∂_k p ∂_k q + ∫ u q = ∫ f₁ v + ∫ f₂ q.
// Exact u = sin πx sin πy, p = x(1−x)y(1−y): f₁ = 2π² u,
// f₂ = 2[x(1−x) + y(1−y)] + u. u is the plain P2 Galerkin solution (L²
// order 3, Ciarlet 1978); p sees u_h as data with an O(h³) error, so its
// L² order is that of P1, 2. Within 0.1 between the last two of three
// meshes. (With two-way coupling the P1 error pollutes u and order 3 is
// not to be expected.)
func TestMixedOrderCoupledSystem(t *testing.T) {
	x, y := coord(0), coord(1)
	one := num(1, 1)
	u := sinSin()
	p := mul(x, add(one, neg(x)), y, add(one, neg(y)))
	f1 := mul(num(2, 1), pi, pi, sinSin())
	f2 := add(mul(num(2, 1), add(mul(x, add(one, neg(x))), mul(y, add(one, neg(y))))), u)
	trialP := &ir.Field{Name: "p", Index: 1, Role: ir.Trial}
	testP := &ir.Field{Name: "p", Index: 1, Role: ir.Test}
	var bil []ir.Term
	for k := 0; k < 2; k++ {
		bil = append(bil,
			ir.Term{Coef: one, Trial: fd(trialU, 0, axis(k)...), Test: fd(testU, 0, axis(k)...)},
			ir.Term{Coef: one, Trial: fd(trialP, 0, axis(k)...), Test: fd(testP, 0, axis(k)...)})
	}
	bil = append(bil, ir.Term{Coef: one, Trial: fd(trialU, 0), Test: fd(testP, 0)})
	form := &ir.LoweredForm{
		Method: "galerkin", Dim: 2,
		Unknowns: []ir.LoweredUnknown{{Name: "u", Element: ir.P2}, {Name: "p", Element: ir.P1}},
		Integrals: []ir.Integral{{Bilinear: bil, Linear: []ir.Term{
			{Coef: f1, Test: fd(testU, 0)}, {Coef: f2, Test: fd(testP, 0)},
		}}},
		Dirichlet: []ir.DirichletCondition{
			{Side: mesh.All, Unknown: 0, Value: num(0, 1)},
			{Side: mesh.All, Unknown: 1, Value: num(0, 1)},
		},
	}
	eu, _ := ExactFromExprs(2, []ir.Expr{u})
	ep, _ := ExactFromExprs(2, []ir.Expr{p})
	var lu, lp []float64
	for _, n := range []int{8, 16, 32} {
		sol, err := Solve(form, mesh.Span2(0, 1, 0, 1, n, n, mesh.DiagonalUp), Options{})
		if err != nil {
			t.Fatal(err)
		}
		if sol.Summary.Symmetric {
			t.Error("one-way coupled form assembled as symmetric")
		}
		a, _ := sol.ErrorNorms(0, eu, 0, 0)
		b, _ := sol.ErrorNorms(1, ep, 0, 0)
		lu, lp = append(lu, a), append(lp, b)
	}
	ru, rp := math.Log2(lu[1]/lu[2]), math.Log2(lp[1]/lp[2])
	t.Logf("orders: u (P2) %.3f, p (P1) %.3f", ru, rp)
	if math.Abs(ru-3) > 0.1 || math.Abs(rp-2) > 0.1 {
		t.Errorf("orders u %.3f (want 3), p %.3f (want 2)", ru, rp)
	}
}

// A vector field: −Δu = f componentwise for u = (sin πx sin πy,
// x(1−x)y(1−y)), Q2 on quadrilaterals, u = 0 on the boundary, each
// component's own Dirichlet condition. L² order 3 (Ciarlet 1978).
func TestVectorFieldQ2(t *testing.T) {
	x, y := coord(0), coord(1)
	one := num(1, 1)
	u1 := sinSin()
	u2 := mul(x, add(one, neg(x)), y, add(one, neg(y)))
	f := []ir.Expr{mul(num(2, 1), pi, pi, sinSin()), mul(num(2, 1), add(mul(x, add(one, neg(x))), mul(y, add(one, neg(y)))))}
	trial := &ir.Field{Name: "w", Index: 0, Role: ir.Trial, R: 1}
	test := &ir.Field{Name: "w", Index: 0, Role: ir.Test, R: 1}
	var bil, lin []ir.Term
	for c := 0; c < 2; c++ {
		for k := 0; k < 2; k++ {
			bil = append(bil, ir.Term{Coef: one, Trial: fd(trial, c, axis(k)...), Test: fd(test, c, axis(k)...)})
		}
		lin = append(lin, ir.Term{Coef: f[c], Test: fd(test, c)})
	}
	form := &ir.LoweredForm{
		Method: "galerkin", Dim: 2,
		Unknowns:  []ir.LoweredUnknown{{Name: "w", Rank: 1, Element: ir.Q2}},
		Integrals: []ir.Integral{{Bilinear: bil, Linear: lin}},
		Dirichlet: []ir.DirichletCondition{{Side: mesh.All, Comp: 0, Value: num(0, 1)}, {Side: mesh.All, Comp: 1, Value: num(0, 1)}},
	}
	ex, err := ExactFromExprs(2, []ir.Expr{u1, u2})
	if err != nil {
		t.Fatal(err)
	}
	var l2 []float64
	for _, n := range []int{8, 16} {
		sol, err := Solve(form, mesh.Span2(0, 1, 0, 1, n, n, mesh.Quads), Options{})
		if err != nil {
			t.Fatal(err)
		}
		e, _ := sol.ErrorNorms(0, ex, 0, 0)
		l2 = append(l2, e)
		if len(sol.Fields[0].Values) != 2 || sol.Summary.Dofs != 2*(2*n+1)*(2*n+1) {
			t.Fatalf("vector field: %d components, %d dofs", len(sol.Fields[0].Values), sol.Summary.Dofs)
		}
	}
	if r := math.Log2(l2[0] / l2[1]); math.Abs(r-3) > 0.1 {
		t.Errorf("vector Q2 L2 order %.3f, want 3", r)
	}
}

// Picard iteration on a quasilinear problem: −((1 + u²) u′)′ = f on (0,1),
// u = 0 at both ends, exact u = sin πx, so
// f = (1 + u²)π² sin πx − 2u (π cos πx)². Lowered with the previous
// iterate in the coefficient: ∫ (1 + u_prev²) u′ v′ = ∫ f v. The fixed
// point is the Galerkin solution of the nonlinear problem, of L² order 2
// for P1 (Ciarlet 1978 for the linearised operator; common practice).
func TestPicardQuasilinear(t *testing.T) {
	x := coord(0)
	s := call(ir.Sin, mul(pi, x))
	c := call(ir.Cos, mul(pi, x))
	prev := &ir.FieldD{Field: &ir.Field{Name: "u", Index: 0, Role: ir.Previous}}
	f := add(mul(add(num(1, 1), mul(s, s)), pi, pi, s), mul(num(-2, 1), s, pi, pi, c, c))
	form := &ir.LoweredForm{
		Method: "galerkin", Dim: 1,
		Unknowns: []ir.LoweredUnknown{{Name: "u", Element: ir.P1}},
		Integrals: []ir.Integral{{
			Bilinear: []ir.Term{{Coef: add(num(1, 1), mul(prev, prev)), Trial: fd(trialU, 0, 1), Test: fd(testU, 0, 1)}},
			Linear:   []ir.Term{{Coef: f, Test: fd(testU, 0)}},
		}},
		Dirichlet: []ir.DirichletCondition{{Side: mesh.All, Value: num(0, 1)}},
	}
	ex, _ := ExactFromExprs(1, []ir.Expr{s})
	var l2 []float64
	for _, n := range []int{16, 32} {
		sol, err := Solve(form, mesh.Span1(0, 1, n, 1), Options{PicardTol: 1e-11})
		if err != nil {
			t.Fatal(err)
		}
		if sol.Summary.NonlinearIters < 3 {
			t.Errorf("Picard took %d steps; a nonlinear problem needs several", sol.Summary.NonlinearIters)
		}
		e, _ := sol.ErrorNorms(0, ex, 0, 0)
		l2 = append(l2, e)
	}
	if r := math.Log2(l2[0] / l2[1]); math.Abs(r-2) > 0.1 {
		t.Errorf("Picard P1 L2 order %.3f, want 2", r)
	}
	// Under-relaxation (ω = 1/2) reaches the same fixed point, in more
	// steps on this problem, whose plain iteration already contracts.
	msh := mesh.Span1(0, 1, 16, 1)
	plain, err := Solve(form, msh, Options{PicardTol: 1e-11})
	if err != nil {
		t.Fatal(err)
	}
	relaxed, err := Solve(form, msh, Options{PicardTol: 1e-11, PicardRelax: 0.5})
	if err != nil {
		t.Fatal(err)
	}
	for i := range plain.X {
		if math.Abs(plain.X[i]-relaxed.X[i]) > 1e-9 {
			t.Fatalf("relaxed Picard differs at dof %d: %.12g vs %.12g", i, relaxed.X[i], plain.X[i])
		}
	}
	if relaxed.Summary.NonlinearIters <= plain.Summary.NonlinearIters {
		t.Errorf("relaxed Picard took %d steps, plain %d: the relaxation was not applied", relaxed.Summary.NonlinearIters, plain.Summary.NonlinearIters)
	}
	// A budget of one step cannot settle: typed error.
	_, err = Solve(form, mesh.Span1(0, 1, 8, 1), Options{MaxPicard: 1})
	if _, ok := err.(*PicardError); !ok {
		t.Errorf("one Picard step: error %v, want *PicardError", err)
	}
}
