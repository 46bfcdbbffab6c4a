package problem

import (
	"math/big"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/mesh"
)

func num(a, b int64) ir.Expr { return &ir.Num{Val: big.NewRat(a, b)} }

// flt is an exact rational equal to the float64 x.
func flt(x float64) ir.Expr {
	r := new(big.Rat)
	r.SetFloat64(x)
	return &ir.Num{Val: r}
}
func mul(f ...ir.Expr) ir.Expr          { return &ir.Mul{Factors: f} }
func add(t ...ir.Expr) ir.Expr          { return &ir.Add{Terms: t} }
func inv(x ir.Expr) ir.Expr             { return &ir.Pow{Base: x, Exp: num(-1, 1)} }
func neg(x ir.Expr) ir.Expr             { return mul(num(-1, 1), x) }
func call(f ir.Func, a ir.Expr) ir.Expr { return &ir.Call{Fn: f, Args: []ir.Expr{a}} }
func coord(k int) ir.Expr               { return &ir.Coord{Axis: k} }

var (
	pi     = &ir.Const{Name: "pi"}
	hCell  = &ir.CellQ{Q: ir.Diameter}
	trialU = &ir.Field{Name: "u", Index: 0, Role: ir.Trial}
	testU  = &ir.Field{Name: "u", Index: 0, Role: ir.Test}
)

func fd(f *ir.Field, comp int, d ...uint8) *ir.FieldD {
	x := &ir.FieldD{Field: f, Comp: comp}
	copy(x.D[:], d)
	return x
}

// axis returns the derivative multi-index of ∂/∂x_k.
func axis(k int) []uint8 {
	d := make([]uint8, 3)
	d[k] = 1
	return d
}

func facets(m *mesh.Mesh, side string) []dof.Facet {
	var out []dof.Facet
	for _, f := range m.Boundaries[side] {
		out = append(out, dof.Facet{Cell: int(f.Cell), Local: int(f.Facet)})
	}
	return out
}

// mustElement reads an element name that the test knows to be valid.
func mustElement(name string) ir.Element {
	e, err := ir.ParseElement(name)
	if err != nil {
		panic(err)
	}
	return e
}
