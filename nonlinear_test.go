package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/big"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/runtime/compiled"
	"github.com/formwright/formwright/runtime/interp"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/linsolve"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"
	"github.com/formwright/formwright/stdlib"
	"gonum.org/v1/gonum/diff/fd"
)

// The nonlinear models: checks against the closed-form solutions and
// tables of testdata/REFERENCES.md.

// nonlinearModels are the standard models whose operators are nonlinear.
var nonlinearModels = []string{"bratu", "burgers", "nonlinear_diffusion", "navier_stokes_nonlinear"}

// withCoef returns the model with a constant coefficient set to v.
func withCoef(t *testing.T, m *compiler.Model, name string, v float64) *compiler.Model {
	t.Helper()
	mm, err := compiler.OverrideCoef(m, name, ir.NewNum(source.Pos{}, new(big.Rat).SetFloat64(v)))
	if err != nil {
		t.Fatal(err)
	}
	return mm
}

// exactOf lowers an expression of x (in the model's syntax) to an Exact.
func exactOf(t *testing.T, m *compiler.Model, src string) problem.Exact {
	t.Helper()
	e, errs := m.ParseExpr("exact", src)
	if len(errs) > 0 {
		t.Fatal(errs)
	}
	ex, err := problem.ExactFromExprs(m.Dim, compiler.LowerExpr(m, e))
	if err != nil {
		t.Fatal(err)
	}
	return ex
}

// bratuTheta is θ, the smaller root of θ = √(2λ) cosh(θ/4), to machine
// precision by Newton's method from 0 (Bratu 1914; testdata/REFERENCES.md).
func bratuTheta(lambda float64) float64 {
	th := 0.0
	for i := 0; i < 100; i++ {
		g := th - math.Sqrt(2*lambda)*math.Cosh(th/4)
		step := g / (1 - math.Sqrt(2*lambda)*math.Sinh(th/4)/4)
		th -= step
		if math.Abs(step) <= 1e-16*math.Max(1, th) {
			break
		}
	}
	return th
}

// bratuExactSrc is the exact Bratu solution −2 ln[cosh((x − ½)θ/2)/cosh(θ/4)]
// in the model syntax, θ written to 17 significant digits.
func bratuExactSrc(lambda float64) string {
	th := fmt.Sprintf("%.17g", bratuTheta(lambda))
	return "-2*log(cosh((x - 1/2)*" + th + "/2)/cosh(" + th + "/4))"
}

// quadraticRatio is the smallest log r_{k+1}/log r_k of the relative
// residuals over the iterations with r_k < 0.1 and r_{k+1} above the
// round-off floor (1e-12: the assembled residuals carry about 1e-14 of
// absolute round-off, ‖F₀‖ is O(0.1–1)): the observed order of
// convergence; NaN when no iteration qualifies.
func quadraticRatio(h []problem.NewtonStep) float64 {
	best := math.NaN()
	for k := 1; k+1 < len(h); k++ {
		if rk, rk1 := h[k].Relative, h[k+1].Relative; rk < 0.1 && rk1 > 1e-12 {
			if r := math.Log(rk1) / math.Log(rk); math.IsNaN(best) || r < best {
				best = r
			}
		}
	}
	return best
}

// TestBratu: the Bratu problem u″ + λeᵘ = 0, u(0) = u(1) = 0, against its
// exact solution (Bratu 1914; testdata/REFERENCES.md). With Newton's
// method, P1 and P2 on 8, 16, 32 intervals at λ = 1 and 2: the L² orders
// on the finest pair are within 0.1 of k + 1 (Ciarlet 1978), the largest
// nodal error on 32 intervals is small (P1; its O(h²) nodal error,
// measured 9.7e-5 at λ = 2, bound 1.5e-4), and Newton converges quadratically
// (log r_{k+1}/log r_k ≥ 1.8 in the last iterations; Dennis & Schnabel
// 1983, Th. 5.2.1).
func TestBratu(t *testing.T) {
	_, src, _ := stdlib.Model("bratu")
	for _, elem := range []string{"P1", "P2"} {
		m, err := loadModel(writeModel(t, strings.Replace(string(src), "scalar P1", "scalar "+elem, 1)))
		if err != nil {
			t.Fatal(err)
		}
		for _, lambda := range []float64{1, 2} {
			ml := withCoef(t, m, "lambda", lambda)
			exact := exactOf(t, ml, bratuExactSrc(lambda))
			var l2s []float64
			for _, n := range []int{8, 16, 32} {
				msh, err := mesh.Load(fmt.Sprintf("span:0,1:%d", n))
				if err != nil {
					t.Fatal(err)
				}
				lf, err := lowerModel(ml, compiler.Galerkin)
				if err != nil {
					t.Fatal(err)
				}
				sol, err := problem.Solve(lf, msh, problem.Options{})
				if err != nil {
					t.Fatal(err)
				}
				l2, _ := sol.ErrorNorms(0, exact, 0, 0)
				l2s = append(l2s, l2)
				if n == 32 {
					nodal := 0.0
					coords := sol.Dofs.NodeCoords(0)
					u, g := make([]float64, 1), make([]float64, 1)
					for i, x := range coords {
						exact([]float64{x}, 0, u, g)
						nodal = math.Max(nodal, math.Abs(sol.Fields[0].Values[0][i]-u[0]))
					}
					if r := quadraticRatio(sol.Summary.History); !(r >= 1.8) {
						t.Errorf("%s λ = %g: convergence order %.2f of the last Newton iterations, want ≥ 1.8", elem, lambda, r)
					}
					t.Logf("%s λ = %g: L² errors %.3e %.3e %.3e, largest nodal error on 32 %.3e, %d Newton iterations",
						elem, lambda, l2s[0], l2s[1], l2s[2], nodal, sol.Summary.NonlinearIters)
					if elem == "P1" && nodal > 1.5e-4 {
						t.Errorf("P1 λ = %g: largest nodal error %.3g, want ≤ 1.5e-4", lambda, nodal)
					}
				}
			}
			order := math.Log2(l2s[1] / l2s[2])
			want := map[string]float64{"P1": 2, "P2": 3}[elem]
			if math.Abs(order-want) > 0.1 {
				t.Errorf("%s λ = %g: L² order %.2f, want %g", elem, lambda, order, want)
			}
		}
	}
}

// TestBratuFold: below the fold λ_c = 3.51383071912516 (testdata/REFERENCES.md)
// solve finds the lower branch, directly and with a ramp in λ; above it
// there is no solution, and solve exits 1 saying the iteration did not
// converge, with the history, and writes nothing.
func TestBratuFold(t *testing.T) {
	for _, args := range [][]string{{"--ramp", "lambda=3.5"}, {"--ramp", "lambda=7/2", "--ramp-steps", "3"}} {
		var out, errb bytes.Buffer
		if st := run(append([]string{"solve", "bratu", "--json", "--quiet"}, args...), &out, &errb); st != exitOK {
			t.Fatalf("%v: status %d\n%s", args, st, errb.String())
		}
		var s jsonSolve
		if err := json.Unmarshal(out.Bytes(), &s); err != nil {
			t.Fatal(err)
		}
		mid := s.Fields[0].Values[0][32]
		// P1 on 64 intervals: O(h²) error, 2.2e-3 measured near the fold.
		if want := -2 * math.Log(1/math.Cosh(bratuTheta(3.5)/4)); math.Abs(mid-want) > 3e-3 || s.Nonlinear != "newton" {
			t.Errorf("%v: u(½) = %.6f, exact %.6f (%s)", args, mid, want, s.Nonlinear)
		}
	}
	dir := t.TempDir()
	outFile := filepath.Join(dir, "u.vtu")
	for _, args := range [][]string{{"--ramp", "lambda=3.6", "--ramp-steps", "10"}, {"--ramp", "lambda=3.6", "--ramp-steps", "1"}} {
		var out, errb bytes.Buffer
		st := run(append([]string{"solve", "bratu", "--quiet", "--out", outFile}, args...), &out, &errb)
		if st != exitNumeric || !strings.Contains(errb.String(), "did not converge") || !strings.Contains(errb.String(), "newton  0:") {
			t.Errorf("%v: status %d, stderr %q; want 1 and the history", args, st, errb.String())
		}
		if _, err := os.Stat(outFile); err == nil {
			t.Errorf("%v: a result was written", args)
		}
	}
}

// TestBurgers: steady viscous Burgers u u′ = ν u″ with the exact solution
// u = −tanh(x/(2ν)) (testdata/REFERENCES.md), on (0, 1), the right half of the odd
// problem on (−1, 1) (stdlib/models/burgers.fw says why the half: on the
// whole interval the shock position has an eigenvalue O(e^(−1/ν))).
// The exact solution is checked by differentiation first, independently
// of the compiler (gonum diff/fd). Then SUPG and VMS at ν = 1/100 and
// 1/1000 on 32 and 256 cells, ν = 1/1000 reached by a ramp in ν: away
// from the layer (x ≥ 0.1, where the exact u is −1 to 10⁻²¹) the nodal
// error is below 1e-3 (stabilised methods are nodally accurate outside
// layers; measured ≤ 2e-4 on 32 cells), and the L² error falls with
// refinement.
func TestBurgers(t *testing.T) {
	for _, nu := range []float64{1.0 / 100, 1.0 / 1000} {
		u := func(x float64) float64 { return -math.Tanh(x / (2 * nu)) }
		for _, x := range []float64{0.003, 0.01, 0.3} {
			du := fd.Derivative(u, x, &fd.Settings{Formula: fd.Central, Step: 1e-6})
			d2u := fd.Derivative(u, x, &fd.Settings{Formula: fd.Central2nd, Step: 1e-4})
			// u u′ and ν u″ are O(1/ν); compare relative to that.
			if r := u(x)*du - nu*d2u; math.Abs(r) > 1e-4/nu {
				t.Errorf("ν = %g, x = %g: u u′ − ν u″ = %.3g", nu, x, r)
			}
		}
	}
	m, err := loadModel("burgers")
	if err != nil {
		t.Fatal(err)
	}
	for _, meth := range []compiler.Method{compiler.SUPG, compiler.VMS} {
		for _, nu := range []float64{1.0 / 100, 1.0 / 1000} {
			var l2s []float64
			for _, n := range []int{32, 256} {
				msh, err := mesh.Load(fmt.Sprintf("span:0,1:%d", n))
				if err != nil {
					t.Fatal(err)
				}
				ramp := []float64{nu}
				if nu < 1.0/100 {
					ramp, _ = problem.Ramp(1.0/100, nu, 4, true)
					ramp = append([]float64{1.0 / 100}, ramp...)
				}
				sol, err := problem.Continue(ramp, func(v float64) (*ir.LoweredForm, error) {
					return lowerModel(withCoef(t, m, "nu", v), meth)
				}, msh, problem.Options{}, nil)
				if err != nil {
					t.Fatalf("%s ν = %g, %d cells: %v", meth, nu, n, err)
				}
				exact := exactOf(t, withCoef(t, m, "nu", nu), "-tanh(x/(2*nu))")
				l2, _ := sol.ErrorNorms(0, exact, 0, 0)
				away := 0.0
				for i, x := range sol.Dofs.NodeCoords(0) {
					if x >= 0.1 {
						away = math.Max(away, math.Abs(sol.Fields[0].Values[0][i]+math.Tanh(x/(2*nu))))
					}
				}
				t.Logf("%s ν = %g, %3d cells: L² error %.3e, largest nodal error for x ≥ 0.1 %.2e", meth, nu, n, l2, away)
				if away > 1e-3 {
					t.Errorf("%s ν = %g, %d cells: nodal error %.3g away from the layer", meth, nu, n, away)
				}
				l2s = append(l2s, l2)
			}
			if !(l2s[1] < l2s[0]) {
				t.Errorf("%s ν = %g: L² error does not fall with refinement: %v", meth, nu, l2s)
			}
		}
	}
}

// TestNonlinearDiffusionOrders: verify derives the source of
// −∇·((1 + u²)∇u) = f from the manufactured solution symbolically and
// observes orders 2/1 on P1 and 3/2 on P2 (L²/H¹; Ciarlet 1978), within
// verify's tolerance 0.2, with Newton's method.
func TestNonlinearDiffusionOrders(t *testing.T) {
	_, src, _ := stdlib.Model("nonlinear_diffusion")
	for _, elem := range []string{"P1", "P2"} {
		path := writeModel(t, strings.Replace(string(src), "scalar P1", "scalar "+elem, 1))
		rep := verifyJSON(t, path, "--method", "galerkin", "--levels", "4")
		last := rep.Methods[0].Levels[3]
		k := map[string]float64{"P1": 1, "P2": 2}[elem]
		t.Logf("%s: L² order %.2f, H¹ order %.2f; source %s", elem, last.OrderL2, last.OrderH1, rep.Sources[0])
		if math.Abs(last.OrderL2-(k+1)) > 0.2 || math.Abs(last.OrderH1-k) > 0.2 {
			t.Errorf("%s: orders %.2f, %.2f, want %g, %g", elem, last.OrderL2, last.OrderH1, k+1, k)
		}
	}
}

// TestKovasznay: the Kovasznay flow (Kovasznay 1948; testdata/REFERENCES.md) at
// Re = 40 is an exact solution of the steady Navier–Stokes equations, so
// the source that verify derives from it, by applying the operator
// symbolically, vanishes (checked at sample points to 1e-10; the terms
// are O(1)). On the unit square with its values on the boundary, Newton's
// method converges at the expected orders: with the Taylor–Hood pair
// P2/P1 and Galerkin, velocity 3 (L²) and 2 (H¹) within 0.1, pressure 2
// within 0.2 (pre-asymptotic on 16², measured 2.16; Brezzi & Fortin
// 1991, recalled from memory); with SUPG on P1/P1 the velocity L² order
// stays near 1.5 down to h = 1/32, where the element Péclet number is
// 0.6: the strong residual of P1 loses the diffusive term (the warning of
// the derivation; Jansen, Collis, Whiting & Shakib 1999), so there only
// L² ≥ 1.4, H¹ ≥ 0.9 for the velocity and ≥ 1 for the pressure are
// asserted (measured 1.50, 1.01, 1.40) with the recovery of the second
// derivatives off. With it on (the default) the errors are smaller on
// every level, the finest velocity L² error 3.42e-3 against 5.18e-3
// (asserted: at least 20 % smaller), but the orders are erratic: 1.84,
// 1.93, then 1.20 on the finest pair, pressure L² 1.00 (asserted: ≥ 1.1,
// ≥ 0.9 and ≥ 0.9, a record of that behaviour, not a target).
func TestKovasznay(t *testing.T) {
	if testing.Short() {
		t.Skip("two Navier–Stokes refinement studies")
	}
	_, src, _ := stdlib.Model("navier_stokes_nonlinear")
	s := strings.Replace(string(src), "given Re = 100", "given Re = 40", 1)
	s = strings.Replace(s, "at left, right, bottom: vel = [0, 0]\nat top: vel = [1, 0]\n", "at all: vel = [0, 0]\n", 1)
	lambda := 20 - math.Sqrt(400+4*math.Pi*math.Pi)
	// testdata/REFERENCES.md: λ = −0.9637405441957689 at Re 40.
	if math.Abs(lambda+0.9637405441957689) > 1e-15 {
		t.Fatalf("λ = %.16g", lambda)
	}
	l := fmt.Sprintf("(%.17g)", lambda)
	exact := "[1 - exp(" + l + "*x)*cos(2*pi*y), " + l + "/(2*pi)*exp(" + l + "*x)*sin(2*pi*y)]; -exp(2*" + l + "*x)/2"
	p1 := writeModel(t, s)
	m, err := loadModel(p1)
	if err != nil {
		t.Fatal(err)
	}
	ex, err := parseExact(m, exact)
	if err != nil {
		t.Fatal(err)
	}
	mf, err := compiler.Manufacture(m, ex, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i, f := range mf.Sources {
		for _, c := range compiler.LowerExpr(m, f) {
			fn, err := problem.ExactFromExprs(2, []ir.Expr{c})
			if err != nil {
				t.Fatal(err)
			}
			v, g := make([]float64, 1), make([]float64, 2)
			for _, x := range [][]float64{{0.5, 0.25}, {0.1, 0.9}, {0.77, 0.33}} {
				fn(x, 0, v, g)
				if math.Abs(v[0]) > 1e-10 {
					t.Errorf("source of equation %d at %v = %.3g, want 0", i, x, v[0])
				}
			}
		}
	}
	th := writeModel(t, strings.Replace(s, "unknown vel: vector P1", "unknown vel: vector P2", 1))
	finest := map[string]float64{} // finest velocity L² error of the P1 runs
	for _, c := range []struct {
		path, method, levels string
		vel                  [2]float64
		p, tol               float64
		recover              bool
	}{
		{th, "galerkin", "3", [2]float64{3, 2}, 2, 0.1, true},
		{p1, "supg", "4", [2]float64{1.4, 0.9}, 1, 0, false},
		{p1, "supg", "4", [2]float64{1.1, 0.9}, 0.9, 0, true},
	} {
		args := []string{c.path, "--method", c.method, "--exact", exact, "--levels", c.levels, fmt.Sprintf("--recover=%v", c.recover)}
		if c.tol == 0 {
			args = append(args, "--check=false")
		}
		rep := verifyJSON(t, args...)
		for _, tb := range rep.Methods {
			last := tb.Levels[len(tb.Levels)-1]
			t.Logf("%s %s %s (recovery %v): L² order %.2f, H¹ order %.2f (finest L² error %.3e)", tb.Method, tb.Field, tb.Element, c.recover, last.OrderL2, last.OrderH1, last.L2)
			if tb.Field == "vel" && tb.Element == "P1" {
				finest[fmt.Sprint(c.recover)] = last.L2
			}
			want := []float64{c.p}
			got := []float64{last.OrderL2}
			if tb.Field == "vel" {
				want, got = c.vel[:], []float64{last.OrderL2, last.OrderH1}
			}
			for k := range want {
				tol := c.tol
				if tb.Field == "p" {
					tol *= 2
				}
				if (c.tol > 0 && math.Abs(got[k]-want[k]) > tol) || (c.tol == 0 && got[k] < want[k]) {
					t.Errorf("%s %s: order %.2f, want %g", tb.Method, tb.Field, got[k], want[k])
				}
			}
		}
	}
	if !(finest["true"] < 0.8*finest["false"]) {
		t.Errorf("P1 SUPG finest velocity L² error with the recovery %.3e, without %.3e: want at least 20%% smaller", finest["true"], finest["false"])
	}
}

// ghia100 holds Ghia, Ghia & Shin (1982, J. Comput. Phys. 48), Tables I
// and II at Re = 100: u(0.5, y) and v(x, 0.5) (testdata/REFERENCES.md).
var ghia100 = struct{ u, v [][2]float64 }{
	u: [][2]float64{{0.9766, 0.84123}, {0.9688, 0.78871}, {0.9609, 0.73722}, {0.9531, 0.68717}, {0.8516, 0.23151},
		{0.7344, 0.00332}, {0.6172, -0.13641}, {0.5, -0.20581}, {0.4531, -0.21090}, {0.2813, -0.15662}, {0.1719, -0.10150},
		{0.1016, -0.06434}, {0.0703, -0.04775}, {0.0625, -0.04192}, {0.0547, -0.03717}},
	v: [][2]float64{{0.9688, -0.05906}, {0.9609, -0.07391}, {0.9531, -0.08864}, {0.9453, -0.10313}, {0.9063, -0.16914},
		{0.8594, -0.22445}, {0.8047, -0.24533}, {0.5, 0.05454}, {0.2344, 0.17527}, {0.2266, 0.17507}, {0.1563, 0.16077},
		{0.0938, 0.12317}, {0.0781, 0.10890}, {0.0703, 0.10091}, {0.0625, 0.09233}},
}

// ghiaDeviation is the largest deviation of the centreline velocities of
// a cavity solution from a table: u along x = ½ and v along y = ½,
// linearly interpolated between mesh nodes.
func ghiaDeviation(sol *problem.Solution, tu, tv [][2]float64) (du, dv float64) {
	coords := sol.Dofs.NodeCoords(0)
	profile := func(vals []float64, axis int) (pos, val []float64) {
		type pv struct{ p, v float64 }
		var pts []pv
		for n := 0; n < len(coords)/2; n++ {
			if math.Abs(coords[2*n+axis]-0.5) < 1e-12 {
				pts = append(pts, pv{coords[2*n+1-axis], vals[n]})
			}
		}
		for i := range pts {
			for j := i + 1; j < len(pts); j++ {
				if pts[j].p < pts[i].p {
					pts[i], pts[j] = pts[j], pts[i]
				}
			}
		}
		for _, q := range pts {
			pos, val = append(pos, q.p), append(val, q.v)
		}
		return
	}
	at := func(pos, val []float64, s float64) float64 {
		for k := 0; k+1 < len(pos); k++ {
			if s <= pos[k+1] {
				w := (s - pos[k]) / (pos[k+1] - pos[k])
				return (1-w)*val[k] + w*val[k+1]
			}
		}
		return val[len(val)-1]
	}
	py, pu := profile(sol.Fields[0].Values[0], 0)
	px, pv := profile(sol.Fields[0].Values[1], 1)
	for _, r := range tu {
		du = math.Max(du, math.Abs(at(py, pu, r[0])-r[1]))
	}
	for _, r := range tv {
		dv = math.Max(dv, math.Abs(at(px, pv, r[0])-r[1]))
	}
	return du, dv
}

// stokesStart returns one step of the Picard linearisation from zero: for
// Navier–Stokes, the Stokes solution.
func stokesStart(t testing.TB, m *compiler.Model, meth compiler.Method, msh *mesh.Mesh) []float64 {
	return picardSteps(t, m, meth, msh, 1)
}

// picardSteps returns the state after k steps of the Picard linearisation
// of m from zero (the first is the Stokes solution for Navier–Stokes):
// a start from which Newton's method converges at higher Re.
func picardSteps(t testing.TB, m *compiler.Model, meth compiler.Method, msh *mesh.Mesh, k int) []float64 {
	pm, err := compiler.PicardModel(m)
	if err != nil {
		t.Fatal(err)
	}
	pf, err := lowerModel(pm, meth)
	if err != nil {
		t.Fatal(err)
	}
	var x []float64
	for i := 0; i < k; i++ {
		sol, err := problem.Solve(pf, msh, problem.Options{PreviousFixed: true, Initial: x})
		if err != nil {
			t.Fatal(err)
		}
		x = sol.X
	}
	return x
}

// TestCavityNewtonRe100: Navier–Stokes written with grad(vel) . vel and
// solved by Newton's method (SUPG and VMS, P1/P1, 64²) reproduces the
// centreline velocities of Ghia, Ghia & Shin (1982) to 2.5 % of the lid
// speed, like the Picard solution of the hand-lagged model
// (TestLidDrivenCavityRe100); from a Stokes start the iteration count is
// reported and the last iterations converge quadratically
// (log r_{k+1}/log r_k ≥ 1.8; Dennis & Schnabel 1983, Th. 5.2.1).
func TestCavityNewtonRe100(t *testing.T) {
	if testing.Short() {
		t.Skip("two 64² Navier–Stokes solves")
	}
	m, err := loadModel("navier_stokes_nonlinear")
	if err != nil {
		t.Fatal(err)
	}
	msh, err := mesh.Load("span:0,1,0,1:64x64:tri")
	if err != nil {
		t.Fatal(err)
	}
	for _, meth := range []compiler.Method{compiler.SUPG, compiler.VMS} {
		// Without the recovery of the P1 second derivatives, whose
		// derivative J leaves out (Newton then converges linearly).
		lf, _, err := deriveAndLowerWith(m, meth, compiler.DeriveOptions{Recovery: compiler.RecoverOff})
		if err != nil {
			t.Fatal(err)
		}
		sol, err := problem.Solve(lf, msh, problem.Options{Initial: stokesStart(t, m, meth, msh)})
		if err != nil {
			t.Fatal(err)
		}
		du, dv := ghiaDeviation(sol, ghia100.u, ghia100.v)
		r := quadraticRatio(sol.Summary.History)
		t.Logf("%s: %d Newton iterations from the Stokes solution (kernels %s); deviation from Ghia et al.: u %.4f, v %.4f; order of the last iterations %.2f",
			meth, sol.Summary.NonlinearIters, sol.Summary.KernelPath, du, dv, r)
		for _, h := range sol.Summary.History {
			t.Logf("  %v", h)
		}
		if du > 0.025 || dv > 0.025 {
			t.Errorf("%s: deviation from Ghia et al. u %.4f, v %.4f, want ≤ 0.025", meth, du, dv)
		}
		if !(r >= 1.8) {
			t.Errorf("%s: convergence order %.2f of the last iterations, want ≥ 1.8", meth, r)
		}
	}
}

// TestRecoveredNewtonCorrection: with recovered second derivatives in the
// residual, the assembled Jacobian holds the recovered gradient fixed and
// Newton's method with it converges linearly; the runtime's correction of
// each step toward the exact Jacobian (GMRES on directional differences
// of the residual, preconditioned by the factorised Jacobian; Knoll &
// Keyes 2004, J. Comput. Phys. 193; forcing terms of Eisenstat & Walker
// 1996, SIAM J. Sci. Comput. 17) restores superlinear convergence. On
// Kovasznay flow at Re 40 (Kovasznay 1948; an exact solution of the
// equations with no force, imposed on the boundary), SUPG, 12×16
// quartered squares: both iterations reach the same discrete solution
// (the fixed point does not depend on the Jacobian), the corrected one in
// at most half the iterations, with log r_{k+1}/log r_k ≥ 1.5 in its last
// iterations (superlinear; Dennis & Schnabel 1983, Th. 5.2.1 for the
// measure) where the uncorrected one stays below 1.3 (linear).
func TestRecoveredNewtonCorrection(t *testing.T) {
	if testing.Short() {
		t.Skip("two Navier–Stokes solves")
	}
	lf, msh := kovasznayRecovered(t, "12x16")
	var sols [2]*problem.Solution
	for k, fixedRec := range []bool{true, false} {
		sol, err := problem.Solve(lf, msh, problem.Options{Newton: problem.NewtonOptions{FixedRecovery: fixedRec}})
		if err != nil {
			t.Fatal(err)
		}
		sols[k] = sol
		for _, h := range sol.Summary.History {
			t.Logf("fixed recovery %v: %v", fixedRec, h)
		}
	}
	fixedIt, corrIt := sols[0].Summary.NonlinearIters, sols[1].Summary.NonlinearIters
	fixedOrder, corrOrder := quadraticRatio(sols[0].Summary.History), quadraticRatio(sols[1].Summary.History)
	diff, size := 0.0, 0.0
	for i, v := range sols[0].X {
		diff = math.Max(diff, math.Abs(v-sols[1].X[i]))
		size = math.Max(size, math.Abs(v))
	}
	t.Logf("iterations %d fixed, %d corrected; order of the last iterations %.2f, %.2f; largest difference %.2e of %.2e", fixedIt, corrIt, fixedOrder, corrOrder, diff, size)
	if diff > 1e-8*size {
		t.Errorf("the two iterations reach different solutions: largest difference %.3e of %.3e", diff, size)
	}
	if 2*corrIt > fixedIt {
		t.Errorf("corrected Newton took %d iterations, fixed-recovery Newton %d: want at most half", corrIt, fixedIt)
	}
	if !(corrOrder >= 1.5) || !(fixedOrder < 1.3) {
		t.Errorf("order of the last iterations %.2f corrected (want ≥ 1.5), %.2f fixed (want < 1.3)", corrOrder, fixedOrder)
	}
}

// kovasznayRecovered is Kovasznay flow at Re 40 (navier_stokes_nonlinear
// with the exact velocity imposed on the whole boundary; it solves the
// equations with no force) lowered for SUPG with the recovered second
// derivatives, and the quartered mesh of the given squares on its usual
// domain.
func kovasznayRecovered(t testing.TB, squares string) (*ir.LoweredForm, *mesh.Mesh) {
	_, src, err := stdlib.Model("navier_stokes_nonlinear")
	if err != nil {
		t.Fatal(err)
	}
	l := fmt.Sprintf("(%.17g)", 20-math.Sqrt(400+4*math.Pi*math.Pi))
	s := strings.Replace(string(src), "given Re = 100", "given Re = 40", 1)
	s = strings.Replace(s, "at left, right, bottom: vel = [0, 0]\nat top: vel = [1, 0]\n",
		"at all: vel = [1 - exp("+l+"*x)*cos(2*pi*y), "+l+"/(2*pi)*exp("+l+"*x)*sin(2*pi*y)]\n", 1)
	m, err := loadModel(writeModel(t, s))
	if err != nil {
		t.Fatal(err)
	}
	msh, err := mesh.Load("span:-0.5,1,-0.5,1.5:" + squares + ":quartered")
	if err != nil {
		t.Fatal(err)
	}
	lf, _, err := deriveAndLowerWith(m, compiler.SUPG, compiler.DeriveOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !lf.ReadsRecovered() {
		t.Fatal("the SUPG form does not read recovered derivatives")
	}
	return lf, msh
}

// BenchmarkRecoveredNewton times, interleaved in one run, Newton's method
// on Kovasznay flow (kovasznayRecovered, 24×32 quartered squares, 4 779
// dofs, interpreted kernels, direct solver) with the fixed-recovery
// Jacobian alone and with the corrected steps, and reports iterations,
// assemblies (directional residuals included) and the time ratio.
//
//	go test . -run '^$' -bench RecoveredNewton -benchtime 2x
func BenchmarkRecoveredNewton(b *testing.B) {
	lf, msh := kovasznayRecovered(b, "24x32")
	var tm [2]time.Duration
	var its, dirs [2]int
	b.ResetTimer()
	for b.Loop() {
		for k, fixedRec := range []bool{true, false} {
			t0 := time.Now()
			sol, err := problem.Solve(lf, msh, problem.Options{Newton: problem.NewtonOptions{FixedRecovery: fixedRec}})
			if err != nil {
				b.Fatal(err)
			}
			tm[k] += time.Since(t0)
			its[k], dirs[k] = sol.Summary.NonlinearIters, 0
			for _, h := range sol.Summary.History {
				dirs[k] += h.Directional
			}
		}
	}
	ms := func(d time.Duration) float64 { return float64(d.Milliseconds()) / float64(b.N) }
	b.ReportMetric(float64(its[0]), "fixed-iters")
	b.ReportMetric(float64(its[1]), "corrected-iters")
	b.ReportMetric(float64(dirs[1]), "directional-residuals")
	b.ReportMetric(ms(tm[0]), "fixed-ms")
	b.ReportMetric(ms(tm[1]), "corrected-ms")
	b.ReportMetric(float64(tm[1])/float64(tm[0]), "corrected/fixed")
}

// TestNewtonAndPicardAgree: the derived Picard linearisation of a
// nonlinear model has the same fixed point as its residual form (at
// u⁽ᵖʳᵉᵛ⁾ = u the lagged form is F(u; v), cross and Reynolds stresses
// included), so Newton's method and the Picard iteration reach the same
// discrete solution when both integrate with the same rule (the Newton
// step's own degree is one higher, for the Jacobian's products of the
// iterate and the increment; τ(u) is not a polynomial, so the degree
// matters): for SUPG and VMS on a 16² cavity at Re 100 they agree to
// 1e-7 of the solution's size (Picard's tolerance 1e-10 on the relative
// change, divided by 1 − its contraction factor; measured 1e-11).
func TestNewtonAndPicardAgree(t *testing.T) {
	m, err := loadModel("navier_stokes_nonlinear")
	if err != nil {
		t.Fatal(err)
	}
	msh, err := mesh.Load("span:0,1,0,1:16x16:tri")
	if err != nil {
		t.Fatal(err)
	}
	pm, err := compiler.PicardModel(m)
	if err != nil {
		t.Fatal(err)
	}
	for _, meth := range []compiler.Method{compiler.SUPG, compiler.VMS} {
		// Without the recovery of the P1 second derivatives: the Newton
		// iteration would converge only linearly within its limit.
		off := compiler.DeriveOptions{Recovery: compiler.RecoverOff}
		lf, _, err := deriveAndLowerWith(m, meth, off)
		if err != nil {
			t.Fatal(err)
		}
		pf, _, err := deriveAndLowerWith(pm, meth, off)
		if err != nil {
			t.Fatal(err)
		}
		deg := lf.QuadratureDegree()
		newton, err := problem.Solve(lf, msh, problem.Options{Degree: deg})
		if err != nil {
			t.Fatal(err)
		}
		picard, err := problem.Solve(pf, msh, problem.Options{PicardTol: 1e-10, Degree: deg})
		if err != nil {
			t.Fatal(err)
		}
		diff, size := 0.0, 0.0
		for i := range newton.X {
			diff = math.Max(diff, math.Abs(newton.X[i]-picard.X[i]))
			size = math.Max(size, math.Abs(newton.X[i]))
		}
		t.Logf("%s: Newton %d, Picard %d iterations; largest difference %.2e", meth, newton.Summary.NonlinearIters, picard.Summary.NonlinearIters, diff)
		if diff > 1e-7*size {
			t.Errorf("%s: Newton and Picard solutions differ by %.3g", meth, diff)
		}
	}
}

// TestJacobianOfEveryModel: for every standard nonlinear model and every
// method, the derived Jacobian passes the Taylor test (CheckJacobian):
// the remainder falls at order 2 within 0.1, and J·δ matches the central
// difference of F to 1e-5 relative (O(ε²) at ε = 8e-4). With τ and the
// test operator frozen, the stabilised Jacobians of Burgers and
// Navier–Stokes (where both depend on u) give order 1 within 0.15, so the
// check can fail; Galerkin has neither and lists no approximation. The
// jacobian command exits 0 on the exact Jacobian.
func TestJacobianOfEveryModel(t *testing.T) {
	for _, name := range nonlinearModels {
		m, err := loadModel(name)
		if err != nil {
			t.Fatal(err)
		}
		spec := map[int]string{1: "span:0,1:12", 2: "span:0,1,0,1:3x3:tri"}[m.Dim]
		msh, err := mesh.Load(spec)
		if err != nil {
			t.Fatal(err)
		}
		for _, meth := range compiler.AllMethods {
			for _, freeze := range []bool{false, true} {
				// The recovered second derivatives of P1 residuals, which J
				// holds fixed by design, are off here (checked below).
				d, err := compiler.DeriveWith(m, []compiler.Method{meth}, compiler.DeriveOptions{Jacobian: compiler.JacobianOptions{FreezeTau: freeze, FreezeTest: freeze}, Recovery: compiler.RecoverOff})
				if err != nil {
					t.Fatal(err)
				}
				if dr, err := compiler.DeriveWith(m, []compiler.Method{meth}, compiler.DeriveOptions{Jacobian: compiler.JacobianOptions{FreezeTau: freeze, FreezeTest: freeze}}); err != nil {
					t.Fatal(err)
				} else if lr, err := dr.Lower(meth); err != nil {
					t.Fatal(err)
				} else if a := dr.Forms[0].Jacobian.Approximations; lr.ReadsRecovered() != (len(a) > 0 && strings.Contains(a[len(a)-1].Text, "recovered")) {
					t.Errorf("%s %s: the form reads recovered derivatives: %v, but the approximations are %q", name, meth, lr.ReadsRecovered(), a)
				}
				lf, err := d.Lower(meth)
				if err != nil {
					t.Fatal(err)
				}
				jc, err := problem.CheckJacobian(lf, msh, problem.JacobianCheckOptions{Scale: 0.5, Options: problem.Options{Interpreted: true}})
				if err != nil {
					t.Fatal(err)
				}
				approx := len(d.Forms[0].Jacobian.Approximations) > 0
				switch {
				case !freeze && (approx || math.Abs(jc.Order-2) > 0.1 || jc.CentralDiff > 1e-5):
					t.Errorf("%s %s: remainder order %.3f, central difference %.2g, approximations %q", name, meth, jc.Order, jc.CentralDiff, d.Forms[0].Jacobian.Approximations)
				case freeze && meth != compiler.Galerkin && (name == "burgers" || name == "navier_stokes_nonlinear") && (!approx || math.Abs(jc.Order-1) > 0.15):
					// τ and the advecting velocity of the test function
					// depend on u here: the frozen terms are first order.
					t.Errorf("%s %s frozen: remainder order %.3f, want 1", name, meth, jc.Order)
				case freeze && meth == compiler.Galerkin && approx:
					t.Errorf("%s galerkin frozen: approximations %q, but Galerkin has no τ or test operator", name, d.Forms[0].Jacobian.Approximations)
				}
			}
		}
		var out, errb bytes.Buffer
		if st := run([]string{"jacobian", name, "--method", "all"}, &out, &errb); st != exitOK || !strings.Contains(out.String(), "J is the derivative of F") {
			t.Errorf("jacobian %s: status %d\n%s%s", name, st, out.String(), errb.String())
		}
	}
}

// TestNonlinearCompiledMatchesInterpreted: the generated kernels of the
// Newton steps of every standard nonlinear model (stdlib/kernels) equal
// the interpreted ones on random cells and random iterates, to 1e-13 of
// the largest entry (both sum the same products in different orders;
// common practice, no source).
func TestNonlinearCompiledMatchesInterpreted(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 14))
	for _, name := range nonlinearModels {
		m, err := loadModel(name)
		if err != nil {
			t.Fatal(err)
		}
		msh, _, err := buildMesh(m, map[int]string{1: "span:0,1:8", 2: "span:0,1,0,1:4x4:tri"}[m.Dim])
		if err != nil {
			t.Fatal(err)
		}
		for _, meth := range compiler.AllMethods {
			lf, err := lowerModel(m, meth)
			if err != nil {
				t.Fatal(err)
			}
			k, ok := compiled.Lookup(ir.FormHash(lf))
			if !ok {
				t.Errorf("%s %s: no compiled kernel (regenerate stdlib/kernels)", name, meth)
				continue
			}
			ik, err := interp.NewKernel(lf, msh.Cell, interp.Options{})
			if err != nil {
				t.Fatal(err)
			}
			gk := k.NewCell()
			n := ik.Layout().N()
			A1, b1, A2, b2 := make([]float64, n*n), make([]float64, n), make([]float64, n*n), make([]float64, n)
			for c := 0; c < msh.NumCells(); c += 3 {
				in := &kernel.CellInput{Index: c, Coords: msh.CellCoords(c, nil), Previous: make([]float64, n)}
				for i := range in.Previous {
					in.Previous[i] = 2*rng.Float64() - 1
				}
				ik.Cell(in, A1, b1)
				gk.Cell(in, A2, b2)
				for _, pair := range [][2][]float64{{A1, A2}, {b1, b2}} {
					scale, diff := 0.0, 0.0
					for i := range pair[0] {
						scale = math.Max(scale, math.Abs(pair[0][i]))
						diff = math.Max(diff, math.Abs(pair[0][i]-pair[1][i]))
					}
					if !(diff <= 1e-13*scale) {
						t.Errorf("%s %s cell %d: generated and interpreted differ by %.3g (largest entry %.3g)", name, meth, c, diff, scale)
					}
				}
			}
		}
	}
}

// TestNewtonTaylorGreen: transient Navier–Stokes written without a lag is
// stepped by backward Euler with Newton's method in every step, and
// converges to the Taylor–Green vortex (Taylor & Green 1937) at velocity
// orders 2 (L²) and 1 (H¹) within 0.1 and pressure order ≥ 1, like the
// Picard version (TestTransientNavierStokesTaylorGreen).
func TestNewtonTaylorGreen(t *testing.T) {
	if testing.Short() {
		t.Skip("a transient Navier–Stokes refinement study")
	}
	src := strings.ReplaceAll(taylorGreen, "previous(vel)", "vel")
	path := writeModel(t, src)
	exact := "[-cos(x)*sin(y)*exp(-2*nu*t), sin(x)*cos(y)*exp(-2*nu*t)]; -(cos(2*x)+cos(2*y))/4*exp(-4*nu*t)"
	rep := verifyJSON(t, path, "--method", "supg", "--exact", exact, "--until", "0.2", "--steps", "2", "--levels", "3")
	for _, vm := range rep.Methods {
		last := vm.Levels[len(vm.Levels)-1]
		t.Logf("%s %s: orders %.2f, %.2f", vm.Method, vm.Field, last.OrderL2, last.OrderH1)
		switch vm.Field {
		case "vel":
			if math.Abs(last.OrderL2-2) > 0.1 || math.Abs(last.OrderH1-1) > 0.1 {
				t.Errorf("%s velocity orders %.2f, %.2f", vm.Method, last.OrderL2, last.OrderH1)
			}
		case "p":
			if last.OrderL2 < 1 {
				t.Errorf("%s pressure L2 order %.2f", vm.Method, last.OrderL2)
			}
		}
	}
}

// benchCavity solves the lid-driven cavity (navier_stokes_nonlinear, SUPG,
// P1/P1 on an n×n triangle mesh) at Reynolds number re three ways in one
// run, each from the Stokes solution (one Picard step from zero), on the
// interpreted kernels (the generated ones are for Re 100 only) and with
// the direct solver for every linear system, so that the nonlinear
// iterations are compared on equal terms:
//
//   - Newton's method with the derived Jacobian and the line search, to
//     the relative residual 1e-10 (newton-failed = 1 when it stalls);
//   - the derived Picard linearisation, to the relative change 1e-8;
//   - Picard until the relative change is below 1e-2, then Newton (the
//     common hybrid: Picard's larger basin, Newton's fast end).
//
// It reports the nonlinear iterations and wall times (the Stokes start
// included) and the ratios of Picard's time to the others'.
func benchCavity(b *testing.B, re float64, n int) {
	m, err := loadModel("navier_stokes_nonlinear")
	if err != nil {
		b.Fatal(err)
	}
	mr, err := compiler.OverrideCoef(m, "Re", ir.NewNum(source.Pos{}, new(big.Rat).SetFloat64(re)))
	if err != nil {
		b.Fatal(err)
	}
	msh, err := mesh.Load(fmt.Sprintf("span:0,1,0,1:%dx%d:tri", n, n))
	if err != nil {
		b.Fatal(err)
	}
	pm, err := compiler.PicardModel(mr)
	if err != nil {
		b.Fatal(err)
	}
	lf, err := lowerModel(mr, compiler.SUPG)
	if err != nil {
		b.Fatal(err)
	}
	pf, err := lowerModel(pm, compiler.SUPG)
	if err != nil {
		b.Fatal(err)
	}
	stokes := func() []float64 {
		sol, err := problem.Solve(pf, msh, problem.Options{PreviousFixed: true, Solver: &linsolve.Options{Method: linsolve.MethodDirect}})
		if err != nil {
			b.Fatal(err)
		}
		return sol.X
	}
	var r cavityRun
	for b.Loop() {
		r = runCavity(b, lf, pf, msh, stokes)
	}
	b.ReportMetric(float64(r.newtonIt), "newton-iterations")
	b.ReportMetric(r.failed, "newton-failed")
	b.ReportMetric(r.newtonS, "newton-s")
	b.ReportMetric(float64(r.picardIt), "picard-iterations")
	b.ReportMetric(r.picardS, "picard-s")
	b.ReportMetric(float64(r.hybridPicard), "hybrid-picard-iterations")
	b.ReportMetric(float64(r.hybridNewton), "hybrid-newton-iterations")
	b.ReportMetric(r.hybridS, "hybrid-s")
	b.ReportMetric(r.picardS/r.newtonS, "picard/newton-time")
	b.ReportMetric(r.picardS/r.hybridS, "picard/hybrid-time")
}

// cavityRun is one run of benchCavity's three solves.
type cavityRun struct {
	newtonIt, picardIt, hybridPicard, hybridNewton int
	newtonS, picardS, hybridS, failed              float64
}

func runCavity(b *testing.B, lf, pf *ir.LoweredForm, msh *mesh.Mesh, stokes func() []float64) (r cavityRun) {
	direct := &linsolve.Options{Method: linsolve.MethodDirect}
	start := time.Now()
	sol, err := problem.Solve(lf, msh, problem.Options{Initial: stokes(), Solver: direct})
	var ne *problem.NewtonError
	switch {
	case errors.As(err, &ne):
		r.failed, r.newtonIt = 1, len(ne.History)-1
	case err != nil:
		b.Fatal(err)
	default:
		r.newtonIt = sol.Summary.NonlinearIters
		benchSink += sol.X[0]
	}
	r.newtonS = time.Since(start).Seconds()

	start = time.Now()
	psol, err := problem.Solve(pf, msh, problem.Options{Initial: stokes(), MaxPicard: 500, Solver: direct})
	if err != nil {
		b.Fatal(err)
	}
	r.picardS, r.picardIt = time.Since(start).Seconds(), psol.Summary.NonlinearIters

	start = time.Now()
	rough, err := problem.Solve(pf, msh, problem.Options{Initial: stokes(), PicardTol: 1e-2, MaxPicard: 500, Solver: direct})
	if err != nil {
		b.Fatal(err)
	}
	hsol, err := problem.Solve(lf, msh, problem.Options{Initial: rough.X, Solver: direct})
	if err != nil {
		b.Fatal(err)
	}
	r.hybridS, r.hybridPicard, r.hybridNewton = time.Since(start).Seconds(), rough.Summary.NonlinearIters, hsol.Summary.NonlinearIters
	benchSink += psol.X[0] + hsol.X[0]
	return r
}

// benchSink keeps the benchmarked solutions alive.
var benchSink float64

func BenchmarkCavityNewtonVsPicard_Re400_64(b *testing.B)   { benchCavity(b, 400, 64) }
func BenchmarkCavityNewtonVsPicard_Re400_128(b *testing.B)  { benchCavity(b, 400, 128) }
func BenchmarkCavityNewtonVsPicard_Re1000_64(b *testing.B)  { benchCavity(b, 1000, 64) }
func BenchmarkCavityNewtonVsPicard_Re1000_128(b *testing.B) { benchCavity(b, 1000, 128) }

// TestDerivedPicardIsTheHandLaggedModel: the Picard linearisation that the
// compiler derives from Navier–Stokes written without a lag is, for every
// method, the very form of the standard model navier_stokes, where the
// convecting velocity and τ are lagged by hand with previous(vel): the
// same form hash (ir.FormHash), so the same kernels serve both — VMS's
// cross and Reynolds stresses included.
func TestDerivedPicardIsTheHandLaggedModel(t *testing.T) {
	nl, err := loadModel("navier_stokes_nonlinear")
	if err != nil {
		t.Fatal(err)
	}
	pm, err := compiler.PicardModel(nl)
	if err != nil {
		t.Fatal(err)
	}
	hand, err := loadModel("navier_stokes")
	if err != nil {
		t.Fatal(err)
	}
	for _, meth := range compiler.AllMethods {
		a, err := lowerModel(pm, meth)
		if err != nil {
			t.Fatal(err)
		}
		b, err := lowerModel(hand, meth)
		if err != nil {
			t.Fatal(err)
		}
		if ir.FormHash(a) != ir.FormHash(b) {
			t.Errorf("%s: the derived Picard form differs from navier_stokes", meth)
		}
	}
}

// TestKovasznayRecovered: Kovasznay flow at Re 40 (Kovasznay 1948;
// testdata/REFERENCES.md) on its usual domain (−0.5, 1) × (−0.5, 1.5), P1/P1
// on the "quartered" pattern from 6×8 squares, three meshes. With the
// recovered second derivatives in the residual (the default) the velocity
// L² order on the finest pair is ≥ 1.9 for SUPG and VMS (measured 1.92,
// 1.94; a fourth mesh gives 2.19, 2.15); with the recovery off it is
// below 1.8 (measured 1.71, 1.72; the fourth mesh 1.87, 1.89), and the
// finest error is at least 1.4 times larger (measured 3.8e-2 against
// 2.5e-2 for SUPG). On the "tri" pattern the recovery also lowers the
// errors (2.3e-3 against 3.9e-3 on 96×128 squares, SUPG) but the orders
// stay erratic (1.79, 1.47, 1.56): not asserted here.
func TestKovasznayRecovered(t *testing.T) {
	if testing.Short() {
		t.Skip("two Navier–Stokes refinement studies with linear Newton convergence")
	}
	_, src, _ := stdlib.Model("navier_stokes_nonlinear")
	s := strings.Replace(string(src), "given Re = 100", "given Re = 40", 1)
	s = strings.Replace(s, "at left, right, bottom: vel = [0, 0]\nat top: vel = [1, 0]\n", "at all: vel = [0, 0]\n", 1)
	l := fmt.Sprintf("(%.17g)", 20-math.Sqrt(400+4*math.Pi*math.Pi))
	exact := "[1 - exp(" + l + "*x)*cos(2*pi*y), " + l + "/(2*pi)*exp(" + l + "*x)*sin(2*pi*y)]; -exp(2*" + l + "*x)/2"
	path := writeModel(t, s)
	finest := map[string]float64{}
	for _, recover := range []bool{true, false} {
		rep := verifyJSON(t, path, "--method", "supg,vms", "--exact", exact, "--mesh", "span:-0.5,1,-0.5,1.5:6x8:quartered", "--levels", "3", "--check=false", fmt.Sprintf("--recover=%v", recover))
		for _, tb := range rep.Methods {
			if tb.Field != "vel" {
				continue
			}
			last := tb.Levels[len(tb.Levels)-1]
			t.Logf("%s (recovery %v): velocity L² order %.2f on the finest pair, error %.3e", tb.Method, recover, last.OrderL2, last.L2)
			finest[fmt.Sprint(tb.Method, recover)] = last.L2
			if recover && last.OrderL2 < 1.9 {
				t.Errorf("%s with the recovery: velocity L² order %.2f, want ≥ 1.9", tb.Method, last.OrderL2)
			}
			if !recover && last.OrderL2 >= 1.8 {
				t.Errorf("%s without the recovery: velocity L² order %.2f, the weak consistency should show (< 1.8)", tb.Method, last.OrderL2)
			}
		}
	}
	for _, meth := range []string{"supg", "vms"} {
		if on, off := finest[meth+"true"], finest[meth+"false"]; !(off >= 1.4*on) {
			t.Errorf("%s: finest velocity L² error %.3e with the recovery, %.3e without: want a factor ≥ 1.4", meth, on, off)
		}
	}
}
