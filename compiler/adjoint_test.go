package compiler

import (
	"math"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
)

// The formal adjoint is defined by ∫_Ω (L u)·v dx = ∫_Ω u·(L* v) dx for
// smooth u, v vanishing on ∂Ω (e.g. Hughes 1995, CMAME 127, §2; any text on
// Green's formula). These tests evaluate both sides by high-order Gauss
// quadrature, with u and v products of sin(kπx) bumps whose derivatives are
// coded in closed form, so a wrong sign or a missing ∇·a term in the
// symbolic adjoint shows up as a mismatch. Tolerance 1e-10 relative: the
// integrands are smooth and 24 Gauss points per direction integrate them to
// round-off.

var adjointCases = []struct {
	name string
	src  string
}{
	{"variable advection–diffusion–reaction 2D", `
model c
dimension 2
unknown u: scalar P2
given a = [1 + x*y, sin(y) - x^2]
given k = 1 + x^2 + sin(x*y)/2
given s = exp(x - y)
equation for u: a . grad(u) - div(k*grad(u)) + s*u = 0
`},
	{"conservative advection and mixed derivative", `
model c
dimension 2
unknown u: scalar P2
given b = [cos(x + y), x*y^2]
given m = 1 + x*y
equation for u: div(b*u) + m*partial(u, x, y) - lap(u)*(2 + cos(y)) + partial(u, y)*x = 0
`},
	{"1D with variable everything", `
model c
dimension 1
unknown u: scalar P1
given a = 2 + sin(3*x)
given k = exp(x)
equation for u: a*partial(u, x) - partial(k*partial(u, x), x) + x^2*u = 0
`},
	{"3D", `
model c
dimension 3
unknown u: scalar P1
given a = [y, z*x, 1 + x]
given k = 1 + z^2
equation for u: a . grad(u) - div(k*grad(u)) = 0
`},
	{"Stokes-like system with variable viscosity and coupling", `
model c
dimension 2
unknown vel: vector P1
unknown p: scalar P1
given nu = 1 + x*y
given r = 2 + x
given b = [1 + y, x]
equation for vel: grad(vel) . b - div(nu*grad(vel)) + grad(p) + r*vel = [0, 0]
equation for p: div(vel) + r*p = 0
`},
}

func TestAdjointIdentity(t *testing.T) {
	for _, tc := range adjointCases {
		t.Run(tc.name, func(t *testing.T) {
			m := mustModel(t, tc.src)
			adj, err := Adjoint(m)
			if err != nil {
				t.Fatal(err)
			}
			l := newLowerer(m)
			var lu [][]ir.Expr // per equation, components of L u
			for _, eq := range m.Equations {
				lu = append(lu, l.Lower(eq.Written))
			}
			var lstar [][]ir.Expr
			for _, a := range adj {
				lstar = append(lstar, l.Lower(a))
			}
			env := &pointEnv{trial: map[[2]int]sinProduct{}, test: map[[2]int]sinProduct{}}
			for _, u := range m.Unknowns {
				nc := 1
				if u.Rank == 1 {
					nc = m.Dim
				}
				for c := 0; c < nc; c++ {
					k := float64(u.Index*3 + c)
					env.trial[[2]int{u.Index, c}] = sinProduct{[3]float64{1 + k, 2, 1 + float64(c)}}
					env.test[[2]int{u.Index, c}] = sinProduct{[3]float64{2, 1 + k, 2 - float64(c)}}
				}
			}
			lhs := integrate(m.Dim, 24, func(x []float64) float64 {
				env.x = x
				s := 0.0
				for k, eq := range m.Equations {
					for c, comp := range lu[k] {
						s += ir.Eval(comp, env) * env.test[[2]int{eq.For, c}].deriv(x, [3]uint8{})
					}
				}
				return s
			})
			rhs := integrate(m.Dim, 24, func(x []float64) float64 {
				env.x = x
				s := 0.0
				for i, row := range lstar {
					for c, comp := range row {
						s += env.trial[[2]int{i, c}].deriv(x, [3]uint8{}) * ir.Eval(comp, env)
					}
				}
				return s
			})
			if d := math.Abs(lhs - rhs); d > 1e-10*math.Max(1, math.Abs(lhs)) {
				t.Errorf("∫(Lu)v = %.15g but ∫u(L*v) = %.15g (difference %.3g)", lhs, rhs, d)
			}
			if math.Abs(lhs) < 1e-3 {
				t.Errorf("∫(Lu)v = %g is too small for the check to mean anything", lhs)
			}
		})
	}
}

// TestAdjointRules pins the textbook rules the issue lists: the adjoint of
// a·∇u is −a·∇v − (∇·a) v, of −∇·(k∇u) is −∇·(k∇v), of s u is s v
// (Hughes 1995; Codina 2000 CMAME 190 for the transposed block operator of
// Stokes: L*(v, q) = (−νΔv − ∇q, −∇·v)).
func TestAdjointRules(t *testing.T) {
	cases := []struct {
		src  string
		want []string // adjoint rows in the model language
	}{
		{`model c
dimension 2
unknown u: scalar P1
given a = [x, y^2]
equation for u: a . grad(u) = 0`, []string{"-a . grad(test(u)) - (1 + 2*y)*test(u)"}},
		{`model c
dimension 2
unknown u: scalar P1
given k = 1 + x
equation for u: -div(k*grad(u)) = 0`, []string{"-div(k*grad(test(u)))"}},
		{`model c
dimension 2
unknown u: scalar P1
given s = exp(x)
equation for u: s*u = 0`, []string{"s*test(u)"}},
		{`model c
dimension 2
unknown vel: vector P1
unknown p: scalar P1
given nu = 3
equation for vel: -div(nu*grad(vel)) + grad(p) = [0, 0]
equation for p: div(vel) = 0`, []string{"-nu*lap(test(vel)) - grad(test(p))", "-div(test(vel))"}},
	}
	for _, tc := range cases {
		m := mustModel(t, tc.src)
		adj, err := Adjoint(m)
		if err != nil {
			t.Fatal(err)
		}
		for i, w := range tc.want {
			want, errs := m.ParseExpr("want", w)
			if len(errs) > 0 {
				t.Fatalf("%s: %v", w, errs)
			}
			// Compare on coefficient definitions substituted, so that the
			// ∇·a term of the first case is an explicit expression.
			got := Simplify(substituteDefs(m, adj[i]), m.Dim)
			exp := Simplify(substituteDefs(m, want), m.Dim)
			if !ir.Equal(got, exp) {
				t.Errorf("adjoint row %d of\n%s\n got  %s\n want %s", i, tc.src, show(got), show(exp))
			}
		}
	}
}

// TestAdvectionAntisymmetry checks B_A(u, v) = −B_A(v, u) for a
// divergence-free field and u, v vanishing on ∂Ω, by quadrature (common
// practice, no source: ∫ (a·∇u) v = −∫ u ∇·(a v) = −∫ (a·∇v) u when
// ∇·a = 0). The field is the curl of a stream function, and the compiler
// must also find ∇·a = 0 symbolically, which is what lets GLS use +L v.
func TestAdvectionAntisymmetry(t *testing.T) {
	m := mustModel(t, `model c
dimension 2
unknown u: scalar P1
given psi = sin(pi*x)^2*y*(1 - y)*exp(x*y)
given a = [partial(psi, y), -partial(psi, x)]
equation for u: a . grad(u) = 0`)
	if dv := Simplify(&ir.Div{X: substituteDefs(m, m.Coef("a").Sym)}, 2); !ir.IsZero(dv) {
		t.Fatalf("∇·a = %s, want 0", show(dv))
	}
	l := newLowerer(m)
	au := l.Lower(m.Equations[0].Written)[0]
	av := l.Lower(toTest(m.Equations[0].Written))[0]
	env := &pointEnv{
		trial: map[[2]int]sinProduct{{0, 0}: {[3]float64{1, 2, 0}}},
		test:  map[[2]int]sinProduct{{0, 0}: {[3]float64{3, 1, 0}}},
	}
	var buv, bvu float64
	buv = integrate(2, 24, func(x []float64) float64 {
		env.x = x
		return ir.Eval(au, env) * env.test[[2]int{0, 0}].deriv(x, [3]uint8{})
	})
	bvu = integrate(2, 24, func(x []float64) float64 {
		env.x = x
		return ir.Eval(av, env) * env.trial[[2]int{0, 0}].deriv(x, [3]uint8{})
	})
	if math.Abs(buv+bvu) > 1e-12*math.Abs(buv) || math.Abs(buv) < 1e-3 {
		t.Errorf("B_A(u,v) = %.15g, B_A(v,u) = %.15g: not antisymmetric", buv, bvu)
	}
	d, err := Derive(m, []Method{GLS})
	if err != nil {
		t.Fatal(err)
	}
	found := false
	for _, n := range d.Forms[0].Notes {
		if strings.Contains(n.Text, "divergence-free") && n.Kind == Assumption {
			found = true
		}
	}
	if !found {
		t.Errorf("GLS derivation lacks the antisymmetry note: %v", d.Forms[0].Notes)
	}
}

// TestAdjointDropsVanishingDivergence: the formal adjoint of a·∇u is
// −(∇·a)v − a·∇v (integration by parts; e.g. Donea & Huerta 2003, §2.2).
// For the rigid rotation a = (−y, x), ∇·a = 0 by hand, so the derivation
// leaves the first term out and says why; for a = (1 − x²/4, y/10),
// ∇·a = −x/2 + 1/10 by hand, so the term stays.
func TestAdjointDropsVanishingDivergence(t *testing.T) {
	for _, c := range []struct {
		a    string
		kept bool
	}{{"[-y, x]", false}, {"[1 - x^2/4, y/10]", true}} {
		m := mustModel(t, "model m\ndimension 2\nunknown c: scalar P1\ngiven a = "+c.a+
			"\nequation for c: a . grad(c) - lap(c) = 1\nat all: c = 0\n")
		d, err := Derive(m, nil)
		if err != nil {
			t.Fatal(err)
		}
		hasDiv := false
		ir.InspectOnce(d.Adjoint[0], func(e ir.Expr) bool {
			if _, ok := e.(*ir.Div); ok {
				hasDiv = true
			}
			return true
		})
		noted := false
		for _, n := range d.Notes {
			noted = noted || strings.Contains(n.Text, "divergence of a vanishes")
		}
		if hasDiv != c.kept || noted == c.kept {
			t.Errorf("a = %s: adjoint %s has the divergence term: %v (want %v), note: %v", c.a, show(d.Adjoint[0]), hasDiv, c.kept, noted)
		}
	}
}
