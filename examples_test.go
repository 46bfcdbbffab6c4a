package main

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/linsolve"
	"github.com/formwright/formwright/runtime/problem"
	"github.com/formwright/formwright/runtime/study"
)

// exampleSolve runs one example model through solve's own steps and
// returns the solution; compiled says whether to use the compiled kernels.
func exampleSolve(t *testing.T, path string, meth compiler.Method, spec string, compiled bool) *problem.Solution {
	t.Helper()
	return exampleSolveWith(t, path, meth, spec, problem.Options{Interpreted: !compiled})
}

// exampleSolveWith is exampleSolve with the given options.
func exampleSolveWith(t *testing.T, path string, meth compiler.Method, spec string, opts problem.Options) *problem.Solution {
	t.Helper()
	compiled := !opts.Interpreted
	m, err := loadModel(path)
	if err != nil {
		t.Fatal(err)
	}
	msh, _, err := buildMesh(m, spec)
	if err != nil {
		t.Fatal(err)
	}
	lf, err := lowerModel(m, meth)
	if err != nil {
		t.Fatal(err)
	}
	sol, err := problem.Solve(lf, msh, opts)
	if err != nil {
		t.Fatal(err)
	}
	if compiled && sol.Summary.KernelPath != "compiled" {
		t.Fatalf("%s %s: no compiled kernel (regenerate the example's kernels)", path, meth)
	}
	return sol
}

// TestExampleRiverOutfallLayer: Galerkin oscillates at element Péclet 3.9,
// while SUPG, GLS and VMS with the optimal τ are nodally exact (Brooks &
// Hughes 1982; the exact solution is in testdata/REFERENCES.md).
func TestExampleRiverOutfallLayer(t *testing.T) {
	const path = "examples/river_outfall_layer/model.fw"
	m, _ := loadModel(path)
	exact := statedExact(t, m)
	for _, meth := range compiler.AllMethods {
		sol := exampleSolve(t, path, meth, "", false)
		coords := sol.Dofs.NodeCoords(0)
		worst, lo := 0.0, 0.0
		for i, x := range coords {
			u := sol.Fields[0].Values[0][i]
			worst = math.Max(worst, math.Abs(u-exact([]float64{x})))
			lo = math.Min(lo, u)
		}
		switch meth {
		case compiler.Galerkin:
			if lo > -0.5 {
				t.Errorf("galerkin: minimum %.3f, the README states an undershoot below −0.5", lo)
			}
		default:
			if worst > 1e-10 || lo < -1e-12 {
				t.Errorf("%s: nodal error %.2e, minimum %.2e: want nodally exact and no undershoot", meth, worst, lo)
			}
		}
	}
}

// TestExampleCrosswindPlume: across the sharp edge of the plume Galerkin
// over- and undershoots most; SUPG, GLS and VMS reduce both. The stated
// numbers are this example's own results on the default 64×64 mesh
// (regression values, not published ones), checked to 1e-3.
func TestExampleCrosswindPlume(t *testing.T) {
	const path = "examples/crosswind_plume/model.fw"
	stated := map[compiler.Method][2]float64{ // overshoot max−1, undershoot −min
		compiler.Galerkin: {0.178, 0.091},
		compiler.SUPG:     {0.066, 0.068},
		compiler.GLS:      {0.066, 0.068},
		compiler.VMS:      {0.066, 0.068},
	}
	over := map[compiler.Method]float64{}
	for _, meth := range compiler.AllMethods {
		sol := exampleSolve(t, path, meth, "", false)
		r := sol.Summary.Ranges[0]
		o, u := r.Max-1, -r.Min
		over[meth] = o + u
		if math.Abs(o-stated[meth][0]) > 1e-3 || math.Abs(u-stated[meth][1]) > 1e-3 {
			t.Errorf("%s: overshoot %.4f, undershoot %.4f; README states %.3f and %.3f", meth, o, u, stated[meth][0], stated[meth][1])
		}
	}
	for _, meth := range []compiler.Method{compiler.SUPG, compiler.GLS, compiler.VMS} {
		if over[meth] >= over[compiler.Galerkin] {
			t.Errorf("%s does not reduce the over/undershoot of Galerkin", meth)
		}
	}
}

// TestExampleEstuaryMixing: the velocity is not divergence-free, so the
// adjoint gains −(∇·a) v, and the derivation warns that GLS and VMS differ;
// verify converges at the optimal rates on six meshes. With the recovered
// second derivatives in the residual (the default) the stabilised L²
// orders do not dip near element Péclet number 1: ≥ 1.95 on every pair
// (measured 2.01–2.24; README); without the recovery they dip to 1.60
// (README), which is not rechecked here (it is the previous behaviour).
func TestExampleEstuaryMixing(t *testing.T) {
	const path = "examples/estuary_mixing/model.fw"
	m, err := loadModel(path)
	if err != nil {
		t.Fatal(err)
	}
	d, err := compiler.Derive(m, compiler.AllMethods)
	if err != nil {
		t.Fatal(err)
	}
	// ∇·a = ∂(1 − x²/4)/∂x + ∂(y/10)/∂y = −x/2 + 1/10 ≠ 0.
	want, errs := m.ParseExpr("want", "-kappa*lap(test(salt)) + sigma*test(salt) - div(a)*test(salt) - a . grad(test(salt)) - grad(kappa) . grad(test(salt))")
	if len(errs) > 0 {
		t.Fatal(errs)
	}
	if !ir.Equal(d.Adjoint[0], compiler.Simplify(want, 2)) {
		t.Errorf("adjoint %s, want %s", syntaxOf(d.Adjoint[0]), syntaxOf(want))
	}
	divA := compiler.LowerExpr(m, &ir.Div{X: m.Coef("a").Sym})[0]
	if got := ir.Eval(divA, pointEnv{0.4, 0.3}); math.Abs(got-(-0.2+0.1)) > 1e-15 {
		t.Errorf("∇·a at (0.4, 0.3) = %g, want −x/2 + 1/10 = −0.1", got)
	}
	warned := false
	for _, f := range d.Forms {
		for _, n := range f.Notes {
			if f.Method == compiler.GLS && n.Kind == compiler.Warning && strings.Contains(n.Text, "not divergence-free") {
				warned = true
			}
		}
	}
	if !warned {
		t.Error("no warning that the advecting field is not divergence-free")
	}
	var out, errb bytes.Buffer
	if st := run([]string{"verify", path, "--method", "all", "--levels", "6", "--json", "--quiet"}, &out, &errb); st != exitOK {
		t.Fatalf("verify: status %d\n%s", st, errb.String())
	}
	var rep study.Report
	json.Unmarshal(out.Bytes(), &rep)
	for _, vm := range rep.Methods {
		last := vm.Levels[len(vm.Levels)-1]
		if last.OrderL2 < 1.8 || math.Abs(last.OrderH1-1) > 0.1 {
			t.Errorf("%s: orders L2 %.2f, H1 %.2f; README states ≥ 1.8 and 1.0", vm.Method, last.OrderL2, last.OrderH1)
		}
		if vm.Method == "galerkin" {
			continue
		}
		for _, lv := range vm.Levels[1:] {
			if lv.OrderL2 < 1.95 {
				t.Errorf("%s: L² order %.2f at h = %.4g: the rate dips (README: 2.01–2.24 with the recovery)", vm.Method, lv.OrderL2, lv.H)
			}
		}
	}
}

// TestExampleSeepCellStokes: from the block operator the derivation
// produces the pressure-stabilising term (τ_M R_M, ∇q) and the grad–div
// term (τ_C R_C, ∇·w) in SUPG, GLS and VMS, with the signs of Hughes,
// Franca & Balestra 1986 (GLS) and Codina 2002 (VMS, −L* = (νΔw + ∇q, ∇·w)).
func TestExampleSeepCellStokes(t *testing.T) {
	m, err := loadModel("examples/seep_cell_stokes/model.fw")
	if err != nil {
		t.Fatal(err)
	}
	d, err := compiler.Derive(m, compiler.AllMethods)
	if err != nil {
		t.Fatal(err)
	}
	want := map[compiler.Method][2]string{ // momentum row, continuity row of ±P v
		compiler.SUPG: {"grad(test(p))", "div(test(vel))"},
		compiler.GLS:  {"-mu*lap(test(vel)) + grad(test(p))", "div(test(vel))"},
		compiler.VMS:  {"mu*lap(test(vel)) + grad(test(p))", "div(test(vel))"},
	}
	for _, f := range d.Forms {
		w, ok := want[f.Method]
		if !ok {
			continue
		}
		if len(f.Stab) != 2 {
			t.Fatalf("%s: %d stabilisation terms, want 2", f.Method, len(f.Stab))
		}
		for i, s := range f.Stab {
			got := compiler.Simplify(ir.Prod(s.TestOp.Pos(), ir.Int(s.TestOp.Pos(), int64(s.Sign)), s.TestOp), 2)
			exp, errs := m.ParseExpr("want", w[i])
			if len(errs) > 0 {
				t.Fatal(errs)
			}
			if !ir.Equal(got, compiler.Simplify(exp, 2)) {
				t.Errorf("%s row %d: ±P v = %s, want %s", f.Method, i, syntaxOf(got), w[i])
			}
		}
	}
}

// TestCompiledMatchesInterpreted: for every example that solves, the
// whole solve with the generated kernels compiled into the command equals
// the solve with the interpreted kernels to 1e-12 (relative to the largest
// value).
func TestCompiledMatchesInterpreted(t *testing.T) {
	for _, path := range []string{"examples/river_outfall_layer/model.fw", "examples/crosswind_plume/model.fw", "examples/estuary_mixing/model.fw", "adr"} {
		for _, meth := range compiler.AllMethods {
			a := exampleSolve(t, path, meth, "", true)
			b := exampleSolve(t, path, meth, "", false)
			scale, diff := 0.0, 0.0
			for i := range a.X {
				scale = math.Max(scale, math.Abs(b.X[i]))
				diff = math.Max(diff, math.Abs(a.X[i]-b.X[i]))
			}
			if diff > 1e-12*scale {
				t.Errorf("%s %s: compiled and interpreted solutions differ by %.3g (scale %.3g)", path, meth, diff, scale)
			}
			if a.Summary.KernelPath != "compiled" || b.Summary.KernelPath != "interpreted" {
				t.Errorf("%s %s: kernel paths %q, %q", path, meth, a.Summary.KernelPath, b.Summary.KernelPath)
			}
		}
	}
}

// TestCompiledTransientMatchesInterpreted: the generated kernels of the
// transient heat model implement one backward Euler step with Δt read
// from the kernel input, so the compiled kernels serve any step: ten steps
// with compiled and with interpreted kernels agree to 1e-12 for two step
// sizes and every method, and the factorisation is built once.
func TestCompiledTransientMatchesInterpreted(t *testing.T) {
	m, err := loadModel("heat")
	if err != nil {
		t.Fatal(err)
	}
	msh, _, err := buildMesh(m, "span:0,1,0,1:16x16:tri")
	if err != nil {
		t.Fatal(err)
	}
	for _, meth := range compiler.AllMethods {
		lf, err := lowerModel(m, meth)
		if err != nil {
			t.Fatal(err)
		}
		sf, err := compiler.BackwardEuler(lf)
		if err != nil {
			t.Fatal(err)
		}
		for _, dt := range []float64{0.01, 0.037} {
			a, err := problem.SolveTransient(sf, msh, problem.TransientOptions{Step: dt, Steps: 10})
			if err != nil {
				t.Fatal(err)
			}
			if a.Summary.KernelPath != "compiled" {
				t.Fatalf("heat %s: no compiled kernel for the stepped form (go generate ./stdlib/kernels)", meth)
			}
			b, err := problem.SolveTransient(sf, msh, problem.TransientOptions{Options: problem.Options{Interpreted: true}, Step: dt, Steps: 10})
			if err != nil {
				t.Fatal(err)
			}
			scale, diff := 0.0, 0.0
			for i := range a.X {
				scale = math.Max(scale, math.Abs(b.X[i]))
				diff = math.Max(diff, math.Abs(a.X[i]-b.X[i]))
			}
			if diff > 1e-12*scale {
				t.Errorf("heat %s dt %g: compiled and interpreted differ by %.3g (scale %.3g)", meth, dt, diff, scale)
			}
			if a.Summary.KernelPath != "compiled" || b.Summary.KernelPath != "interpreted" || a.Summary.Prepared != 1 {
				t.Errorf("heat %s dt %g: paths %q, %q, %d factorisations", meth, dt, a.Summary.KernelPath, b.Summary.KernelPath, a.Summary.Prepared)
			}
		}
	}
}

// TestExampleSeepCellHydrostatic: the seep cell is at rest under
// hydrostatic pressure, u = 0 and p = ρg(1/2 − y) (ρg = 9.81, mean zero by
// the mean condition): a linear exact solution, which SUPG, GLS and VMS
// on P1/P1 reproduce to round-off (every term of their residuals vanishes
// on it), with the direct solver (an iterative one stops at its
// tolerance). Galerkin P1/P1 is singular.
func TestExampleSeepCellHydrostatic(t *testing.T) {
	direct := problem.Options{Solver: &linsolve.Options{Method: linsolve.MethodDirect}}
	for _, meth := range []compiler.Method{compiler.SUPG, compiler.GLS, compiler.VMS} {
		sol := exampleSolveWith(t, "examples/seep_cell_stokes/model.fw", meth, "", direct)
		coords := sol.Dofs.NodeCoords(1)
		for c := 0; c < 2; c++ {
			for n, v := range sol.Fields[0].Values[c] {
				if math.Abs(v) > 1e-10 {
					t.Fatalf("%s: velocity component %d = %g at node %d, want 0", meth, c, v, n)
				}
			}
		}
		for n, v := range sol.Fields[1].Values[0] {
			if want := 9.81 * (0.5 - coords[2*n+1]); math.Abs(v-want) > 1e-8 {
				t.Fatalf("%s: p = %.12g at (%g, %g), hydrostatic %.12g", meth, v, coords[2*n], coords[2*n+1], want)
			}
		}
	}
	var out, errb bytes.Buffer
	if st := run([]string{"solve", "examples/seep_cell_stokes/model.fw", "--method", "galerkin", "--quiet"}, &out, &errb); st != exitNumeric || !strings.Contains(errb.String(), "inf–sup") {
		t.Errorf("Galerkin P1/P1: status %d, %q; want exit 1 naming the inf–sup condition", st, errb.String())
	}
}

// statedExact is the model's exact solution of its first unknown (the
// coefficient exact_<unknown>) as a function of x.
func statedExact(t *testing.T, m *compiler.Model) func(x []float64) float64 {
	t.Helper()
	ex, err := problem.ExactFromExprs(m.Dim, m.StatedExact(0))
	if err != nil {
		t.Fatal(err)
	}
	u, g := make([]float64, 1), make([]float64, m.Dim)
	return func(x []float64) float64 { ex(x, 0, u, g); return u[0] }
}

// pointEnv evaluates lowered expressions of the coordinates only.
type pointEnv []float64

func (p pointEnv) Coord(axis int) float64    { return p[axis] }
func (p pointEnv) Time() float64             { return 0 }
func (p pointEnv) CellQ(*ir.CellQ) float64   { return math.NaN() }
func (p pointEnv) FieldD(*ir.FieldD) float64 { return math.NaN() }

// smithHuttonOutlet are the outlet values φ(x, 0), x = 0, 0.1, …, 1.0, of
// Smith & Hutton (1982, Numer. Heat Transfer 5) at ρ/Γ = 10
// (testdata/REFERENCES.md, checked against several copies).
var smithHuttonOutlet = []float64{1.989, 1.402, 1.146, 0.946, 0.775, 0.621, 0.480, 0.349, 0.227, 0.111, 0.000}

// outletValues returns φ at the nodes (x, 0), x = 0, 0.1, …, 1.0.
func outletValues(t *testing.T, sol *problem.Solution) []float64 {
	t.Helper()
	out := make([]float64, 11)
	found := 0
	coords := sol.Dofs.NodeCoords(0)
	for n := 0; n < len(coords)/2; n++ {
		x, y := coords[2*n], coords[2*n+1]
		k := math.Round(10 * x)
		if y == 0 && k >= 0 && math.Abs(10*x-k) < 1e-9 {
			out[int(k)] = sol.Fields[0].Values[0][n]
			found++
		}
	}
	if found != 11 {
		t.Fatalf("%d outlet nodes at x = 0, 0.1, …, 1 (the mesh must have them)", found)
	}
	return out
}

// TestExampleHairpinDye: the Smith & Hutton (1982) benchmark, written with
// boundary parts (an inlet on the left half of the bottom side, a
// zero-flux outlet on the right half). At ρ/Γ = 10 the outlet values of
// Galerkin and SUPG on 160 × 80 squares (two triangles each) are within
// 0.02 of the published table (the tolerance). The converged
// value at x = 0, where the inlet's value 1 + tanh(10) = 2.000 holds, is
// 0.011 above the published 1.989; the others agree to 0.002 (README).
// The compiled and the interpreted kernels agree to 1e-12.
func TestExampleHairpinDye(t *testing.T) {
	const path = "examples/hairpin_dye/model.fw"
	const spec = "span:-1,1,0,1:160x80:tri"
	for _, meth := range []compiler.Method{compiler.Galerkin, compiler.SUPG} {
		sol := exampleSolve(t, path, meth, spec, true)
		got := outletValues(t, sol)
		for k, v := range got {
			if math.Abs(v-smithHuttonOutlet[k]) > 0.02 {
				t.Errorf("%s: φ(%.1f, 0) = %.4f, published %.3f", meth, float64(k)/10, v, smithHuttonOutlet[k])
			}
		}
		if !strings.Contains(sol.Summary.Mesh, "inlet") || !strings.Contains(sol.Summary.Mesh, "outlet") {
			t.Errorf("%s: the model's parts are not on the mesh: %s", meth, sol.Summary.Mesh)
		}
		if sol.Summary.Natural != "" {
			t.Errorf("%s: every facet has a condition, but the summary says %q", meth, sol.Summary.Natural)
		}
		if meth != compiler.SUPG {
			continue
		}
		interp := exampleSolve(t, path, meth, spec, false)
		worst := 0.0
		for i, v := range interp.X {
			worst = math.Max(worst, math.Abs(v-sol.X[i]))
		}
		if worst > 1e-12 {
			t.Errorf("compiled and interpreted kernels differ by %.2e", worst)
		}
	}
}

// TestExampleHairpinDyeHighRatio keeps the README's report at ρ/Γ = 500 on
// 20 × 10 squares honest: the over- and undershoot it states for Galerkin
// and for the stabilised methods (to 1e-3), and that SUPG, GLS and VMS
// coincide on P1 with a divergence-free velocity and no reaction (their
// test operators reduce to a·∇v there).
func TestExampleHairpinDyeHighRatio(t *testing.T) {
	src, err := os.ReadFile("examples/hairpin_dye/model.fw")
	if err != nil {
		t.Fatal(err)
	}
	path := writeFile(t, t.TempDir(), "ratio500.fw", strings.Replace(string(src), "given kappa = 1/10", "given kappa = 1/500", 1))
	stated := map[compiler.Method][2]float64{compiler.Galerkin: {0.020, 0.016}, compiler.SUPG: {0.072, 0.047}}
	var supg []float64
	for _, meth := range compiler.AllMethods {
		m, err := loadModel(path)
		if err != nil {
			t.Fatal(err)
		}
		msh, _, err := buildMesh(m, "span:-1,1,0,1:20x10:tri")
		if err != nil {
			t.Fatal(err)
		}
		lf, err := lowerPlain(m, meth) // the README's table: the plain P1 residual (--recover=false)
		if err != nil {
			t.Fatal(err)
		}
		sol, err := problem.Solve(lf, msh, problem.Options{Interpreted: true})
		if err != nil {
			t.Fatal(err)
		}
		if meth == compiler.SUPG {
			supg = sol.X
		}
		if meth == compiler.GLS || meth == compiler.VMS {
			if d := maxAbsDiff(sol.X, supg); d > 1e-12 {
				t.Errorf("%s differs from SUPG by %.2e", meth, d)
			}
			continue
		}
		r := sol.Summary.Ranges[0]
		over, under := r.Max-2, (1-math.Tanh(10))-r.Min
		if math.Abs(over-stated[meth][0]) > 1e-3 || math.Abs(under-stated[meth][1]) > 1e-3 {
			t.Errorf("%s: overshoot %.4f, undershoot %.4f; README states %.3f and %.3f", meth, over, under, stated[meth][0], stated[meth][1])
		}
	}
}
