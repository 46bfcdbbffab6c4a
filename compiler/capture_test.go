package compiler

import (
	"fmt"
	"math"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
)

// captureValue evaluates an expression of the capturing module with
// numeric arguments (component k of a vector or matrix result).
func captureValue(t *testing.T, call string, k int) float64 {
	t.Helper()
	m := mustModel(t, fmt.Sprintf(`model capture_probe
dimension 2
use capturing
unknown c: scalar P1
given probe = %s
equation for c: -lap(c) = 1
at all: c = 0
stabilise galerkin
`, call))
	l := LowerExpr(m, m.Coef("probe").Def)
	return ir.Eval(l[k], noLeaves{})
}

// TestStdlibCaptureFormulas checks the capturing module against the
// formulas written out in Go (testdata/REFERENCES.md, "Discontinuity
// capturing"; the printed forms are recalled from memory).
func TestStdlibCaptureFormulas(t *testing.T) {
	// Codina: ½ α_c h √(R² + ε_R²)/√(|∇u|² + ε²), α_c = max(0, C − 2k/(|a|h)).
	for _, c := range []struct{ C, speed, k, h, r, gx, gy, eps, epsR float64 }{
		{0.7, 1, 1e-8, 0.1, 2, 3, 4, 0.01, 1e-4},
		{0.7, 2, 0.02, 0.05, -1.5, 0.5, -2, 0.1, 0.01}, // Pe_K = 2.5: α = 0.3
		{0.7, 1, 0.1, 0.1, 2, 3, 4, 0.01, 1e-4},        // Pe_K = 0.5: α = 0, off
	} {
		alpha := math.Max(0, c.C-2*c.k/(c.speed*c.h))
		want := alpha * c.h / 2 * math.Sqrt(c.r*c.r+c.epsR*c.epsR) / math.Sqrt(c.gx*c.gx+c.gy*c.gy+c.eps*c.eps)
		call := fmt.Sprintf("capture_codina(%v, %v, %v, %v, %v, [%v, %v], %v, %v)", c.C, c.speed, c.k, c.h, c.r, c.gx, c.gy, c.eps, c.epsR)
		if got := captureValue(t, call, 0); math.Abs(got-want) > 1e-14*math.Max(1, math.Abs(want)) {
			t.Errorf("%s = %.17g, written out %.17g", call, got, want)
		}
	}
	// The crosswind projection I − a⊗a/|a|² maps a to 0 and keeps a⊥.
	for _, a := range [][2]float64{{1, 0}, {0.5, -math.Sqrt(3) / 2}, {3, 4}} {
		for i := 0; i < 2; i++ {
			for j := 0; j < 2; j++ {
				want := -a[i] * a[j] / (a[0]*a[0] + a[1]*a[1])
				if i == j {
					want++
				}
				call := fmt.Sprintf("crosswind_2d([%v, %v])", a[0], a[1])
				if got := captureValue(t, call, 2*i+j); math.Abs(got-want) > 1e-15 {
					t.Errorf("%s[%d,%d] = %.17g, want %.17g", call, i, j, got, want)
				}
			}
		}
	}
	// YZβ for a scalar: β = 1, |Z| (h/2)/|∇u| (Y cancels); β = 2,
	// |Z/Y| (h/2)² (Bazilevs, Calo, Tezduyar & Hughes 2007).
	if got, want := captureValue(t, "capture_yzb1(1/10, 2, [3, 4], 0, 0)", 0), 2*0.05/5; math.Abs(got-want) > 1e-15 {
		t.Errorf("capture_yzb1 = %.17g, want %.17g", got, want)
	}
	if got, want := captureValue(t, "capture_yzb2(4, 1/10, -2, 0)", 0), 2.0/4*0.05*0.05; math.Abs(got-want) > 1e-15 {
		t.Errorf("capture_yzb2 = %.17g, want %.17g", got, want)
	}
}

// TestCaptureDerivation: a capture statement adds one term to each
// stabilised form and none to Galerkin's; the Jacobian holds the term's
// derivative and defines δκ_dc; the Picard model lags κ_dc, which makes it
// linear.
func TestCaptureDerivation(t *testing.T) {
	m := mustModel(t, `model capture_d
dimension 2
use tau, capturing
unknown c: scalar P1
given a = [1, 1/3]
given kappa = 1/1000
given h = diam(K)
equation for c: a . grad(c) - div(kappa*grad(c)) = 0
at all: c = 0
stabilise galerkin, supg, gls, vms
tau for c = tau_doubly_asymptotic(norm(a), kappa, h)
capture for c = capture_codina(7/10, norm(a), kappa, h, residual(c), grad(c), 1/100, 1/10000)
`)
	if !m.Nonlinear() {
		t.Fatal("a capture diffusivity that reads the residual must make the model nonlinear")
	}
	d, err := Derive(m, AllMethods)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range d.Forms {
		want := 1
		if f.Method == Galerkin {
			want = 0
		}
		if len(f.Capture) != want {
			t.Errorf("%s: %d capture terms, want %d", f.Method, len(f.Capture), want)
		}
		if want == 1 {
			if f.Jacobian.Capture == nil {
				t.Errorf("%s: the Jacobian has no capture terms", f.Method)
			}
			found := false
			for _, g := range f.Jacobian.Defs {
				found = found || g.Sym.Name == "delta_kappa_dc_c"
			}
			if !found {
				t.Errorf("%s: the Jacobian does not define δκ_dc", f.Method)
			}
		}
	}
	pm, err := PicardModel(m)
	if err != nil {
		t.Fatal(err)
	}
	if pm.Nonlinear() || !ir.HasRole(pm.Capture[0], ir.Previous) || ir.HasRole(pm.Capture[0], ir.Trial) {
		t.Error("the Picard model must lag κ_dc at the previous iterate")
	}
	if ir.HasRole(m.Capture[0], ir.Previous) {
		t.Error("PicardModel changed the model's own capture diffusivity")
	}
}
