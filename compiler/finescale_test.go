package compiler

import (
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/interp"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/stdlib"
)

func stdlibModel(t *testing.T, name string) *Model {
	t.Helper()
	file, src, err := stdlib.Model(name)
	if err != nil {
		t.Fatal(err)
	}
	f, errs := lang.Parse(file, src)
	m, cerrs := Check(f, CheckOptions{Load: stdlib.Module})
	if len(errs)+len(cerrs) > 0 {
		t.Fatal(errs, cerrs)
	}
	return m
}

func parsed(t *testing.T, m *Model, src string) ir.Expr {
	t.Helper()
	e, errs := m.ParseExpr("want", src)
	if len(errs) > 0 {
		t.Fatalf("%s: %v", src, errs)
	}
	return Simplify(e, m.Dim)
}

func vmsForm(t *testing.T, m *Model) (*Derivation, *MethodForm) {
	t.Helper()
	d, err := Derive(m, []Method{VMS})
	if err != nil {
		t.Fatal(err)
	}
	return d, &d.Forms[0]
}

// TestFineScaleNavierStokes: the VMS form of the Picard-linearised
// Navier–Stokes model (convection (∇u) previous(u)), from the general
// expansion in the fine scales, carries the terms of residual-based VMS
// turbulence modelling as printed by Bazilevs, Calo, Cottrell, Hughes,
// Reali & Scovazzi (2007, CMAME 197; recalled from memory), with
// u′ = −τ_M R_M: the cross-stress term (w, (∇u_h) u′) and the
// Reynolds-stress term −(∇w, u′ ⊗ u′), here with the convecting fine scale
// at the previous iterate. The term −((∇·u′⁽ᵖʳᵉᵛ⁾) u′, w), which keeps a
// derivative of a fine scale, is dropped and listed.
func TestFineScaleNavierStokes(t *testing.T) {
	m := stdlibModel(t, "navier_stokes")
	d, f := vmsForm(t, m)
	if len(f.Fine) != 2 || f.Fine[0].Sym.Kind != ir.FineScale || f.Fine[1].Sym.Kind != ir.LaggedFineScale {
		t.Fatalf("fine scales %v, want vel′ and vel′ at the previous iterate", f.Fine)
	}
	// u′ = −τ_M R_M, at the state and at the previous iterate.
	if want := parsed(t, m, "-tau_vel*(grad(vel) . previous(vel) - div(nu*grad(vel)) + grad(p) - g)"); !ir.Equal(f.Fine[0].Def, want) {
		t.Errorf("fine scale %s, want %s", show(f.Fine[0].Def), show(want))
	}
	if want := parsed(t, m, "-tau_vel*(grad(previous(vel)) . previous(vel) - div(nu*grad(previous(vel))) + grad(previous(p)) - g)"); !ir.Equal(f.Fine[1].Def, want) {
		t.Errorf("lagged fine scale %s, want %s", show(f.Fine[1].Def), show(want))
	}
	// Cross stress (w, (∇u_h) u′⁽ᵖʳᵉᵛ⁾) and Reynolds stress
	// −u′·(∇w)u′⁽ᵖʳᵉᵛ⁾ = −(∇w : u′ ⊗ u′⁽ᵖʳᵉᵛ⁾).
	if want := parsed(t, m, "(grad(vel) . fine_prev_vel) . test(vel) - fine_vel . (grad(test(vel)) . fine_prev_vel)"); !ir.Equal(f.Cross, want) {
		t.Errorf("fine-scale terms %s, want %s", show(f.Cross), show(want))
	}
	sameComponents(t, m, f.Cross, parsed(t, m, "(grad(vel) . fine_prev_vel) . test(vel) - ddot(grad(test(vel)), outer(fine_vel, fine_prev_vel))"))
	if len(f.Dropped) != 1 {
		t.Fatalf("dropped %v, want one term", f.Dropped)
	}
	if want := parsed(t, m, "-(fine_vel . test(vel))*div(fine_prev_vel)"); !ir.Equal(f.Dropped[0], want) {
		t.Errorf("dropped %s, want %s", show(f.Dropped[0]), show(want))
	}
	// The momentum row's test operator is L* v: the fine scales are in the
	// terms above, not in the test operator.
	for _, s := range f.Stab {
		if s.For == 0 && !ir.Equal(s.TestOp, d.Adjoint[0]) {
			t.Errorf("momentum test operator %s, want L*v = %s", show(s.TestOp), show(d.Adjoint[0]))
		}
	}
	found := false
	for _, n := range f.Notes {
		found = found || strings.Contains(n.Text, "cross stress") && strings.Contains(n.Text, "Bazilevs")
	}
	if !found {
		t.Error("no note on the fine-scale expansion")
	}
}

// TestFineScaleMatchesSpecialCase: the general expansion reproduces, for
// the lagged Navier–Stokes model, the element matrices and vectors of the
// special case it replaced (finescale_ref_test.go: the convecting
// velocity previous(u) becoming previous(u) + u′, with the Reynolds stress
// in the test operator), and so does the derived Picard linearisation of
// the model written without a lag (navier_stokes_nonlinear), on random
// triangles with random previous iterates. Tolerance 1e-13 relative to
// the largest entry: the same integrands arranged differently, summed in
// another order (common practice, no source).
func TestFineScaleMatchesSpecialCase(t *testing.T) {
	m := stdlibModel(t, "navier_stokes")
	d, _ := vmsForm(t, m)
	general, err := d.Lower(VMS)
	if err != nil {
		t.Fatal(err)
	}
	// The special case, applied to the same model.
	split := SplitOperator(m)
	old := MethodForm{Method: VMS, Stab: Stabilise(m, VMS, split, d.Adjoint)}
	if skipped := refAddFineScale(m, &old); len(skipped) > 0 {
		t.Fatalf("special case skipped %v", skipped)
	}
	od := *d
	od.Forms = []MethodForm{old}
	special, err := od.Lower(VMS)
	if err != nil {
		t.Fatal(err)
	}
	// The Picard linearisation of the model written without the lag.
	pm, err := PicardModel(stdlibModel(t, "navier_stokes_nonlinear"))
	if err != nil {
		t.Fatal(err)
	}
	pd, err := Derive(pm, []Method{VMS})
	if err != nil {
		t.Fatal(err)
	}
	picard, err := pd.Lower(VMS)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(5, 8))
	ref, err := interp.NewKernel(special, cell.Triangle, interp.Options{})
	if err != nil {
		t.Fatal(err)
	}
	for name, form := range map[string]*ir.LoweredForm{"general rule": general, "derived Picard": picard} {
		k, err := interp.NewKernel(form, cell.Triangle, interp.Options{})
		if err != nil {
			t.Fatal(err)
		}
		n := k.Layout().N()
		A1, b1, A2, b2 := make([]float64, n*n), make([]float64, n), make([]float64, n*n), make([]float64, n)
		for trial := 0; trial < 5; trial++ {
			x := []float64{0, 0, 1, 0, 0, 1}
			for i := range x {
				x[i] = 0.3*x[i] + 0.05*rng.Float64()
			}
			in := &kernel.CellInput{Coords: x, Previous: make([]float64, n)}
			for i := range in.Previous {
				in.Previous[i] = 2*rng.Float64() - 1
			}
			ref.Cell(in, A1, b1)
			k.Cell(in, A2, b2)
			for _, pair := range [][2][]float64{{A1, A2}, {b1, b2}} {
				scale, diff := 0.0, 0.0
				for i := range pair[0] {
					scale = math.Max(scale, math.Abs(pair[0][i]))
					diff = math.Max(diff, math.Abs(pair[0][i]-pair[1][i]))
				}
				if !(diff <= 1e-13*scale) {
					t.Errorf("%s, cell %d: element data differ by %.3g (largest entry %.3g)", name, trial, diff, scale)
				}
			}
		}
	}
}

// TestFineScaleConservationForm: with the convection in conservation
// form, ∇·(u ⊗ previous(u)), the expansion gives the cross and Reynolds
// stresses −(∇w, u_h ⊗ u′⁽ᵖʳᵉᵛ⁾) − (∇w, u′ ⊗ u′⁽ᵖʳᵉᵛ⁾) of Bazilevs et al.
// (2007) exactly, with nothing dropped (integration by parts moves the
// divergence onto w). The special case left this form as written.
func TestFineScaleConservationForm(t *testing.T) {
	m := mustModel(t, `model ns_conservative
dimension 2
use tau
unknown vel: vector P1
unknown p: scalar P1
given nu = 1/10
given h = diam(K)
equation for vel: div(outer(vel, previous(vel))) - div(nu*grad(vel)) + grad(p) = [0, 0]
equation for p: div(vel) + p/10000000 = 0
at all: vel = [0, 0]
stabilise vms
tau for vel = tau_codina(norm(previous(vel)), nu, 0, h)
tau for p = h^2/(4*tau_codina(norm(previous(vel)), nu, 0, h))
`)
	_, f := vmsForm(t, m)
	want := parsed(t, m, "-ddot(grad(test(vel)), outer(vel, fine_prev_vel)) - ddot(grad(test(vel)), outer(fine_vel, fine_prev_vel))")
	if !ir.Equal(f.Cross, want) {
		t.Errorf("fine-scale terms %s, want %s", show(f.Cross), show(want))
	}
	if len(f.Dropped) > 0 {
		t.Errorf("dropped %v, want none", f.Dropped)
	}
}

// TestFineScaleBurgers: for u ∂ₓu the second-order term ∫ u′ ∂ₓu′ v
// integrates by parts into itself: ∫ u′ ∂ₓu′ v = −∫ u′ ∂ₓ(u′ v), so it
// equals −½ ∫ u′² ∂ₓv exactly (the Reynolds stress of the conservation
// form (u²/2)ₓ), and the expansion of a quadratic operator is exact.
func TestFineScaleBurgers(t *testing.T) {
	m := stdlibModel(t, "burgers")
	_, f := vmsForm(t, m)
	if want := parsed(t, m, "-fine_u^2*partial(test(u), x)/2"); !ir.Equal(f.Cross, want) {
		t.Errorf("fine-scale terms %s, want %s", show(f.Cross), show(want))
	}
	if len(f.Dropped) > 0 {
		t.Errorf("dropped %v, want none", f.Dropped)
	}
	exact := false
	for _, n := range f.Notes {
		exact = exact || strings.Contains(n.Text, "polynomial of degree 2") && strings.Contains(n.Text, "exact")
	}
	if !exact {
		t.Error("no note that the expansion is exact")
	}
}

// TestFineScaleNonpolynomial: eᵘ is not a polynomial, so the expansion is
// first order; the second-order term ½ δ²L[u′, u′] v = −λ eᵘ u′² v/2 is
// reported as dropped, with a warning.
func TestFineScaleNonpolynomial(t *testing.T) {
	m := stdlibModel(t, "bratu")
	_, f := vmsForm(t, m)
	if f.Cross != nil {
		t.Errorf("fine-scale terms %s, want none", show(f.Cross))
	}
	if len(f.Dropped) != 1 {
		t.Fatalf("dropped %v, want one term", f.Dropped)
	}
	if want := parsed(t, m, "-lambda*exp(u)*fine_u^2*test(u)/2"); !ir.Equal(f.Dropped[0], want) {
		t.Errorf("dropped %s, want %s", show(f.Dropped[0]), show(want))
	}
	warned := false
	for _, n := range f.Notes {
		warned = warned || n.Kind == Warning && strings.Contains(n.Text, "first order")
	}
	if !warned {
		t.Error("no warning that the expansion is first order")
	}
}

// TestFineScaleNewtonNavierStokes: for the convection (∇u)u written
// without a lag, the linear fine-scale term −(τR, L′(u)*v) holds the
// cross stress: L′(u)δu = (∇δu)u + (∇u)δu + …, whose adjoint has
// (∇u)ᵀv, and with u′ = −τR, (u′, (∇u)ᵀv) = (v, (∇u)u′). The
// second-order term is the Reynolds stress −(∇v : u′ ⊗ u′).
func TestFineScaleNewtonNavierStokes(t *testing.T) {
	m := stdlibModel(t, "navier_stokes_nonlinear")
	d, f := vmsForm(t, m)
	if want := parsed(t, m, "-nu*lap(test(vel)) - div(vel)*test(vel) - grad(test(vel)) . vel + test(vel) . grad(vel) - grad(test(p))"); !ir.Equal(d.Adjoint[0], want) {
		t.Errorf("L′* row of vel %s, want %s", show(d.Adjoint[0]), show(want))
	}
	if want := parsed(t, m, "-fine_vel . (grad(test(vel)) . fine_vel)"); !ir.Equal(f.Cross, want) {
		t.Errorf("fine-scale terms %s, want %s", show(f.Cross), show(want))
	}
	sameComponents(t, m, f.Cross, parsed(t, m, "-ddot(grad(test(vel)), outer(fine_vel, fine_vel))"))
	if len(f.Dropped) != 1 {
		t.Fatalf("dropped %v, want one term", f.Dropped)
	}
	if want := parsed(t, m, "-(fine_vel . test(vel))*div(fine_vel)"); !ir.Equal(f.Dropped[0], want) {
		t.Errorf("dropped %s, want %s", show(f.Dropped[0]), show(want))
	}
	// The Reynolds stress written as in the special case, (τR, (∇v) b)
	// with τR = −u′, equals −(∇v : u′ ⊗ b): checked component by
	// component with arbitrary values for the field derivatives.
	R := "(grad(vel) . vel - div(nu*grad(vel)) + grad(p) - g)"
	b := "[x*y, 1 + x]"
	identity := parsed(t, m, "(tau_vel*"+R+") . (grad(test(vel)) . "+b+") + ddot(grad(test(vel)), outer(-tau_vel*"+R+", "+b+"))")
	for i, c := range LowerExpr(m, identity) {
		for seed := uint64(1); seed <= 3; seed++ {
			if v := ir.Eval(c, arbitraryEnv{seed}); math.Abs(v) > 1e-12 {
				t.Errorf("(τR, (∇v)b) + (∇v : (−τR) ⊗ b), component %d = %g, want 0", i, v)
			}
		}
	}
}

// sameComponents checks that two expressions of a model are equal as
// algebraic expressions of the field derivatives: their lowered
// components agree for three sets of arbitrary values of the leaves
// (fine scales substituted by their definitions). Tolerance 1e-12: the
// same sum in another order.
func sameComponents(t *testing.T, m *Model, a, b ir.Expr) {
	t.Helper()
	l := newLowerer(m)
	d, err := Derive(m, []Method{VMS})
	if err != nil {
		t.Fatal(err)
	}
	for _, fs := range d.Forms[0].Fine {
		l.fine[fs.Sym.Name] = fs.Def
	}
	ca, cb := l.Lower(a), l.Lower(b)
	for i := range ca {
		for seed := uint64(1); seed <= 3; seed++ {
			va, vb := ir.Eval(ca[i], arbitraryEnv{seed}), ir.Eval(cb[i], arbitraryEnv{seed})
			if math.Abs(va-vb) > 1e-12*math.Max(1, math.Abs(va)) {
				t.Errorf("component %d: %g and %g differ (%s vs %s)", i, va, vb, show(a), show(b))
			}
		}
	}
}

// arbitraryEnv gives every field derivative, coordinate and cell quantity
// a fixed pseudo-random value in [−1, 1) (the same for equal leaves).
type arbitraryEnv struct{ seed uint64 }

func (e arbitraryEnv) value(key string) float64 {
	h := fnv.New64a()
	fmt.Fprintf(h, "%d|%s", e.seed, key)
	return float64(h.Sum64()%2000)/1000 - 1
}

func (e arbitraryEnv) Coord(axis int) float64    { return e.value(fmt.Sprint("x", axis)) }
func (e arbitraryEnv) Time() float64             { return e.value("t") }
func (e arbitraryEnv) CellQ(q *ir.CellQ) float64 { return 1.5 + e.value(q.Q.String()) }
func (e arbitraryEnv) FieldD(f *ir.FieldD) float64 {
	return e.value(fmt.Sprint(f.Field.Role, f.Field.Index, f.Comp, f.D, f.DT))
}
