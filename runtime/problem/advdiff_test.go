package problem

import (
	"errors"
	"math"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/mesh"
)

// advDiff1D is the lowered form of a u′ − k u″ = s on (0,1), u(0) = 0,
// u(1) = 1, P1, with (supg) or without the SUPG term:
//
//	∫ a u′ v + k u′ v′ [+ τ a² u′ v′]  =  ∫ s v [+ τ a s v′],
//
// τ = h/(2a)(coth α − 1/α), α = a h/(2k), h = diam(K) (Brooks &
// Hughes 1982, CMAME 32; Christie, Griffiths, Mitchell & Zienkiewicz
// 1976). The −k u″ part of the SUPG residual vanishes on P1.
func advDiff1D(a, k, s float64, supg bool) *ir.LoweredForm {
	A, K, S := flt(a), flt(k), flt(s)
	alpha := mul(A, hCell, inv(mul(num(2, 1), K)))
	tau := mul(hCell, inv(mul(num(2, 1), A)), add(call(ir.Coth, alpha), neg(inv(alpha))))
	bil := []ir.Term{
		{Coef: A, Trial: fd(trialU, 0, 1), Test: fd(testU, 0)},
		{Coef: K, Trial: fd(trialU, 0, 1), Test: fd(testU, 0, 1)},
	}
	var lin []ir.Term
	if s != 0 {
		lin = append(lin, ir.Term{Coef: S, Test: fd(testU, 0)})
	}
	method := "galerkin"
	if supg {
		method = "supg"
		bil = append(bil, ir.Term{Coef: mul(tau, A, A), Trial: fd(trialU, 0, 1), Test: fd(testU, 0, 1)})
		if s != 0 {
			lin = append(lin, ir.Term{Coef: mul(tau, A, S), Test: fd(testU, 0, 1)})
		}
	}
	return &ir.LoweredForm{
		Method: method, Dim: 1,
		Unknowns:  []ir.LoweredUnknown{{Name: "u", Element: ir.P1}},
		Integrals: []ir.Integral{{Bilinear: bil, Linear: lin}},
		Dirichlet: []ir.DirichletCondition{
			{Side: mesh.Left, Value: num(0, 1)},
			{Side: mesh.Right, Value: num(1, 1)},
		},
	}
}

// exact1D is the exact solution of testdata/REFERENCES.md ([checked]):
// u = (s/a)x + (1 − s/a)(e^{Pe x} − 1)/(e^{Pe} − 1), Pe = a/k, written
// as (e^{Pe(x−1)} − e^{−Pe})/(1 − e^{−Pe}) to avoid overflow.
func exact1D(a, k, s, x float64) float64 {
	pe := a / k
	r := s / a
	return r*x + (1-r)*(math.Exp(pe*(x-1))-math.Exp(-pe))/(1-math.Exp(-pe))
}

// The exact-solution formula against the samples of testdata/REFERENCES.md: Pe=10,
// s=0: u(0.5)=6.692850924285e-03, u(0.9)=3.678507416395e-01; s/a = 0.5:
// u(0.5)=2.533464254621e-01. Printed to 13 digits: tolerance 1e-12.
func TestExact1DSamples(t *testing.T) {
	for _, c := range []struct{ s, x, want float64 }{
		{0, 0.5, 6.692850924285e-03}, {0, 0.9, 3.678507416395e-01}, {0, 0.99, 9.048330974653e-01},
		{0.5, 0.5, 2.533464254621e-01}, {0.5, 0.9, 6.339253708198e-01},
	} {
		if got := exact1D(1, 0.1, c.s, c.x); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("u(%v) = %.13g, want %.13g", c.x, got, c.want)
		}
	}
}

// SUPG with the optimal τ is nodally exact on a uniform P1 mesh for
// constant a, k and zero or constant source (testdata/REFERENCES.md, [checked];
// Christie et al. 1976, Brooks & Hughes 1982), at every element Péclet
// number α = a h/(2k). Tolerance 1e-10 (the brief's): the linear system is
// well conditioned and τ is evaluated in float64.
func TestSUPGNodallyExact1D(t *testing.T) {
	const n = 10
	m := mesh.Span1(0, 1, n, 1)
	h := 1.0 / n
	a := 1.0
	for _, alpha := range []float64{0.1, 1, 10, 100} {
		k := a * h / (2 * alpha)
		for _, s := range []float64{0, 0.5} {
			sol, err := Solve(advDiff1D(a, k, s, true), m, Options{})
			if err != nil {
				t.Fatal(err)
			}
			xs := sol.Dofs.NodeCoords(0)
			for i, u := range sol.Fields[0].Values[0] {
				if want := exact1D(a, k, s, xs[i]); math.Abs(u-want) > 1e-10 {
					t.Errorf("α = %v, s = %v: u(%v) = %.12g, exact %.12g", alpha, s, xs[i], u, want)
				}
			}
			if sol.Summary.Method != "supg" || sol.Summary.KernelPath != "interpreted" || sol.Summary.Dofs != n+1 {
				t.Errorf("summary %+v", sol.Summary)
			}
		}
	}
}

// Galerkin at α = 2.5, s = 0 oscillates (testdata/REFERENCES.md, [checked]). The
// nodal values of Galerkin P1 on a uniform mesh solve the central
// difference scheme (α−1)u_{i+1} + 2u_i − (α+1)u_{i−1} = 0, whose solution
// is u_i = (r^i − 1)/(r^N − 1) with r = (1+α)/(1−α) (e.g. Morton,
// Numerical Solution of Convection–Diffusion Problems, 1996, §2.2): for
// α > 1, r < 0 and the values alternate. Checked to 1e-10, plus the sign
// changes of successive differences (non-monotone).
func TestGalerkinOscillates1D(t *testing.T) {
	const n = 10
	alpha, a := 2.5, 1.0
	h := 1.0 / n
	k := a * h / (2 * alpha)
	sol, err := Solve(advDiff1D(a, k, 0, false), mesh.Span1(0, 1, n, 1), Options{})
	if err != nil {
		t.Fatal(err)
	}
	u := sol.Fields[0].Values[0]
	xs := sol.Dofs.NodeCoords(0)
	r := (1 + alpha) / (1 - alpha)
	maxErr := 0.0
	for i := range u {
		idx := int(math.Round(xs[i] * n))
		want := (math.Pow(r, float64(idx)) - 1) / (math.Pow(r, n) - 1)
		if math.Abs(u[i]-want) > 1e-10 {
			t.Errorf("u(%v) = %.12g, difference scheme gives %.12g", xs[i], u[i], want)
		}
		maxErr = math.Max(maxErr, math.Abs(u[i]-exact1D(a, k, 0, xs[i])))
	}
	// testdata/REFERENCES.md: maximum nodal error 0.436 (printed to 3 digits, so
	// tolerance 5e-4); it is reached with N = 10 cells.
	if math.Abs(maxErr-0.436) > 5e-4 {
		t.Errorf("max nodal error %.4f, testdata/REFERENCES.md gives 0.436", maxErr)
	}
	// Count sign changes of u_{i+1} − u_i in x order.
	ord := make([]float64, n+1)
	for i := range u {
		ord[int(math.Round(xs[i]*n))] = u[i]
	}
	changes := 0
	for i := 1; i+1 < len(ord); i++ {
		if (ord[i+1]-ord[i])*(ord[i]-ord[i-1]) < 0 {
			changes++
		}
	}
	if changes < n/2 {
		t.Errorf("only %d sign changes of successive differences: not oscillating", changes)
	}
	t.Logf("Galerkin α = 2.5, N = %d: max nodal error %.3f, %d sign changes", n, maxErr, changes)
}

// Boundary integrals end to end: −u″ = 0 on (0,1), u(0) = 0 and the Robin
// condition u′(1) + β u(1) = g, weak form ∫ u′v′ + β u(1)v(1) = g v(1)
// (a bilinear and a linear term on side "right"). Exact solution
// u = g x/(1+β) (by hand), reproduced nodally by P1 (the exact solution is
// in the space). Tolerance 1e-13.
func TestRobinBoundary1D(t *testing.T) {
	beta, g := 3.0, 2.0
	form := &ir.LoweredForm{
		Method: "galerkin", Dim: 1,
		Unknowns: []ir.LoweredUnknown{{Name: "u", Element: ir.P1}},
		Integrals: []ir.Integral{
			{Bilinear: []ir.Term{{Coef: num(1, 1), Trial: fd(trialU, 0, 1), Test: fd(testU, 0, 1)}}},
			{Domain: ir.Domain{Side: mesh.Right},
				Bilinear: []ir.Term{{Coef: flt(beta), Trial: fd(trialU, 0), Test: fd(testU, 0)}},
				Linear:   []ir.Term{{Coef: mul(flt(g), &ir.CellQ{Q: ir.Normal, I: 0}), Test: fd(testU, 0)}}},
		},
		Dirichlet: []ir.DirichletCondition{{Side: mesh.Left, Value: num(0, 1)}},
	}
	sol, err := Solve(form, mesh.Span1(0, 1, 7, 1.2), Options{})
	if err != nil {
		t.Fatal(err)
	}
	xs := sol.Dofs.NodeCoords(0)
	for i, u := range sol.Fields[0].Values[0] {
		if want := g * xs[i] / (1 + beta); math.Abs(u-want) > 1e-13 {
			t.Errorf("u(%v) = %.15g, want %.15g", xs[i], u, want)
		}
	}
	if sol.Summary.Symmetric != true {
		t.Error("symmetric Robin form reported nonsymmetric")
	}
	// A side the mesh lacks is an input error, not a panic.
	form.Integrals[1].Domain.Side = "outlet"
	if _, err := Solve(form, mesh.Span1(0, 1, 4, 1), Options{}); !errors.Is(err, ErrNoSide) {
		t.Errorf("integral on a missing side: error %v, want one wrapping ErrNoSide", err)
	}
}
