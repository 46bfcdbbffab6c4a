package ir

import (
	"math"
	"testing"

	"github.com/formwright/formwright/lang/source"
)

var p source.Pos

// TestCompareIsTotalOrder: Compare is antisymmetric and transitive on a
// sample of nodes, and Equal ignores positions.
func TestCompareIsTotalOrder(t *testing.T) {
	u := &Field{Name: "u", Role: Trial}
	v := &Field{Name: "u", Role: Test}
	k := &Sym{Name: "k", Kind: Coefficient}
	xs := []Expr{Int(p, 2), Rat(p, 1, 3), &Coord{Axis: 1}, k, u, v, &Grad{X: u}, &Lap{X: u},
		Sum(p, k, Int(p, 1)), Prod(p, k, u), &Pow{Base: k, Exp: Int(p, 2)}, &Call{Fn: Sin, Args: []Expr{k}}}
	for _, a := range xs {
		for _, b := range xs {
			if Compare(a, b) != -Compare(b, a) {
				t.Errorf("Compare not antisymmetric on %s, %s", Debug(a), Debug(b))
			}
			for _, c := range xs {
				if Compare(a, b) < 0 && Compare(b, c) < 0 && Compare(a, c) >= 0 {
					t.Errorf("Compare not transitive on %s < %s < %s", Debug(a), Debug(b), Debug(c))
				}
			}
		}
	}
	moved := &Sym{At: At{source.Pos{File: "f", Line: 3, Col: 4}}, Name: "k", Kind: Coefficient}
	if !Equal(k, moved) {
		t.Error("Equal depends on positions")
	}
}

// TestEval checks the tree evaluator on closed forms (values from the
// math package).
func TestEval(t *testing.T) {
	x := &Coord{Axis: 0}
	e := Sum(p, &Call{Fn: Sin, Args: []Expr{Prod(p, &Const{Name: "pi"}, x)}}, &Pow{Base: x, Exp: Rat(p, 1, 2)}, &Call{Fn: Coth, Args: []Expr{x}})
	got := Eval(e, env{0.3})
	want := math.Sin(math.Pi*0.3) + math.Sqrt(0.3) + 1/math.Tanh(0.3)
	if math.Abs(got-want) > 1e-15 {
		t.Errorf("Eval = %.17g, want %.17g", got, want)
	}
}

type env []float64

func (e env) Coord(a int) float64    { return e[a] }
func (e env) Time() float64          { return 0 }
func (e env) CellQ(*CellQ) float64   { return 0 }
func (e env) FieldD(*FieldD) float64 { return 0 }

// TestFormHash: the hash is a function of the form's content only.
func TestFormHash(t *testing.T) {
	u := &Field{Name: "u", Role: Trial}
	v := &Field{Name: "u", Role: Test}
	mk := func(c int64) *LoweredForm {
		return &LoweredForm{Method: "galerkin", Dim: 1, Unknowns: []LoweredUnknown{{Name: "u", Element: P1}},
			Integrals: []Integral{{Bilinear: []Term{{Coef: Int(p, c), Trial: &FieldD{Field: u, D: [3]uint8{1}}, Test: &FieldD{Field: v, D: [3]uint8{1}}}}}}}
	}
	if FormHash(mk(1)) != FormHash(mk(1)) {
		t.Error("hash not deterministic")
	}
	if FormHash(mk(1)) == FormHash(mk(2)) {
		t.Error("hash ignores a coefficient")
	}
}
