package render

import (
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/stdlib"
)

const roundTripModel = `model roundtrip
dimension 2
unknown u: scalar P2
unknown w: vector P2
given k = 1 + x*y
given a = [sin(y), x^2]
given s = 3
equation for u: a . grad(u) - div(k*grad(u)) + s*u = 1
equation for w: -lap(w) + grad(u) = [0, 0]
stabilise supg
tau for u = 1/(1 + norm(a))
tau for w = 1
`

func mustModel(t testing.TB, src string) *compiler.Model {
	t.Helper()
	f, errs := lang.Parse("rt.fw", []byte(src))
	m, cerrs := compiler.Check(f, compiler.CheckOptions{Load: stdlib.Module})
	errs = append(errs, cerrs...)
	if len(errs) > 0 {
		var b strings.Builder
		errs.Format(&b, m.Sources)
		t.Fatal(b.String())
	}
	return m
}

// gen builds random well-typed IR expressions over one model's names.
type gen struct {
	r *rand.Rand
	m *compiler.Model
}

func (g gen) sym(name string) ir.Expr { return g.m.Coef(name).Sym }

func (g gen) scalar(depth int) ir.Expr {
	var p source.Pos
	if depth == 0 {
		switch g.r.IntN(7) {
		case 0:
			return ir.Rat(p, int64(g.r.IntN(9)-4), int64(1+g.r.IntN(4)))
		case 1:
			return &ir.Coord{Axis: g.r.IntN(2)}
		case 2:
			return g.sym("k")
		case 3:
			return g.sym("s")
		case 4:
			return g.m.Trial(0)
		case 5:
			return g.m.Test(0)
		}
		return &ir.Const{Name: "pi"}
	}
	switch g.r.IntN(11) {
	case 0:
		return ir.Sum(p, g.scalar(depth-1), g.scalar(depth-1))
	case 1:
		return ir.Prod(p, g.scalar(depth-1), g.scalar(depth-1))
	case 2:
		return &ir.Pow{Base: g.scalar(depth - 1), Exp: ir.Rat(p, int64(g.r.IntN(7)-3), int64(1+g.r.IntN(2)))}
	case 3:
		return &ir.Call{Fn: []ir.Func{ir.Sin, ir.Exp, ir.Abs, ir.Tanh, ir.Coth}[g.r.IntN(5)], Args: []ir.Expr{g.scalar(depth - 1)}}
	case 4:
		return &ir.Dot{A: g.vector(depth - 1), B: g.vector(depth - 1)}
	case 5:
		return &ir.Div{X: g.vector(depth - 1)}
	case 6:
		return &ir.Lap{X: g.scalar(depth - 1)}
	case 7:
		return &ir.Partial{X: g.scalar(depth - 1), Axis: g.r.IntN(2)}
	case 8:
		return &ir.Comp{X: g.vector(depth - 1), I: g.r.IntN(2)}
	case 9:
		return ir.Neg(p, g.scalar(depth-1))
	}
	return &ir.Call{Fn: ir.Norm, Args: []ir.Expr{g.vector(depth - 1)}}
}

func (g gen) vector(depth int) ir.Expr {
	var p source.Pos
	if depth == 0 {
		switch g.r.IntN(3) {
		case 0:
			return g.sym("a")
		case 1:
			return g.m.Trial(1)
		}
		return &ir.Vec{Elems: []ir.Expr{g.scalar(0), g.scalar(0)}}
	}
	switch g.r.IntN(6) {
	case 0:
		return ir.Sum(p, g.vector(depth-1), g.vector(depth-1))
	case 1:
		return ir.Prod(p, g.scalar(depth-1), g.vector(depth-1))
	case 2:
		return &ir.Grad{X: g.scalar(depth - 1)}
	case 3:
		return &ir.Lap{X: g.vector(depth - 1)}
	case 4:
		return &ir.Dot{A: &ir.Grad{X: g.vector(depth - 1)}, B: g.vector(depth - 1)}
	}
	return &ir.Vec{Elems: []ir.Expr{g.scalar(depth - 1), g.scalar(depth - 1)}}
}

// TestSyntaxRoundTrip is the property the JSON output relies on: any IR
// expression in canonical form, printed in the model language, parses and
// checks back to the same canonical IR.
func TestSyntaxRoundTrip(t *testing.T) {
	m := mustModel(t, roundTripModel)
	g := gen{rand.New(rand.NewPCG(7, 11)), m}
	for i := 0; i < 2000; i++ {
		var e ir.Expr
		if i%3 == 2 {
			e = g.vector(1 + i%3)
		} else {
			e = g.scalar(1 + i%4)
		}
		c := compiler.Simplify(e, 2)
		src := notation.Expr(c, notation.Syntax, notation.Names{})
		back, errs := m.ParseExpr("roundtrip", src)
		if len(errs) > 0 {
			t.Fatalf("printed form does not parse:\n  %s\n  %v\n  tree %s", src, errs, ir.Debug(c))
		}
		if b := compiler.Simplify(back, 2); !ir.Equal(b, c) {
			t.Fatalf("round trip changed the expression:\n  printed %s\n  before  %s\n  after   %s", src, ir.Debug(c), ir.Debug(b))
		}
	}
}

// TestDerivedFormsReadBack prints every derived expression of the stdlib
// models in the model language and reads it back.
func TestDerivedFormsReadBack(t *testing.T) {
	for _, name := range stdlib.Models() {
		file, src, err := stdlib.Model(name)
		if err != nil {
			t.Fatal(err)
		}
		_ = file
		m := mustModel(t, string(src))
		d, err := compiler.Derive(m, compiler.AllMethods)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		var exprs []ir.Expr
		exprs = append(exprs, d.Adjoint...)
		exprs = append(exprs, d.Normalised...)
		exprs = append(exprs, d.Galerkin.Bilinear, d.Galerkin.Source)
		for _, f := range d.Forms {
			for _, s := range f.Stab {
				exprs = append(exprs, s.Residual, s.TestOp, s.Integrand(m.Dim))
			}
		}
		for _, e := range exprs {
			c := compiler.Simplify(e, m.Dim)
			s := notation.Expr(c, notation.Syntax, notation.Names{})
			back, errs := m.ParseExpr(name, s)
			if len(errs) > 0 {
				t.Fatalf("%s: %q does not read back: %v", name, s, errs)
			}
			if b := compiler.Simplify(back, m.Dim); !ir.Equal(b, c) {
				t.Fatalf("%s: %q reads back as a different expression\n  %s\n  %s", name, s, ir.Debug(c), ir.Debug(b))
			}
		}
	}
}
