package problem

import (
	"errors"
	"math"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/mesh"
)

// bratuStep is the Newton step of the Bratu problem −u″ − λeᵘ = 0 on
// (0, 1), u(0) = u(1) = 0, written by hand (independently of the
// compiler): the residual F(u; v) = ∫ u′v′ − λ eᵘ v enters as −F, the
// Jacobian J(u; δu, v) = ∫ δu′v′ − λ eᵘ δu v. With exact false the
// Jacobian leaves out its second term (a wrong Jacobian).
func bratuStep(lambda float64, exact bool) *ir.LoweredForm {
	prev := &ir.Field{Name: "u", Role: ir.Previous}
	eu := call(ir.Exp, fd(prev, 0))
	in := ir.Integral{
		Linear: []ir.Term{
			{Coef: neg(fd(prev, 0, 1)), Test: fd(testU, 0, 1)},
			{Coef: mul(flt(lambda), eu), Test: fd(testU, 0)},
		},
		Bilinear: []ir.Term{{Coef: num(1, 1), Trial: fd(trialU, 0, 1), Test: fd(testU, 0, 1)}},
	}
	if exact {
		in.Bilinear = append(in.Bilinear, ir.Term{Coef: neg(mul(flt(lambda), eu)), Trial: fd(trialU, 0), Test: fd(testU, 0)})
	}
	return &ir.LoweredForm{Method: "galerkin", Dim: 1, Newton: true,
		Unknowns:  []ir.LoweredUnknown{{Name: "u", Element: mustElement("P1")}},
		Integrals: []ir.Integral{in},
		Dirichlet: []ir.DirichletCondition{{Side: "left", Value: num(0, 1)}, {Side: "right", Value: num(0, 1)}},
	}
}

// bratuTheta is θ, the smaller root of θ = √(2λ) cosh(θ/4), to machine
// precision by Newton's method from θ = 0 (../../testdata/REFERENCES.md, Bratu
// 1914); bratuExact is the exact solution −2 ln[cosh((x − ½)θ/2)/cosh(θ/4)].
func bratuTheta(lambda float64) float64 {
	th := 0.0
	for i := 0; i < 100; i++ {
		g := th - math.Sqrt(2*lambda)*math.Cosh(th/4)
		dg := 1 - math.Sqrt(2*lambda)*math.Sinh(th/4)/4
		step := g / dg
		th -= step
		if math.Abs(step) <= 1e-16*math.Max(1, th) {
			break
		}
	}
	return th
}

func bratuExact(lambda, x float64) float64 {
	th := bratuTheta(lambda)
	return -2 * math.Log(math.Cosh((x-0.5)*th/2)/math.Cosh(th/4))
}

// TestBratuTheta: θ agrees with the recomputed values of ../../testdata/REFERENCES.md
// (λ = 1: 1.51716459905075; λ = 2: 2.3575510538774), to their 15 digits.
func TestBratuTheta(t *testing.T) {
	for _, c := range [][2]float64{{1, 1.51716459905075}, {2, 2.3575510538774}} {
		if got := bratuTheta(c[0]); math.Abs(got-c[1]) > 1e-13 {
			t.Errorf("θ(%g) = %.15g, want %.15g", c[0], got, c[1])
		}
	}
}

// TestNewtonBratu: Newton's method solves the hand-written Bratu step at
// λ = 1 on 64 P1 intervals: the nodal values are within the O(h²) error
// of P1 of the exact solution (bound 2e-5 at h = 1/64, measured 7.6e-6),
// the last iterations converge quadratically (log r_{k+1}/log r_k ≥ 1.8
// on the relative residuals; Dennis & Schnabel 1983, Th. 5.2.1), and the
// solution has no residual left at the free nodes.
func TestNewtonBratu(t *testing.T) {
	m := mustMesh(t, "span:0,1:64")
	var hist []NewtonStep
	sol, err := Solve(bratuStep(1, true), m, Options{Newton: NewtonOptions{Progress: func(s NewtonStep) { hist = append(hist, s) }}})
	if err != nil {
		t.Fatal(err)
	}
	if sol.Summary.Nonlinear != "newton" || sol.Summary.NonlinearIters != len(hist)-1 || len(sol.Summary.History) != len(hist) {
		t.Errorf("summary %q, %d iterations, history %d lines; progress saw %d", sol.Summary.Nonlinear, sol.Summary.NonlinearIters, len(sol.Summary.History), len(hist))
	}
	worst := 0.0
	coords := sol.Dofs.NodeCoords(0)
	for n, x := range coords {
		worst = math.Max(worst, math.Abs(sol.Fields[0].Values[0][n]-bratuExact(1, x)))
	}
	if worst > 2e-5 {
		t.Errorf("largest nodal error %.3g, want ≤ 2e-5", worst)
	}
	if r := quadraticRatio(hist); !(r >= 1.8) {
		t.Errorf("convergence order of the last iterations %.2f, want ≥ 1.8; history %v", r, hist)
	}
}

// quadraticRatio is the smallest log r_{k+1}/log r_k over the iterations
// where 1e-1 > r_k and r_{k+1} is above the round-off floor (1e-12): the
// observed order of convergence of the relative residuals; NaN when no
// iteration qualifies.
func quadraticRatio(h []NewtonStep) float64 {
	best := math.NaN()
	for k := 1; k+1 < len(h); k++ {
		rk, rk1 := h[k].Relative, h[k+1].Relative
		if rk < 1e-1 && rk1 > 1e-12 {
			if r := math.Log(rk1) / math.Log(rk); math.IsNaN(best) || r < best {
				best = r
			}
		}
	}
	return best
}

// TestNewtonFailsBeyondFold: above the fold λ_c = 3.5138 there is no
// solution (../../testdata/REFERENCES.md), and Newton's method returns a *NewtonError
// with the history, starting with the initial residual.
func TestNewtonFailsBeyondFold(t *testing.T) {
	_, err := Solve(bratuStep(3.6, true), mustMesh(t, "span:0,1:32"), Options{})
	var ne *NewtonError
	if !errors.As(err, &ne) {
		t.Fatalf("error %v, want a *NewtonError", err)
	}
	if len(ne.History) < 2 || ne.History[0].Iter != 0 || ne.Reason == "" {
		t.Errorf("history %v, reason %q", ne.History, ne.Reason)
	}
}

// TestContinueBratu: a ramp in λ from 1 to 3.5 (just below the fold)
// reaches the lower solution branch: u(½) converges to 2 ln cosh(θ/4) at
// order 2 between 32 and 64 intervals (the ratio of the errors within
// [3.2, 4.8]), with an error below 3e-3 on 64 (measured 2.2e-3; near the
// fold the constant of the O(h²) error grows, as the linearisation
// becomes singular there).
func TestContinueBratu(t *testing.T) {
	values, err := Ramp(1, 3.5, 5, false)
	if err != nil {
		t.Fatal(err)
	}
	if len(values) != 5 || values[0] != 1.5 || values[4] != 3.5 {
		t.Fatalf("ramp %v", values)
	}
	var errs []float64
	for _, n := range []int{32, 64} {
		m := mustMesh(t, "span:0,1:"+map[int]string{32: "32", 64: "64"}[n])
		steps := 0
		sol, err := Continue(values, func(l float64) (*ir.LoweredForm, error) { return bratuStep(l, true), nil }, m, Options{},
			func(int, float64, *Solution) { steps++ })
		if err != nil {
			t.Fatal(err)
		}
		if steps != 5 {
			t.Errorf("%d continuation steps, want 5", steps)
		}
		errs = append(errs, math.Abs(sol.Fields[0].Values[0][n/2]-bratuExact(3.5, 0.5)))
	}
	if ratio := errs[0] / errs[1]; errs[1] > 3e-3 || ratio < 3.2 || ratio > 4.8 {
		t.Errorf("errors of u(½) at λ = 3.5: %.3g (32), %.3g (64), ratio %.2f", errs[0], errs[1], ratio)
	}
	if _, err := Ramp(1, -1, 3, true); err == nil {
		t.Error("a geometric ramp across zero was accepted")
	}
}

// TestCheckJacobian: the Taylor remainder of the right Jacobian falls at
// order 2, that of a Jacobian missing a term at order 1, so the check
// tells them apart (the Taylor test; see CheckJacobian).
func TestCheckJacobian(t *testing.T) {
	m := mustMesh(t, "span:0,1:16")
	good, err := CheckJacobian(bratuStep(2, true), m, JacobianCheckOptions{})
	if err != nil {
		t.Fatal(err)
	}
	bad, err := CheckJacobian(bratuStep(2, false), m, JacobianCheckOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(good.Order-2) > 0.1 || good.CentralDiff > 1e-5 {
		t.Errorf("right Jacobian: order %.3f, central difference %.2g", good.Order, good.CentralDiff)
	}
	if math.Abs(bad.Order-1) > 0.1 || bad.CentralDiff < 100*good.CentralDiff {
		t.Errorf("wrong Jacobian: order %.3f, central difference %.2g", bad.Order, bad.CentralDiff)
	}
	if _, err := CheckJacobian(&ir.LoweredForm{}, m, JacobianCheckOptions{}); err == nil {
		t.Error("a form that is not a Newton step was accepted")
	}
}

func mustMesh(t *testing.T, spec string) *mesh.Mesh {
	t.Helper()
	m, err := mesh.Load(spec)
	if err != nil {
		t.Fatal(err)
	}
	return m
}
