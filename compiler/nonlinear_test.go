package compiler

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
	"gonum.org/v1/gonum/diff/fd"
)

// stateEnv evaluates lowered expressions at a point with the state u + εw
// for the trial field and the direction w for the increment, both in
// closed form.
type stateEnv struct {
	x    []float64
	eps  float64
	u, w sinProduct
}

func (e *stateEnv) Coord(axis int) float64  { return e.x[axis] }
func (e *stateEnv) Time() float64           { return 0 }
func (e *stateEnv) CellQ(*ir.CellQ) float64 { panic("no cell quantity here") }
func (e *stateEnv) FieldD(f *ir.FieldD) float64 {
	switch f.Field.Role {
	case ir.Trial:
		return e.u.deriv(e.x, f.D) + e.eps*e.w.deriv(e.x, f.D)
	case ir.Increment:
		return e.w.deriv(e.x, f.D)
	}
	panic("unexpected field role " + f.Field.Role.String())
}

// TestGateauxAgainstFiniteDifferences: the symbolic Gateaux derivative of
// random nonlinear operators, d/dε L(u + εw)|ε=0, agrees with gonum's
// diff/fd central difference of ε ↦ L(u + εw) (an independent numerical
// derivative) at random points, for closed-form u and w. The operators
// combine random smooth functions of u and y (randomScalar with x read as
// u) with u, ∂ₓu, Δu and |∇u|². Tolerance 1e-6 relative: the central
// difference's own error at gonum's default step (common practice, no
// source).
func TestGateauxAgainstFiniteDifferences(t *testing.T) {
	var p source.Pos
	r := rand.New(rand.NewPCG(17, 4))
	u := &ir.Field{Name: "u", Role: ir.Trial}
	asState := func(e ir.Expr) ir.Expr {
		return ir.MapUp(e, func(n ir.Expr) ir.Expr {
			if c, ok := n.(*ir.Coord); ok && c.Axis == 0 {
				return u
			}
			return n
		})
	}
	dir := direction{Field: fieldDirection(ir.Trial, ir.Increment), dim: 2}
	state := sinProduct{[3]float64{0.7, 1.3}}
	way := sinProduct{[3]float64{1.9, 0.6}}
	checked := 0
	for i := 0; i < 60; i++ {
		op := ir.Sum(p,
			asState(randomScalar(r, 2)),
			ir.Prod(p, asState(randomScalar(r, 1)), &ir.Partial{X: u, Axis: 0}),
			ir.Prod(p, asState(randomScalar(r, 1)), &ir.Lap{X: u}),
			ir.Prod(p, asState(randomScalar(r, 1)), &ir.Dot{A: &ir.Grad{X: u}, B: &ir.Grad{X: u}}))
		m := &Model{Dim: 2}
		lop := LowerExpr(m, op)[0]
		lder := LowerExpr(m, Simplify(gateaux(op, dir), 2))[0]
		for k := 0; k < 3; k++ {
			x := []float64{0.1 + 0.8*r.Float64(), 0.1 + 0.8*r.Float64()}
			env := &stateEnv{x: x, u: state, w: way}
			want := fd.Derivative(func(eps float64) float64 {
				env.eps = eps
				return ir.Eval(lop, env)
			}, 0, &fd.Settings{Formula: fd.Central})
			env.eps = 0
			got := ir.Eval(lder, env)
			if math.IsNaN(want) || math.IsInf(want, 0) || math.Abs(want) > 1e6 {
				continue
			}
			checked++
			if math.Abs(got-want) > 1e-6*math.Max(1, math.Abs(want)) {
				t.Errorf("operator %s at %v: δL = %.12g, central difference %.12g", show(op), x, got, want)
			}
		}
	}
	if checked < 100 {
		t.Errorf("only %d points checked", checked)
	}
}

// TestLinearisation: the linearised operators, their advective velocities
// and adjoints for Burgers, Navier–Stokes and nonlinear diffusion, worked
// out by hand: L′ = d/dε L(u + εδu) at ε = 0.
func TestLinearisation(t *testing.T) {
	for _, c := range []struct {
		model          string
		lin, adv, adj  string
		linRow, advRow int
	}{
		// u ∂ₓu − ν Δu: L′δu = u ∂ₓδu + (∂ₓu) δu − ν Δδu, a = u,
		// L′*v = −u ∂ₓv − ν Δv (the ∂ₓu v terms cancel).
		{model: "burgers", lin: "u*partial(increment(u), x) + partial(u, x)*increment(u) - nu*lap(increment(u))",
			adv: "[u]", adj: "-u*partial(test(u), x) - nu*lap(test(u))"},
		// (∇u)u − ∇·(ν∇u) + ∇p: L′δu = (∇δu)u + (∇u)δu − νΔδu + ∇δp, a = u.
		{model: "navier_stokes_nonlinear", lin: "grad(increment(vel)) . vel + grad(vel) . increment(vel) - nu*lap(increment(vel)) + grad(increment(p))",
			adv: "vel", adj: "-nu*lap(test(vel)) - div(vel)*test(vel) - grad(test(vel)) . vel + test(vel) . grad(vel) - grad(test(p))"},
		// −∇·((1 + u²)∇u): L′δu = −∇·((1 + u²)∇δu + 2uδu∇u), whose
		// first-order part collects −2u∇u from k and −2u∇u from k′:
		// a = −4u∇u; L′*v = −(1 + u²)Δv.
		{model: "nonlinear_diffusion", lin: "-div((1 + u^2)*grad(increment(u)) + 2*u*increment(u)*grad(u))",
			adv: "-4*u*grad(u)", adj: "-(1 + u^2)*lap(test(u))"},
	} {
		m := stdlibModel(t, c.model)
		lin, err := Linearise(m)
		if err != nil {
			t.Fatal(err)
		}
		if want := expanded(parsed(t, m, c.lin), m.Dim); !ir.Equal(lin.Operator[0], want) {
			t.Errorf("%s: L′ = %s, want %s", c.model, show(lin.Operator[0]), show(want))
		}
		if want := parsed(t, m, c.adv); lin.Advection[0] == nil || !ir.Equal(Simplify(lin.Advection[0], m.Dim), want) {
			t.Errorf("%s: advective velocity %v, want %s", c.model, lin.Advection[0], show(want))
		}
		if want := expanded(parsed(t, m, c.adj), m.Dim); !ir.Equal(lin.Adjoint[0], want) {
			t.Errorf("%s: L′* = %s, want %s", c.model, show(lin.Adjoint[0]), show(want))
		}
	}
}

// TestJacobianOptions: the exact Jacobian lists no approximation; freezing
// τ or the test operator leaves out exactly their terms and says so. (With
// the recovery of the P1 second derivatives on, the default, J also holds
// the recovered field fixed and says so: one more approximation.)
func TestJacobianOptions(t *testing.T) {
	m := stdlibModel(t, "navier_stokes_nonlinear")
	for _, c := range []struct {
		opts        JacobianOptions
		tauVar, tv  bool
		approx      int
		approxWords string
	}{
		{JacobianOptions{}, true, true, 0, ""},
		{JacobianOptions{FreezeTau: true}, false, true, 1, "τ is frozen"},
		{JacobianOptions{FreezeTest: true}, true, false, 1, "test operator"},
		{JacobianOptions{FreezeTau: true, FreezeTest: true}, false, false, 2, "frozen"},
	} {
		d, err := DeriveWith(m, []Method{SUPG}, DeriveOptions{Jacobian: c.opts, Recovery: RecoverOff})
		if err != nil {
			t.Fatal(err)
		}
		j := d.Forms[0].Jacobian
		s := j.Stab[0] // the momentum row
		if (s.TauVar != nil) != c.tauVar || (s.TestVar != nil) != c.tv {
			t.Errorf("%+v: δτ %v, δ(Pv) %v", c.opts, s.TauVar != nil, s.TestVar != nil)
		}
		if len(j.Approximations) != c.approx || (c.approx > 0 && !strings.Contains(fmt.Sprint(j.Approximations), c.approxWords)) {
			t.Errorf("%+v: approximations %q", c.opts, j.Approximations)
		}
		d, err = DeriveWith(m, []Method{SUPG}, DeriveOptions{Jacobian: c.opts})
		if err != nil {
			t.Fatal(err)
		}
		if a := d.Forms[0].Jacobian.Approximations; len(a) != c.approx+1 || !strings.Contains(a[len(a)-1].Text, "recovered") {
			t.Errorf("%+v with the recovery: approximations %q", c.opts, a)
		}
	}
}

// TestPicardLinearisation: the derived Picard linearisation lags the
// convecting velocity of Navier–Stokes (giving the operator of the
// hand-lagged standard model navier_stokes) and τ, the coefficient of
// nonlinear diffusion, and moves Bratu's eᵘ to the source.
func TestPicardLinearisation(t *testing.T) {
	for _, c := range []struct{ model, op, src, tau string }{
		{"navier_stokes_nonlinear", "grad(vel) . previous(vel) - div(nu*grad(vel)) + grad(p)", "g", "1/(4*nu/h^2 + 2*norm(previous(vel))/h + abs(0))"},
		{"nonlinear_diffusion", "-div((1 + previous(u)^2)*grad(u))", "f", ""},
		{"bratu", "-lap(u)", "lambda*exp(previous(u))", ""},
	} {
		m := stdlibModel(t, c.model)
		pl, err := Picard(m)
		if err != nil {
			t.Fatal(err)
		}
		if want := expanded(parsed(t, m, c.op), m.Dim); !ir.Equal(expanded(pl.Operators[0], m.Dim), want) {
			t.Errorf("%s: lagged operator %s, want %s", c.model, show(pl.Operators[0]), show(want))
		}
		if want := parsed(t, m, c.src); !ir.Equal(pl.Sources[0], want) {
			t.Errorf("%s: lagged source %s, want %s", c.model, show(pl.Sources[0]), show(want))
		}
		if c.tau != "" {
			if want := parsed(t, m, c.tau); !ir.Equal(pl.Tau[0], want) {
				t.Errorf("%s: lagged τ %s, want %s", c.model, show(pl.Tau[0]), show(want))
			}
		}
		if pl.Model.Nonlinear() {
			t.Errorf("%s: the Picard model is still nonlinear", c.model)
		}
	}
	// An equation whose every term is lagged has no Picard linearisation.
	m := mustModel(t, "model only_exp\ndimension 1\nunknown u: scalar P1\nequation for u: exp(u) = 2\nstabilise galerkin\n")
	if _, err := Picard(m); err == nil || !strings.Contains(err.Error(), "Newton") {
		t.Errorf("Picard of exp(u) = 2: error %v, want one that points to Newton's method", err)
	}
}

// TestNonlinearLowering: the Newton step of a nonlinear model reads the
// iterate only through previous fields, has the Jacobian as its bilinear
// and −F as its linear terms, and validates; the residual form F(u_k; v)
// of Bratu at the exact coefficients is ∫ ∇u_k·∇v − λ e^{u_k} v.
func TestNonlinearLowering(t *testing.T) {
	m := stdlibModel(t, "bratu")
	d, err := Derive(m, []Method{Galerkin})
	if err != nil {
		t.Fatal(err)
	}
	nf, err := d.LowerNonlinear(Galerkin)
	if err != nil {
		t.Fatal(err)
	}
	step := nf.Step()
	if !step.Newton {
		t.Fatal("the step form is not marked Newton")
	}
	if err := step.Validate(); err != nil {
		t.Fatal(err)
	}
	if len(nf.Residual.Integrals[0].Bilinear) != 0 || len(nf.Jacobian.Integrals[0].Linear) != 0 {
		t.Error("residual with bilinear terms or Jacobian with linear ones")
	}
	// Evaluate the residual's coefficients at u_k with arbitrary values:
	// the Linear terms are −F, i.e. −∂ₓu_k (paired with ∂ₓv) and λe^{u_k}
	// (paired with v), λ = 1.
	env := arbitraryEnv{1}
	uk := &ir.FieldD{Field: &ir.Field{Name: "u", Role: ir.Previous}}
	ux := &ir.FieldD{Field: &ir.Field{Name: "u", Role: ir.Previous}, D: [3]uint8{1}}
	for _, term := range nf.Residual.Integrals[0].Linear {
		got := ir.Eval(term.Coef, env)
		var want float64
		switch term.Test.D[0] {
		case 0:
			want = math.Exp(env.FieldD(uk))
		case 1:
			want = -env.FieldD(ux)
		}
		if math.Abs(got-want) > 1e-14*math.Max(1, math.Abs(want)) {
			t.Errorf("residual coefficient with test derivative %v: %g, want %g", term.Test.D, got, want)
		}
	}
}

// TestNonlinearModelsCheck: nonlinear operators and a τ that reads the
// unknown are accepted; a coefficient that reads it is still an error,
// whose hint names the formula alternative.
func TestNonlinearModelsCheck(t *testing.T) {
	m := mustModel(t, "model nl\ndimension 2\nuse tau\nunknown u: scalar P1\ngiven h = diam(K)\nequation for u: -lap(u) + u^3 + sin(u)*partial(u, y) = 1\nstabilise supg\ntau for u = tau_codina(abs(u), 1, 0, h)\n")
	if !m.Nonlinear() {
		t.Error("u³ and sin(u) ∂ᵧu: the model should be nonlinear")
	}
	errs := checkErrors("c.fw", "model nl\ndimension 1\nunknown u: scalar P1\ngiven k = 1 + u^2\nequation for u: -div(k*grad(u)) = 1\n")
	if len(errs) != 1 || !strings.Contains(errs[0].Hint, "formula") {
		t.Errorf("coefficient reading the unknown: %v", errs)
	}
}

// TestNonlinearTransientStep: backward Euler on the Newton step of a
// transient nonlinear model leaves no time derivative in any coefficient
// and puts the old level into the mass form.
func TestNonlinearTransientStep(t *testing.T) {
	m := mustModel(t, `model tg
dimension 2
unknown vel: vector P1
unknown p: scalar P1
given nu = 1/10
given h = diam(K)
equation for vel: partial(vel, t) + grad(vel) . vel - div(nu*grad(vel)) + grad(p) = [0, 0]
equation for p: div(vel) = 0
at all: vel = [0, 0]
mean p = 0
stabilise supg
tau for vel = 1/sqrt(4/time_step^2 + (2*norm(vel)/h)^2 + 9*(4*nu/h^2)^2)
tau for p = h^2/(4*(1/sqrt(4/time_step^2 + (2*norm(vel)/h)^2 + 9*(4*nu/h^2)^2)))
`)
	d, err := Derive(m, []Method{SUPG})
	if err != nil {
		t.Fatal(err)
	}
	if j := d.Forms[0].Jacobian; len(j.Approximations) != 1 || !strings.Contains(j.Approximations[0].Text, "transient") {
		t.Errorf("approximations %q: want the one of the time step", j.Approximations)
	}
	lf, err := d.Lower(SUPG)
	if err != nil {
		t.Fatal(err)
	}
	sf, err := BackwardEuler(lf)
	if err != nil {
		t.Fatal(err)
	}
	if sf.Mass == nil || !sf.Step.Newton {
		t.Fatalf("stepped Newton form without mass form (%v) or Newton mark", sf.Mass == nil)
	}
	for _, f := range []*ir.LoweredForm{sf.Step, sf.Mass} {
		for _, in := range f.Integrals {
			for _, ts := range [][]ir.Term{in.Bilinear, in.Linear} {
				for _, term := range ts {
					if ir.Contains(term.Coef, func(e ir.Expr) bool { x, ok := e.(*ir.FieldD); return ok && x.DT > 0 }) {
						t.Errorf("a coefficient still reads a time derivative: %s", show(term.Coef))
					}
					if term.Trial != nil && term.Trial.DT > 0 {
						t.Error("a trial function still has a time derivative")
					}
				}
			}
		}
	}
}
