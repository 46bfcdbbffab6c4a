package compiler

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
	"gonum.org/v1/gonum/diff/fd"
)

// randomScalar builds a random smooth expression of x and y of the given
// depth, from functions that stay finite on [0.1, 0.9]² (log and powers of
// positive bases only).
func randomScalar(r *rand.Rand, depth int) ir.Expr {
	var p source.Pos
	x := func() ir.Expr { return &ir.Coord{Axis: r.IntN(2)} }
	if depth == 0 {
		switch r.IntN(3) {
		case 0:
			return ir.Rat(p, int64(r.IntN(7)-3), int64(1+r.IntN(3)))
		default:
			return x()
		}
	}
	a := randomScalar(r, depth-1)
	b := randomScalar(r, depth-1)
	positive := func(e ir.Expr) ir.Expr { // 1 + e² > 0
		return ir.Sum(p, ir.Int(p, 1), &ir.Pow{Base: e, Exp: ir.Int(p, 2)})
	}
	switch r.IntN(9) {
	case 0:
		return ir.Sum(p, a, b)
	case 1, 2:
		return ir.Prod(p, a, b)
	case 3:
		return &ir.Call{Fn: []ir.Func{ir.Sin, ir.Cos, ir.Tanh}[r.IntN(3)], Args: []ir.Expr{a}}
	case 4:
		return &ir.Call{Fn: ir.Exp, Args: []ir.Expr{ir.Prod(p, ir.Rat(p, 1, 2), a)}}
	case 5:
		return &ir.Call{Fn: ir.Log, Args: []ir.Expr{positive(a)}}
	case 6:
		return &ir.Pow{Base: positive(a), Exp: ir.Rat(p, int64(r.IntN(5)-2), 2)}
	case 7:
		return &ir.Pow{Base: a, Exp: ir.Int(p, int64(1+r.IntN(3)))}
	}
	return ir.Prod(p, a, &ir.Pow{Base: positive(b), Exp: ir.Int(p, -1)})
}

type xyEnv struct{ x []float64 }

func (e xyEnv) Coord(axis int) float64    { return e.x[axis] }
func (e xyEnv) Time() float64             { return 0 }
func (e xyEnv) CellQ(*ir.CellQ) float64   { panic("no cell") }
func (e xyEnv) FieldD(*ir.FieldD) float64 { panic("no field") }

// TestDerivativesAgainstFiniteDifferences differentiates random
// expressions symbolically (Simplify of ∂/∂x and ∂²/∂x∂y) and compares with
// gonum's diff/fd central differences (an independent numerical
// reference) at random points. Tolerance: the central formula's truncation
// and round-off error at step 1e-4 (first) and 2e-4 (nested, second) is ~1e-7
// relative for these smooth functions; 1e-5 leaves a margin.
func TestDerivativesAgainstFiniteDifferences(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	checked := 0
	for trial := 0; trial < 300; trial++ {
		e := randomScalar(r, 3)
		dx := Simplify(&ir.Partial{X: e, Axis: 0}, 2)
		dxy := Simplify(&ir.Partial{X: &ir.Partial{X: e, Axis: 1}, Axis: 0}, 2)
		if ir.Contains(dx, func(n ir.Expr) bool { _, ok := n.(*ir.Partial); return ok }) {
			t.Fatalf("derivative left unevaluated: %s", show(dx))
		}
		for k := 0; k < 3; k++ {
			pt := []float64{0.1 + 0.8*r.Float64(), 0.1 + 0.8*r.Float64()}
			f := func(x, y float64) float64 { return ir.Eval(e, xyEnv{[]float64{x, y}}) }
			num := fd.Derivative(func(x float64) float64 { return f(x, pt[1]) }, pt[0], &fd.Settings{Formula: fd.Central, Step: 1e-4})
			got := ir.Eval(dx, xyEnv{pt})
			if math.IsNaN(num) || math.IsInf(num, 0) || math.Abs(num) > 1e6 {
				continue
			}
			if math.Abs(got-num) > 1e-5*math.Max(1, math.Abs(num)) {
				t.Fatalf("∂/∂x of %s at %v: symbolic %.12g, finite difference %.12g", show(e), pt, got, num)
			}
			// Mixed second derivative: nested central differences of f
			// (fd.Hessian uses a first-order formula, too coarse here).
			cen := &fd.Settings{Formula: fd.Central, Step: 2e-4}
			numxy := fd.Derivative(func(x float64) float64 {
				return fd.Derivative(func(y float64) float64 { return f(x, y) }, pt[1], cen)
			}, pt[0], cen)
			gotxy := ir.Eval(dxy, xyEnv{pt})
			if math.Abs(gotxy-numxy) > 1e-5*math.Max(1, math.Abs(numxy)) {
				t.Fatalf("∂²/∂x∂y of %s at %v: symbolic %.12g, finite difference %.12g", show(e), pt, gotxy, numxy)
			}
			checked++
		}
	}
	if checked < 500 {
		t.Fatalf("only %d points checked", checked)
	}
}

// TestProductRuleExpansion pins the rule the issue names:
// div(k*grad(u)) = k*lap(u) + grad(k).grad(u) for a variable k.
func TestProductRuleExpansion(t *testing.T) {
	m := mustModel(t, `model c
dimension 2
unknown u: scalar P1
given k = 1 + x^2*y
equation for u: -div(k*grad(u)) = 0`)
	got := Simplify(m.Equations[0].Written, 2)
	want, errs := m.ParseExpr("want", "-k*lap(u) - grad(k) . grad(u)")
	if len(errs) > 0 {
		t.Fatal(errs)
	}
	if !ir.Equal(got, Simplify(want, 2)) {
		t.Errorf("got %s, want %s", show(got), show(Simplify(want, 2)))
	}
	// With the definition of k substituted, grad(k) becomes (2xy, x²).
	sub := Simplify(substituteDefs(m, got), 2)
	want2, _ := m.ParseExpr("want", "-(1 + x^2*y)*lap(u) - 2*x*y*partial(u, x) - x^2*partial(u, y)")
	if !ir.Equal(sub, Simplify(want2, 2)) {
		t.Errorf("substituted: got %s, want %s", show(sub), show(Simplify(want2, 2)))
	}
}

// TestExactRationals checks that decimal literals become exact rationals
// and fold exactly: 0.1 + 0.2 is 3/10, not 0.30000000000000004.
func TestExactRationals(t *testing.T) {
	m := mustModel(t, "model c\ndimension 1\nunknown u: scalar P1\nequation for u: u = 0")
	e, errs := m.ParseExpr("e", "0.1 + 0.2 - 3/10 + 2^-2 - 1e-2*25 + (4/9)^(1/2) - 2/3")
	if len(errs) > 0 {
		t.Fatal(errs)
	}
	if got := Simplify(e, 1); !ir.IsZero(got) {
		t.Errorf("got %s, want exactly 0", show(got))
	}
}
