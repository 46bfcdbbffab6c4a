package gogen

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/render"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/stdlib"
)

// lowerAll parses, checks, derives and lowers a model for every method it
// declares.
func lowerAll(t testing.TB, file string, src []byte) []*ir.LoweredForm {
	t.Helper()
	forms, _ := lowerDerivation(t, file, src)
	return forms
}

// lowerDerivation is lowerAll that also returns the derivation.
func lowerDerivation(t testing.TB, file string, src []byte) ([]*ir.LoweredForm, *compiler.Derivation) {
	t.Helper()
	return lowerDerivationWith(t, file, src, compiler.DeriveOptions{})
}

// lowerDerivationWith is lowerDerivation with derivation options.
func lowerDerivationWith(t testing.TB, file string, src []byte, opts compiler.DeriveOptions) ([]*ir.LoweredForm, *compiler.Derivation) {
	t.Helper()
	f, errs := lang.Parse(file, src)
	m, cerrs := compiler.Check(f, compiler.CheckOptions{Load: stdlib.Module})
	errs = append(errs, cerrs...)
	if len(errs) > 0 {
		var b strings.Builder
		errs.Format(&b, m.Sources)
		t.Fatalf("%s does not check:\n%s", file, b.String())
	}
	d, err := compiler.DeriveWith(m, nil, opts)
	if err != nil {
		t.Fatalf("%s: derive: %v", file, err)
	}
	var out []*ir.LoweredForm
	for _, fm := range d.Forms {
		lf, err := d.Lower(fm.Method)
		if err == nil && lf.IsTransient() {
			// The kernels of one backward Euler step, as gen writes them.
			var sf *ir.SteppedForm
			if sf, err = compiler.BackwardEuler(lf); err == nil {
				lf = sf.Step
			}
		}
		if err != nil {
			t.Fatalf("%s: lower %v: %v", file, fm.Method, err)
		}
		out = append(out, lf)
	}
	return out, d
}

func stdModel(t testing.TB, name string) (string, []byte) {
	t.Helper()
	file, src, err := stdlib.Model(name)
	if err != nil {
		t.Fatal(err)
	}
	return file, src
}

// repoRoot finds the module root (the directory whose go.mod declares
// github.com/formwright/formwright) above the working directory.
func repoRoot(t testing.TB) string {
	t.Helper()
	dir, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	for {
		b, err := os.ReadFile(filepath.Join(dir, "go.mod"))
		if err == nil && strings.Contains(string(b), "module github.com/formwright/formwright\n") {
			return dir
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			t.Fatal("module root not found")
		}
		dir = parent
	}
}

// modelCase is a model for the end-to-end tests.
type modelCase struct {
	name string // Go package name of its generated kernels
	file string
	src  string
	// loopAbove is Options.loopAbove (0: default)
	loopAbove int
}

// The model variants. Sources: stdlib models, and variants of adr on every
// supported element and cell, a symmetric diffusion–reaction problem, a
// Robin condition, a metric-tensor τ, and hostile names.
func modelCases(t testing.TB) []modelCase {
	var cs []modelCase
	for _, n := range []string{"adr", "stokes", "oseen", "navier_stokes", "heat"} {
		f, s := stdModel(t, n)
		cs = append(cs, modelCase{n, f, string(s), 0})
	}
	adr := func(dim int, elem, a, kappa string) string {
		return "model adr_variant\ndimension " + string(rune('0'+dim)) + "\nuse tau\nunknown c: scalar " + elem +
			"\ngiven a = " + a + "\ngiven kappa = " + kappa + "\ngiven sigma = 1/10\ngiven f = 1 + x\ngiven h = diam(K)\n" +
			"equation for c: a . grad(c) - div(kappa*grad(c)) + sigma*c = f\nat all: c = 0\nstabilise galerkin, supg, gls, vms\n" +
			"tau for c = tau_codina(norm(a), kappa, sigma, h)\n"
	}
	cs = append(cs,
		modelCase{"adrp2", "adr_p2.fw", adr(2, "P2", "[1, 1/2]", "1/100*(1 + x*y)"), 0},
		modelCase{"adrq1", "adr_q1.fw", adr(2, "Q1", "[1, 1/2]", "1/100"), 0},
		modelCase{"adrq2", "adr_q2.fw", adr(2, "Q2", "[1, 1/2]", "1/100"), 0},
		modelCase{"adrint", "adr_interval.fw", adr(1, "P1", "[1]", "1/50"), 0},
		modelCase{"adrint2", "adr_interval_q2.fw", adr(1, "Q2", "[1]", "1/50*(2 + x)"), 0},
		modelCase{"adrtet", "adr_tet.fw", adr(3, "P1", "[1, 1/2, 1/4]", "1/100"), 0},
		modelCase{"adrtet2", "adr_tet_p2.fw", adr(3, "P2", "[1, 1/2, 1/4]", "1/100"), 0},
		modelCase{"adrhex", "adr_hex.fw", adr(3, "Q1", "[1, 1/2, 1/4]", "1/100*(1+z)"), 0},
		modelCase{"diffreac", "diffreac.fw", "model diffreac\ndimension 2\nunknown u: scalar P2\ngiven k = 2\ngiven s = 3\n" +
			"equation for u: -div(k*grad(u)) + s*u = 1\nat all: u = 0\nstabilise galerkin\n", 0},
		modelCase{"diffreacq", "diffreac_q.fw", "model diffreac\ndimension 2\nunknown u: scalar Q1\ngiven k = 2 + x\ngiven s = 3\n" +
			"equation for u: -div(k*grad(u)) + s*u = 1\nat all: u = 0\nstabilise galerkin\n", 0},
		modelCase{"robin", "robin.fw", `# Robin and flux conditions on a tank (after lang/testdata/tank_dye.fw).
model robin
dimension 2
use tau, sizes
unknown c: scalar P1
given a = [1, 0.5]
given kappa = 1e-3 * (1 + x^2)
given f = exp(-10*((x-0.5)^2 + y^2)) * (1 + t)
given h = h_disc(meas(K))
equation for c: a . grad(c) - div(kappa*grad(c)) = f
at left, bottom: c = 0
at right: flux(c) = x*y
at top: flux(c) = 2*(1 - c)
stabilise galerkin, supg, gls, vms
tau for c = tau_codina(norm(a), kappa, 0, h)
`, 0},
		modelCase{"robinq", "robin_q.fw", robinQ, 0},
		modelCase{"metric", "metric.fw", `model metric
dimension 2
use tau
unknown c: scalar Q1
given a = [1, 1/3]
given kappa = 1/100
equation for c: a . grad(c) - div(kappa*grad(c)) = 1 + t*x
at all: c = 0
stabilise supg, vms
tau for c = tau_metric_steady(a, kappa, 36)
`, 0},
		modelCase{"hostile", "hostile*/\u2028.fw", hostileModel, 0},
		modelCase{"hostilelocals", "hostile_locals.fw", hostileLocals, 0},
		// Transient on Q2 in loops, time_step in τ and a time-dependent
		// source: the kernels of one backward Euler step.
		modelCase{"heatq2", "heat_q2.fw", `model heat_q2
dimension 2
use tau
unknown u: scalar Q2
given a = [1, 1/2]
given k = 1/20
given h = diam(K)
equation for u: partial(u, t) + a . grad(u) - div(k*grad(u)) = (1 + t)*x
at all: u = 0
stabilise galerkin, supg, gls, vms
tau for u = tau_shakib(norm(a), k, h, time_step)
`, 0},
		// Every elementary function, fractional and negative powers, in
		// cell and boundary coefficients, on P1 and Q1.
		modelCase{"funcs", "funcs.fw", funcsModel("P1"), 0},
		modelCase{"funcsq", "funcs_q.fw", funcsModel("Q1"), 0},
		// Loop mode (generated loops over basis functions) on cheap
		// elements, and Q2 hexahedra, where it is the default.
		modelCase{"adrq1loop", "adr_q1_loops.fw", adr(2, "Q1", "[1, 1/2]", "1/100*(1+y)"), 1},
		modelCase{"robinloop", "robin_loops.fw", robinQ, 1},
		modelCase{"stokesloop", "stokes_loops.fw", stokesQ1, 1},
		modelCase{"adrhex2", "adr_hex_q2.fw", adr(3, "Q2", "[1, 1/2, 1/4]", "1/100"), 0},
		// Mixed elements (Taylor–Hood P2/P1 and Q2/Q1), unrolled and in loops.
		modelCase{"stokesth", "stokes_p2p1.fw", strings.NewReplacer("vector Q1", "vector P2", "scalar Q1", "scalar P1").Replace(stokesQ1), 0},
		modelCase{"stokesq2q1", "stokes_q2q1_loops.fw", strings.NewReplacer("vector Q1", "vector Q2").Replace(stokesQ1), 1},
		// Discontinuity capturing (the Newton step: κ_dc and δκ_dc read
		// the iterate), isotropic on P1 and crosswind (a tensor) on Q1.
		modelCase{"capture", "capture.fw", captureModel("P1", ""), 0},
		modelCase{"captureq", "capture_q.fw", captureModel("Q1", "*crosswind_2d(a)"), 0},
	)
	return cs
}

// hostileModel uses names that are Go keywords, predeclared identifiers
// or collide with the generator's own (func, init, return_, _, nan, x, q,
// acc, rhs, A, b) — all legal model names.
const hostileModel = `# Names chosen to collide with Go. */ /* not a comment end in Go
model func
dimension 2
sides init, return_, _, go
unknown func: scalar P1
given return_ = 1
given x_ = 1/10
given nan = 2
given acc = [1, 0]
given rhs = 1
equation for func: acc . grad(func) - div(x_*grad(func)) + nan*func = rhs
at init: func = 0
at return_: flux(func) = 1
at _: flux(func) = 2 - func
at go: flux(func) = return_ * x
stabilise galerkin, supg
tau for func = 1/(2/diam(K) + 4*x_/diam(K)^2)
`

// hostileLocals has coefficients, varying in the cell so that they become
// variables, whose names are keywords, builtins or macros of Go, C or C++,
// or the generator's own names and prefixes, and a scalar a_1 beside
// component 1 of a vector a.
const hostileLocals = `# Coefficient names that are keywords, builtins, macros or the generator's own names.
model hostile_locals
dimension 2
use tau
unknown u: scalar P1
given len = 1 + x
given int = [1 + y, 1/2 + x]
given class = 1/50 * (1 + x*y)
given NAN = 1/10 + x^2
given detJ = 2 + y
given fwFillNaN = 1 + x*x*y
given m_len = 3 + y
given A = 1 + x + y
given q = 2 + x*x
given a_1 = 1 + x*y*y
given a = [3 + x, 4 + y]
equation for u: int . grad(u) - div(class*grad(u)) + NAN*u = len + detJ + fwFillNaN + m_len + A + q + a_1 + a . a
at all: u = 0
stabilise galerkin, supg
tau for u = tau_codina(norm(int), class, NAN, diam(K))
`

const robinQ = `model robin_q
dimension 2
use tau, sizes
unknown c: scalar Q1
given a = [1, 0.5]
given kappa = 1/100
given h = h_disc(meas(K)) + 0*diam(K)
equation for c: a . grad(c) - div(kappa*grad(c)) = 1
at left: c = 0
at top: flux(c) = 2*(1 - c)*(1 + x)
stabilise galerkin, supg
tau for c = tau_codina(norm(a), kappa, 0, h)
`

// stokesQ1 is stdlib/models/stokes.fw on Q1 quadrilaterals.
const stokesQ1 = `model stokes_q1
dimension 2
use tau
unknown vel: vector Q1
unknown p: scalar Q1
given nu = 1
given g = [0, 0]
given h = diam(K)
equation for vel: -div(nu*grad(vel)) + grad(p) = g
equation for p: div(vel) = 0
at all: vel = [0, 0]
stabilise galerkin, supg, gls, vms
tau for vel = tau_stokes_momentum(nu, h)
tau for p = tau_stokes_continuity(tau_stokes_momentum(nu, h), h)
`

func funcsModel(elem string) string {
	return `model funcs
dimension 2
use tau
unknown c: scalar ` + elem + `
given a = [1 + sin(x)*cos(y), tanh(x - y)/2]
given kappa = (2 + sign(x - 1/2)*coth(2 + y) + min(x, y) + max(x, 1/3))/50
given sigma = tan(x/4) + sinh(x)*cosh(y)/10 + log(2 + x) + (1 + x^2)^(1/3) + (2 + y)^(-2) + abs(x - y) + exp(-x) + sqrt(1 + y^2)
given h = diam(K)
equation for c: a . grad(c) - div(kappa*grad(c)) + sigma*c = pi*x
at left: c = 0
at top: flux(c) = sign(x - 1/2) + min(x, 1/2)*c
stabilise galerkin, supg, gls
tau for c = tau_doubly_asymptotic(norm(a), kappa, h) + 0*tau_optimal(norm(a), kappa, h)
`
}

// derivedOf renders the derived forms of a derivation for the generated
// comments (Options.Derived), in the words of the derivation printer
// (compiler/render.WriteText): the Galerkin form, one
// "± Σ_K (τ R, P v)_K" per stabilisation term, the cross-stress term and
// the boundary integrals.
func derivedOf(d *compiler.Derivation) map[string]Derived {
	out := map[string]Derived{}
	for meth, h := range render.Headings(d) {
		out[meth] = Derived{Galerkin: h.Galerkin, Stab: h.Stab, Cross: h.Cross, Boundary: h.Boundary}
	}
	return out
}

// lowerDerived is lowerAll with the derived forms for the comments.
func lowerDerived(t testing.TB, file string, src []byte) ([]*ir.LoweredForm, map[string]Derived) {
	t.Helper()
	forms, d := lowerDerivation(t, file, src)
	return forms, derivedOf(d)
}

// captureModel is an advection-dominated model with Codina's
// discontinuity-capturing diffusivity (stdlib module capturing), times
// tensor (e.g. the crosswind projection) when it is not empty.
func captureModel(elem, tensor string) string {
	return `model capture_case
dimension 2
use tau, capturing
unknown c: scalar ` + elem + `
given a = [1, 1/3]
given kappa = 1/1000
given h = diam(K)
equation for c: a . grad(c) - div(kappa*grad(c)) = x
at all: c = 0
stabilise supg, gls, vms
tau for c = tau_doubly_asymptotic(norm(a), kappa, h)
capture for c = capture_codina(7/10, norm(a), kappa, h, residual(c), grad(c), 1/100, 1/10000)` + tensor + `
`
}
