package main

import (
	"errors"
	"math"
	"os"
	"sort"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"
	"github.com/formwright/formwright/stdlib"
)

// Discontinuity capturing (compiler/capture.go): the examples' stated
// results, the Taylor test of the derived Jacobian, the agreement of the
// generated and interpreted kernels, and an independent check of the term
// itself.

// layerStats are the measures of a solution with one interior layer from
// 0 to 1: the overshoot max − 1, the undershoot −min, and the smearing,
// the distance between the points where u = 0.1 and u = 0.9 on a mesh
// line across the layer, in cells (the measure of John & Knobloch 2007,
// CMAME 196, for the Hughes–Mallet–Mizukami problem [memory]).
type layerStats struct {
	over, under, width float64
	newton             int
	// farOver and farUnder are over- and undershoot more than four cells
	// from the corner where the inflow data jump (the layer's origin).
	farOver, farUnder float64
}

// measureLayer computes layerStats on the line where coordinate axis
// `fixed` equals at, walking along the other axis; the first crossing of
// each level after start counts. cells is the number of cells per unit
// length.
func measureLayer(t *testing.T, sol *problem.Solution, fixed int, at, start float64, cells int, corner [2]float64) layerStats {
	t.Helper()
	coords := sol.Dofs.NodeCoords(0)
	vals := sol.Fields[0].Values[0]
	type pt struct{ s, u float64 }
	var line []pt
	st := layerStats{over: math.Inf(-1), under: math.Inf(-1), farOver: math.Inf(-1), farUnder: math.Inf(-1), newton: sol.Summary.NonlinearIters}
	for i := range vals {
		x := coords[2*i : 2*i+2] // 2D node coordinates, stored flat
		st.over = math.Max(st.over, vals[i]-1)
		st.under = math.Max(st.under, -vals[i])
		if math.Hypot(x[0]-corner[0], x[1]-corner[1]) > 4/float64(cells) {
			st.farOver = math.Max(st.farOver, vals[i]-1)
			st.farUnder = math.Max(st.farUnder, -vals[i])
		}
		if math.Abs(x[fixed]-at) < 1e-9 {
			line = append(line, pt{x[1-fixed], vals[i]})
		}
	}
	sort.Slice(line, func(i, j int) bool { return line[i].s < line[j].s })
	cross := func(level float64) float64 {
		for i := 0; i+1 < len(line); i++ {
			a, b := line[i], line[i+1]
			if a.s < start || a.u == b.u || (a.u-level)*(b.u-level) > 0 {
				continue
			}
			return a.s + (level-a.u)*(b.s-a.s)/(b.u-a.u)
		}
		t.Fatalf("no crossing of %g on the line", level)
		return 0
	}
	st.width = math.Abs(cross(0.9)-cross(0.1)) * float64(cells)
	return st
}

// picardStart is what solve does for a model with a capture statement
// (cmd_nonlinear.go): one step of the Picard linearisation, the capture
// diffusivity lagged at the zero state, as Newton's starting point. A
// model without capture is returned opts unchanged.
func picardStart(t *testing.T, m *compiler.Model, msh *mesh.Mesh, opts problem.Options) problem.Options {
	t.Helper()
	if !m.HasCapture() || !m.Nonlinear() {
		return opts
	}
	pm, err := compiler.PicardModel(m)
	if err != nil {
		t.Fatal(err)
	}
	pf, err := lowerModel(pm, compiler.SUPG)
	if err != nil {
		t.Fatal(err)
	}
	po := opts
	po.PreviousFixed = true
	sol, err := problem.Solve(pf, msh, po)
	if err != nil {
		t.Fatal(err)
	}
	opts.Initial = sol.X
	return opts
}

// solveCapture solves a model's SUPG form on a 64×64 mesh of the given
// pattern, with its capture term (starting Newton's method as solve does)
// or (plain) without it.
// lowerPlain derives and lowers one method with the plain P1 residual
// (the recovery of second derivatives off): the residual discontinuity
// capturing is calibrated with, so that a model with and one without a
// capture statement compare like with like.
func lowerPlain(m *compiler.Model, meth compiler.Method) (*ir.LoweredForm, error) {
	lf, _, err := deriveAndLowerWith(m, meth, compiler.DeriveOptions{Recovery: compiler.RecoverOff})
	return lf, err
}

func solveCapture(t *testing.T, path, pattern string, plain, compiled bool) *problem.Solution {
	t.Helper()
	m, err := loadModel(path)
	if err != nil {
		t.Fatal(err)
	}
	if plain {
		for i := range m.Capture {
			m.Capture[i], m.CaptureSym[i] = nil, nil
		}
	}
	msh, _, err := buildMesh(m, "span:0,1,0,1:64x64:"+pattern)
	if err != nil {
		t.Fatal(err)
	}
	lf, err := lowerPlain(m, compiler.SUPG)
	if err != nil {
		t.Fatal(err)
	}
	sol, err := problem.Solve(lf, msh, picardStart(t, m, msh, problem.Options{Interpreted: !compiled}))
	if err != nil {
		t.Fatal(err)
	}
	if compiled && sol.Summary.KernelPath != "compiled" {
		t.Fatalf("%s: no compiled kernel (regenerate the example's kernels)", path)
	}
	return sol
}

// captureCase is one row of an example's README table.
type captureCase struct {
	pattern string
	plain   bool
	want    layerStats
}

// checkCaptureTable solves every row and compares it with the README's
// table: over- and undershoot to 1e-3, smearing to 0.01 cells, Newton
// iterations exactly (regression values of this code, not published
// ones; a linear solve counts as one iteration). It returns the measured
// rows.
func checkCaptureTable(t *testing.T, path string, rows []captureCase, measure func(*problem.Solution) layerStats) map[string]layerStats {
	got := map[string]layerStats{}
	for _, r := range rows {
		sol := solveCapture(t, path, r.pattern, r.plain, !r.plain)
		s := measure(sol)
		key := r.pattern + map[bool]string{true: " plain", false: " capture"}[r.plain]
		got[key] = s
		w := r.want
		t.Logf("%s %s: over %.4f under %.4f (far from the corner %.4f, %.4f), smearing %.2f cells, %d iterations", path, key, s.over, s.under, s.farOver, s.farUnder, s.width, s.newton)
		if math.Abs(s.over-w.over) > 1e-3 || math.Abs(s.under-w.under) > 1e-3 || math.Abs(s.width-w.width) > 0.01 || s.newton != w.newton ||
			math.Abs(s.farOver-w.farOver) > 1e-3 || math.Abs(s.farUnder-w.farUnder) > 1e-3 {
			t.Errorf("%s %s: overshoot %.4f, undershoot %.4f (%.4f, %.4f away from the corner), smearing %.2f cells, %d Newton iterations; README states %.3f, %.3f (%.3f, %.3f), %.2f, %d",
				path, key, s.over, s.under, s.farOver, s.farUnder, s.width, s.newton, w.over, w.under, w.farOver, w.farUnder, w.width, w.newton)
		}
	}
	return got
}

// TestExampleSkewFront: the Hughes–Mallet–Mizukami problem (HMM 1986,
// CMAME 54; data in testdata/REFERENCES.md). SUPG over- and undershoots at
// the interior layer and the outflow layers; Codina's discontinuity
// capturing removes the oscillations of the layers. Newton's method
// converges in a handful of iterations. The smearing is measured on
// y = 0.25.
func TestExampleSkewFront(t *testing.T) {
	const path = "examples/skew_front/model.fw"
	measure := func(sol *problem.Solution) layerStats {
		return measureLayer(t, sol, 1, 0.25, 0, 64, [2]float64{0, 0.7})
	}
	got := checkCaptureTable(t, path, []captureCase{
		{"tri", true, layerStats{0.175, 0.048, 4.55, 1, 0.175, 0.048}},
		{"tri", false, layerStats{0.061, 0.001, 6.52, 8, 0.030, 0.001}},
		{"tri-flip", true, layerStats{0.173, 0.047, 2.48, 1, 0.173, 0.047}},
		{"tri-flip", false, layerStats{0.000, 0.000, 4.45, 13, 0.000, 0.000}},
	}, measure)
	checkCaptureClaims(t, got)
}

// TestExampleCrosswindPlumeCapture: the crosswind plume with Codina's
// discontinuity capturing (examples/crosswind_plume/capture.fw), the
// smearing measured on x = 0.5 above the inflow corner.
func TestExampleCrosswindPlumeCapture(t *testing.T) {
	const path = "examples/crosswind_plume/capture.fw"
	measure := func(sol *problem.Solution) layerStats {
		return measureLayer(t, sol, 0, 0.5, 0.05, 64, [2]float64{0, 0.2})
	}
	got := checkCaptureTable(t, path, []captureCase{
		{"tri", true, layerStats{0.066, 0.068, 2.58, 1, 0.060, 0.056}},
		{"tri", false, layerStats{0.000, 0.000, 4.69, 15, 0.000, 0.000}},
		{"tri-flip", true, layerStats{0.048, 0.136, 4.71, 1, 0.048, 0.103}},
		{"tri-flip", false, layerStats{0.002, 0.038, 6.88, 9, 0.002, 0.031}},
	}, measure)
	checkCaptureClaims(t, got)
}

// checkCaptureClaims checks what the READMEs claim beyond the numbers:
// capturing at least halves the largest over/undershoot of SUPG,
// Newton converges within 20 iterations, and the layer widens by at most
// 2.5 cells (the issue asked for one cell; the examples' READMEs say that
// this is not met).
func checkCaptureClaims(t *testing.T, got map[string]layerStats) {
	for _, pat := range []string{"tri", "tri-flip"} {
		p, c := got[pat+" plain"], got[pat+" capture"]
		if worst(c) > worst(p)/2 {
			t.Errorf("%s: capturing leaves %.4f of SUPG's %.4f", pat, worst(c), worst(p))
		}
		if c.newton < 1 || c.newton > 20 {
			t.Errorf("%s: %d Newton iterations", pat, c.newton)
		}
		if c.width-p.width > 2.5 {
			t.Errorf("%s: the layer widens by %.2f cells", pat, c.width-p.width)
		}
	}
}

func worst(s layerStats) float64 { return math.Max(s.over, s.under) }

// TestCaptureJacobianTaylor: the derived Jacobian of SUPG with capturing,
// δκ_dc included, is the derivative of the residual form: the Taylor
// remainder falls at order 2 (Farrell, Ham, Funke & Rognes 2013) on a
// small mesh at a random state, for the isotropic and the crosswind
// (tensor) diffusivity and for YZβ.
func TestCaptureJacobianTaylor(t *testing.T) {
	raw, err := os.ReadFile("examples/skew_front/model.fw")
	if err != nil {
		t.Fatal(err)
	}
	src := string(raw)
	variants := map[string]string{
		"isotropic": "",
		"crosswind": "capture for u = capture_codina(7/10, norm(b), kappa, h, residual(u), grad(u), 1/100, 1/10000)*crosswind_2d(b)",
		"yzb":       "capture for u = (capture_yzb1(h, residual(u), grad(u), 1/100, 1/10000) + capture_yzb2(1, h, residual(u), 1/10000))/2",
	}
	for name, line := range variants {
		text := src
		if line != "" {
			text = replaceCapture(t, src, line)
		}
		m := checkText(t, "skew_"+name+".fw", text)
		msh, err := mesh.Load("span:0,1,0,1:4x4:tri")
		if err != nil {
			t.Fatal(err)
		}
		lf, err := lowerModel(m, compiler.SUPG)
		if err != nil {
			t.Fatal(err)
		}
		jc, err := problem.CheckJacobian(lf, msh, problem.JacobianCheckOptions{Seed: 1, Scale: 1})
		if err != nil {
			t.Fatal(err)
		}
		if jc.Order < 1.9 || jc.CentralDiff > 1e-5 {
			t.Errorf("%s: Taylor remainder order %.2f, central difference %.2e: want 2 and O(ε²)", name, jc.Order, jc.CentralDiff)
		}
	}
}

// TestCaptureConstantIsDiffusion checks the capture term against an
// independent formulation: with a constant capture diffusivity c (a
// scalar, or a tensor C), SUPG with capturing is SUPG of the same problem
// with the diffusivity κ + c (κI + C) in the Galerkin part, when τ is the
// same and the elements are P1 (where the diffusive part of the SUPG
// residual vanishes inside each cell). Both go through the whole pipeline
// and must agree to 1e-12; the constant diffusivity keeps the model
// linear, which exercises the linear lowering of the term.
func TestCaptureConstantIsDiffusion(t *testing.T) {
	head := `model capture_const
dimension 2
use tau
unknown u: scalar P1
given a = [1, 1/3]
given h = diam(K)
at left, bottom: u = (1 + tanh(20*(y - x)))/2
stabilise supg
tau for u = tau_doubly_asymptotic(norm(a), 1/1000, h)
`
	for _, c := range []struct{ capture, diffusion string }{
		{"1/50", "-div((1/1000 + 1/50)*grad(u))"},
		{"[[1/50, 1/100], [1/100, 1/30]]", "-div(([[1/1000, 0], [0, 1/1000]] + [[1/50, 1/100], [1/100, 1/30]]) . grad(u))"},
	} {
		a := checkText(t, "a.fw", head+"equation for u: a . grad(u) - div(1/1000*grad(u)) = 0\ncapture for u = "+c.capture+"\n")
		b := checkText(t, "b.fw", head+"equation for u: a . grad(u) "+c.diffusion+" = 0\n")
		if a.Nonlinear() {
			t.Fatal("a constant capture diffusivity made the model nonlinear")
		}
		msh, err := mesh.Load("span:0,1,0,1:16x16:tri")
		if err != nil {
			t.Fatal(err)
		}
		var sols [2]*problem.Solution
		for i, m := range []*compiler.Model{a, b} {
			lf, err := lowerPlain(m, compiler.SUPG)
			if err != nil {
				t.Fatal(err)
			}
			if sols[i], err = problem.Solve(lf, msh, problem.Options{Interpreted: true}); err != nil {
				t.Fatal(err)
			}
		}
		diff := 0.0
		for i := range sols[0].X {
			diff = math.Max(diff, math.Abs(sols[0].X[i]-sols[1].X[i]))
		}
		if diff > 1e-12 {
			t.Errorf("capture %s: differs from the diffusive model by %.3g", c.capture, diff)
		}
	}
}

// TestCaptureCompiledMatchesInterpreted: the generated kernels of the
// Newton step with capturing (value, gradient and Jacobian of κ_dc) give
// the solution of the interpreted kernels to 1e-10 after the whole
// Newton iteration (each step agrees to round-off; the iteration
// amplifies it at most by the conditioning of J).
func TestCaptureCompiledMatchesInterpreted(t *testing.T) {
	for _, path := range []string{"examples/skew_front/model.fw", "examples/crosswind_plume/capture.fw"} {
		a := solveCapture(t, path, "tri", false, true)
		b := solveCapture(t, path, "tri", false, false)
		diff := 0.0
		for i := range a.X {
			diff = math.Max(diff, math.Abs(a.X[i]-b.X[i]))
		}
		if diff > 1e-10 || a.Summary.NonlinearIters != b.Summary.NonlinearIters {
			t.Errorf("%s: compiled and interpreted differ by %.3g (%d and %d Newton iterations)", path, diff, a.Summary.NonlinearIters, b.Summary.NonlinearIters)
		}
	}
}

func replaceCapture(t *testing.T, src, line string) string {
	t.Helper()
	var out []string
	found := false
	for _, l := range strings.Split(src, "\n") {
		if strings.HasPrefix(l, "capture for") {
			l, found = line, true
		}
		out = append(out, l)
	}
	if !found {
		t.Fatal("no capture statement to replace")
	}
	return strings.Join(out, "\n")
}

func checkText(t *testing.T, name, src string) *compiler.Model {
	t.Helper()
	f, errs := lang.Parse(name, []byte(src))
	m, cerrs := compiler.Check(f, compiler.CheckOptions{Load: stdlib.Module})
	if errs = append(errs, cerrs...); len(errs) > 0 {
		t.Fatalf("%s: %v", name, errs)
	}
	return m
}

// TestSkewFrontCaptureSweep: the trade-off the skew_front README states.
// Codina's constant C (0.7 his value for linear triangles [memory]) sets
// how much the capture term diffuses: a smaller C leaves more
// over/undershoot and a sharper layer, a larger one the reverse; no C on
// this mesh gives both under 1 % and at most one extra cell. The
// regularisation scales ε (gradient) and ε_R (residual floor) change the
// result little over two decades. Values are this code's (regression),
// to 1e-3 and 0.01 cells.
func TestSkewFrontCaptureSweep(t *testing.T) {
	raw, err := os.ReadFile("examples/skew_front/model.fw")
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		c, eps, epsR, pattern string
		want                  layerStats
	}{
		{"35/100", "1/100", "1/10000", "tri-flip", layerStats{over: 0.057, under: 0.001, width: 3.45, newton: 8}},
		{"1", "1/100", "1/10000", "tri-flip", layerStats{over: 0.000, under: 0.000, width: 5.06, newton: 36}},
		{"7/10", "1/10", "1/1000", "tri-flip", layerStats{over: 0.000, under: 0.000, width: 4.46, newton: 11}},
		{"7/10", "1/1000", "1/100000", "tri-flip", layerStats{over: 0.000, under: 0.000, width: 4.45, newton: 14}},
		{"7/10", "1/10", "1/1000", "tri", layerStats{over: 0.062, under: 0.001, width: 6.52, newton: 7}},
		{"7/10", "1/1000", "1/100000", "tri", layerStats{over: 0.061, under: 0.001, width: 6.52, newton: 8}},
	} {
		line := "capture for u = capture_codina(" + c.c + ", norm(b), kappa, h, residual(u), grad(u), " + c.eps + ", " + c.epsR + ")"
		m := checkText(t, "sweep.fw", replaceCapture(t, string(raw), line))
		msh, err := mesh.Load("span:0,1,0,1:64x64:" + c.pattern)
		if err != nil {
			t.Fatal(err)
		}
		lf, err := lowerModel(m, compiler.SUPG)
		if err != nil {
			t.Fatal(err)
		}
		sol, err := problem.Solve(lf, msh, picardStart(t, m, msh, problem.Options{Interpreted: true, Newton: problem.NewtonOptions{MaxIter: 40}}))
		if err != nil {
			t.Fatal(err)
		}
		s := measureLayer(t, sol, 1, 0.25, 0, 64, [2]float64{0, 0.7})
		w := c.want
		t.Logf("C = %s, ε = %s, ε_R = %s, %s: over %.4f under %.4f (away %.4f %.4f) smearing %.2f, %d iterations", c.c, c.eps, c.epsR, c.pattern, s.over, s.under, s.farOver, s.farUnder, s.width, s.newton)
		if math.Abs(s.over-w.over) > 1e-3 || math.Abs(s.under-w.under) > 1e-3 || math.Abs(s.width-w.width) > 0.01 || s.newton != w.newton {
			t.Errorf("C = %s, ε = %s, ε_R = %s, %s: overshoot %.4f, undershoot %.4f, smearing %.2f cells, %d Newton iterations; README states %.3f, %.3f, %.2f, %d",
				c.c, c.eps, c.epsR, c.pattern, s.over, s.under, s.width, s.newton, w.over, w.under, w.width, w.newton)
		}
	}
}

// TestSkewFrontNewtonMeshes: Newton's method (after the one Picard step
// that solve takes for a capture model) converges on 32², 64² and 128²
// meshes of both orientations within 25 iterations; the counts grow
// slowly with refinement (README of examples/skew_front).
func TestSkewFrontNewtonMeshes(t *testing.T) {
	if testing.Short() {
		t.Skip("solves on 128² meshes")
	}
	want := map[string][]int{"tri": {6, 8, 9}, "tri-flip": {9, 13, 22}}
	for pat, iters := range want {
		for k, n := range []string{"32x32", "64x64", "128x128"} {
			m, err := loadModel("examples/skew_front/model.fw")
			if err != nil {
				t.Fatal(err)
			}
			msh, err := mesh.Load("span:0,1,0,1:" + n + ":" + pat)
			if err != nil {
				t.Fatal(err)
			}
			lf, err := lowerModel(m, compiler.SUPG)
			if err != nil {
				t.Fatal(err)
			}
			sol, err := problem.Solve(lf, msh, picardStart(t, m, msh, problem.Options{}))
			if err != nil {
				t.Fatal(err)
			}
			if got := sol.Summary.NonlinearIters; got != iters[k] || got > 25 {
				t.Errorf("%s %s: %d Newton iterations, README states %d", n, pat, got, iters[k])
			}
		}
	}
}

// TestCaptureSmoothCost: what capturing costs on a smooth solution
// (u = sin πx sin πy, a = (1, ½), κ = 1/100, the source worked out by
// hand). The capture diffusivity is largest where ∇u_h is small, at the
// smooth extremum, and on P1 the residual keeps −κΔu (weak consistency,
// Jansen et al. 1999), so the largest nodal error grows: 2.21e-2 against
// 2.86e-3 without capturing on 16², 6.63e-3 against 1.06e-3 on 32² (this
// code's values, to 1 %). On 64² the element Péclet number |a|h/(2κ) =
// 1.24 is below 1/C, Codina's switch turns the term off, and the errors
// are equal (README of examples/skew_front).
func TestCaptureSmoothCost(t *testing.T) {
	src := `model smooth_capture
dimension 2
use tau, capturing
unknown c: scalar P1
given a = [1, 1/2]
given kappa = 1/100
given h = diam(K)
given f = pi*cos(pi*x)*sin(pi*y) + pi/2*sin(pi*x)*cos(pi*y) + 2*kappa*pi^2*sin(pi*x)*sin(pi*y)
equation for c: a . grad(c) - div(kappa*grad(c)) = f
at all: c = 0
stabilise supg
tau for c = tau_doubly_asymptotic(norm(a), kappa, h)
capture for c = capture_codina(7/10, norm(a), kappa, h, residual(c), grad(c), 1/100, 1/10000)
`
	want := map[string][2]float64{"16x16": {2.212e-2, 2.860e-3}, "32x32": {6.630e-3, 1.062e-3}, "64x64": {2.820e-4, 2.820e-4}}
	for n, w := range want {
		for k, text := range []string{src, replaceCapture(t, src, "")} {
			m := checkText(t, "smooth.fw", text)
			msh, err := mesh.Load("span:0,1,0,1:" + n + ":tri")
			if err != nil {
				t.Fatal(err)
			}
			lf, err := lowerPlain(m, compiler.SUPG)
			if err != nil {
				t.Fatal(err)
			}
			sol, err := problem.Solve(lf, msh, picardStart(t, m, msh, problem.Options{Interpreted: true}))
			if err != nil {
				t.Fatal(err)
			}
			coords := sol.Dofs.NodeCoords(0)
			worst := 0.0
			for i, v := range sol.Fields[0].Values[0] {
				x, y := coords[2*i], coords[2*i+1]
				worst = math.Max(worst, math.Abs(v-math.Sin(math.Pi*x)*math.Sin(math.Pi*y)))
			}
			if math.Abs(worst-w[k]) > 0.01*w[k] {
				t.Errorf("%s (capture %v): largest nodal error %.4g, README states %.4g", n, k == 0, worst, w[k])
			}
		}
	}
}

// TestCapturePicardVsNewton: the lagged-diffusivity (Picard) iteration,
// κ_dc at the previous iterate, is what a capture term without the
// derived Jacobian would use. On skew_front it needs 39 iterations where
// Newton's method needs 8, to the same solution (1e-6); on the crosswind
// plume it does not converge in 50 (the relative change stays near 1e-2),
// where Newton's method needs 15 (the READMEs).
func TestCapturePicardVsNewton(t *testing.T) {
	for _, c := range []struct {
		path   string
		picard int // 0: does not converge within 50
	}{{"examples/skew_front/model.fw", 39}, {"examples/crosswind_plume/capture.fw", 0}} {
		m, err := loadModel(c.path)
		if err != nil {
			t.Fatal(err)
		}
		pm, err := compiler.PicardModel(m)
		if err != nil {
			t.Fatal(err)
		}
		msh, err := mesh.Load("span:0,1,0,1:64x64:tri")
		if err != nil {
			t.Fatal(err)
		}
		pf, err := lowerModel(pm, compiler.SUPG)
		if err != nil {
			t.Fatal(err)
		}
		sol, err := problem.Solve(pf, msh, problem.Options{Interpreted: true, MaxPicard: 50})
		if c.picard == 0 {
			var pe *problem.PicardError
			if !errors.As(err, &pe) {
				t.Errorf("%s: Picard iteration: %v, want no convergence within 50 iterations", c.path, err)
			}
			continue
		}
		if err != nil {
			t.Fatal(err)
		}
		newton := solveCapture(t, c.path, "tri", false, true)
		diff := 0.0
		for i := range sol.X {
			diff = math.Max(diff, math.Abs(sol.X[i]-newton.X[i]))
		}
		if sol.Summary.NonlinearIters != c.picard || diff > 1e-6 {
			t.Errorf("%s: Picard %d iterations (want %d), %.2g from Newton's solution", c.path, sol.Summary.NonlinearIters, c.picard, diff)
		}
	}
}
