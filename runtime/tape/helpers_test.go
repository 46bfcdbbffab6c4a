package tape

import (
	"math/big"

	"github.com/formwright/formwright/compiler/ir"
)

// Small builders for hand-written lowered expressions.

func num(a, b int64) ir.Expr                { return &ir.Num{Val: big.NewRat(a, b)} }
func coord(k int) ir.Expr                   { return &ir.Coord{Axis: k} }
func mul(f ...ir.Expr) ir.Expr              { return &ir.Mul{Factors: f} }
func add(t ...ir.Expr) ir.Expr              { return &ir.Add{Terms: t} }
func pow(b, e ir.Expr) ir.Expr              { return &ir.Pow{Base: b, Exp: e} }
func call(fn ir.Func, a ...ir.Expr) ir.Expr { return &ir.Call{Fn: fn, Args: a} }
