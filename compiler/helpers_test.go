package compiler

import (
	"math"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/stdlib"
	"gonum.org/v1/gonum/integrate/quad"
)

// mustModel parses and checks a model given as source text.
func mustModel(t testing.TB, src string) *Model {
	t.Helper()
	f, errs := lang.Parse("test.fw", []byte(src))
	m, cerrs := Check(f, CheckOptions{Load: stdlib.Module})
	errs = append(errs, cerrs...)
	if len(errs) > 0 {
		var b strings.Builder
		errs.Format(&b, m.Sources)
		t.Fatalf("model does not check:\n%s", b.String())
	}
	return m
}

// checkErrors returns the error messages Check reports for src.
func checkErrors(file, src string) source.ErrorList {
	f, errs := lang.Parse(file, []byte(src))
	_, cerrs := Check(f, CheckOptions{Load: stdlib.Module})
	return append(errs, cerrs...)
}

// sinProduct is Π_k sin(w_k π x_k): smooth, zero on the boundary of the unit
// square or cube, with derivatives known in closed form.
type sinProduct struct{ w [3]float64 }

// deriv evaluates ∂^D of the product at x: d^n/dt^n sin(ct) = c^n sin(ct + nπ/2).
func (s sinProduct) deriv(x []float64, d [3]uint8) float64 {
	v := 1.0
	for k := range x {
		c := s.w[k] * math.Pi
		n := float64(d[k])
		v *= math.Pow(c, n) * math.Sin(c*x[k]+n*math.Pi/2)
	}
	return v
}

// pointEnv evaluates lowered expressions at one point, with closed-form
// trial and test functions.
type pointEnv struct {
	x     []float64
	trial map[[2]int]sinProduct // (unknown, component) -> function
	test  map[[2]int]sinProduct
}

func (e *pointEnv) Coord(axis int) float64 { return e.x[axis] }
func (e *pointEnv) Time() float64          { return 0 }
func (e *pointEnv) CellQ(q *ir.CellQ) float64 {
	panic("cell quantity in a pointwise test: " + q.Q.String())
}
func (e *pointEnv) FieldD(f *ir.FieldD) float64 {
	key := [2]int{f.Field.Index, f.Comp}
	var fn sinProduct
	var ok bool
	switch f.Field.Role {
	case ir.Trial:
		fn, ok = e.trial[key]
	case ir.Test:
		fn, ok = e.test[key]
	}
	if !ok {
		panic("no function for field " + f.Field.Name)
	}
	if f.DT != 0 {
		return 0
	}
	return fn.deriv(e.x, f.D)
}

// integrate computes ∫ over the unit square (or interval, cube) of f by a
// tensor Gauss–Legendre rule of n points per direction (gonum's
// quad.Legendre nodes; exact for polynomials of degree 2n−1, Abramowitz &
// Stegun 25.4.29).
func integrate(dim, n int, f func(x []float64) float64) float64 {
	xs := make([]float64, n)
	ws := make([]float64, n)
	quad.Legendre{}.FixedLocations(xs, ws, 0, 1)
	x := make([]float64, dim)
	var rec func(k int, w float64) float64
	rec = func(k int, w float64) float64 {
		if k == dim {
			return w * f(x)
		}
		s := 0.0
		for i := range xs {
			x[k] = xs[i]
			s += rec(k+1, w*ws[i])
		}
		return s
	}
	return rec(0, 1)
}

func show(e ir.Expr) string { return ir.Debug(e) }
