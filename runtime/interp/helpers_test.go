package interp

import (
	"math/big"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
)

// Small builders for hand-written lowered forms.

func num(a, b int64) ir.Expr { return &ir.Num{Val: big.NewRat(a, b)} }
func flt(x float64) ir.Expr  { r := new(big.Rat); r.SetFloat64(x); return &ir.Num{Val: r} }
func coord(k int) ir.Expr    { return &ir.Coord{Axis: k} }
func mul(f ...ir.Expr) ir.Expr {
	return &ir.Mul{Factors: f}
}
func add(t ...ir.Expr) ir.Expr { return &ir.Add{Terms: t} }
func pow(b, e ir.Expr) ir.Expr { return &ir.Pow{Base: b, Exp: e} }
func call(fn ir.Func, a ...ir.Expr) ir.Expr {
	return &ir.Call{Fn: fn, Args: a}
}

var (
	uField = &ir.Field{Name: "u", Index: 0, Role: ir.Trial}
	vField = &ir.Field{Name: "u", Index: 0, Role: ir.Test}
)

// fd returns a FieldD of f (component comp) with derivative counts d.
func fd(f *ir.Field, comp int, d ...uint8) *ir.FieldD {
	x := &ir.FieldD{Field: f, Comp: comp}
	copy(x.D[:], d)
	return x
}

func term(c ir.Expr, trial, test *ir.FieldD) ir.Term {
	return ir.Term{Coef: c, Trial: trial, Test: test}
}

// mustElement reads an element name that the test knows to be valid.
func mustElement(name string) ir.Element {
	e, err := ir.ParseElement(name)
	if err != nil {
		panic(err)
	}
	return e
}

// scalarForm is a one-unknown form with the given cell terms.
func scalarForm(dim int, elem ir.Element, bil, lin []ir.Term) *ir.LoweredForm {
	return &ir.LoweredForm{
		Method: "galerkin", Dim: dim,
		Unknowns:  []ir.LoweredUnknown{{Name: "u", Element: elem}},
		Integrals: []ir.Integral{{Bilinear: bil, Linear: lin}},
	}
}

// laplaceTerms is ∫ ∇u·∇v in dim dimensions.
func laplaceTerms(dim int) []ir.Term {
	var t []ir.Term
	for k := 0; k < dim; k++ {
		d := make([]uint8, 3)
		d[k] = 1
		t = append(t, term(num(1, 1), fd(uField, 0, d...), fd(vField, 0, d...)))
	}
	return t
}

func elementFor1(c cell.Type) *element.Element { return element.MustLagrange(c, 1) }
func elementFor2(c cell.Type) *element.Element { return element.MustLagrange(c, 2) }
