package ir

import (
	"fmt"
	"math/big"

	"github.com/formwright/formwright/lang/source"
)

// Children returns the direct sub-expressions of e, in order.
func Children(e Expr) []Expr {
	switch e := e.(type) {
	case *Add:
		return e.Terms
	case *Mul:
		return e.Factors
	case *Pow:
		return []Expr{e.Base, e.Exp}
	case *Call:
		return e.Args
	case *Vec:
		return e.Elems
	case *Comp:
		return []Expr{e.X}
	case *Dot:
		return []Expr{e.A, e.B}
	case *DDot:
		return []Expr{e.A, e.B}
	case *Outer:
		return []Expr{e.A, e.B}
	case *Grad:
		return []Expr{e.X}
	case *Div:
		return []Expr{e.X}
	case *Lap:
		return []Expr{e.X}
	case *Partial:
		return []Expr{e.X}
	case *TimeDeriv:
		return []Expr{e.X}
	case *Named:
		return []Expr{e.X}
	}
	return nil
}

// WithChildren returns a copy of e with its sub-expressions replaced by
// kids (same count and order as Children(e)). The position is kept.
func WithChildren(e Expr, kids []Expr) Expr {
	switch e := e.(type) {
	case *Add:
		return &Add{e.At, kids}
	case *Mul:
		return &Mul{e.At, kids}
	case *Pow:
		return &Pow{e.At, kids[0], kids[1]}
	case *Call:
		return &Call{e.At, e.Fn, kids}
	case *Vec:
		return &Vec{e.At, kids}
	case *Comp:
		return &Comp{e.At, kids[0], e.I}
	case *Dot:
		return &Dot{e.At, kids[0], kids[1]}
	case *DDot:
		return &DDot{e.At, kids[0], kids[1]}
	case *Outer:
		return &Outer{e.At, kids[0], kids[1]}
	case *Grad:
		return &Grad{e.At, kids[0]}
	case *Div:
		return &Div{e.At, kids[0]}
	case *Lap:
		return &Lap{e.At, kids[0]}
	case *Partial:
		return &Partial{e.At, kids[0], e.Axis}
	case *TimeDeriv:
		return &TimeDeriv{e.At, kids[0]}
	case *Named:
		return &Named{e.At, e.Sym, e.I, e.J, kids[0]}
	}
	if len(kids) != 0 {
		panic(fmt.Sprintf("ir: WithChildren on leaf %T", e))
	}
	return e
}

// Inspect calls f for e and, while f returns true, for its descendants in
// depth-first order.
func Inspect(e Expr, f func(Expr) bool) {
	if !f(e) {
		return
	}
	for _, k := range Children(e) {
		Inspect(k, f)
	}
}

// InspectOnce is Inspect that calls f once per distinct node: a
// subexpression shared by several parents is visited at its first
// occurrence only, so the cost is linear in the number of distinct nodes.
// Use it for questions about which nodes occur, not how often.
func InspectOnce(e Expr, f func(Expr) bool) {
	seen := map[Expr]bool{}
	var walk func(Expr)
	walk = func(n Expr) {
		if seen[n] {
			return
		}
		seen[n] = true
		if !f(n) {
			return
		}
		for _, k := range Children(n) {
			walk(k)
		}
	}
	walk(e)
}

// MapUp rebuilds e bottom-up: children first, then f on the rebuilt node.
// f must be a pure function of its argument's structure: a subexpression
// shared by several parents (a DAG) is rebuilt once and the result shared,
// so the cost is linear in the number of distinct nodes, not in the size of
// the tree they unfold to.
func MapUp(e Expr, f func(Expr) Expr) Expr {
	return mapUp(e, f, map[Expr]Expr{})
}

func mapUp(e Expr, f func(Expr) Expr, done map[Expr]Expr) Expr {
	if r, ok := done[e]; ok {
		return r
	}
	orig := e
	kids := Children(e)
	if len(kids) > 0 {
		nk := make([]Expr, len(kids))
		changed := false
		for i, k := range kids {
			nk[i] = mapUp(k, f, done)
			if nk[i] != k {
				changed = true
			}
		}
		if changed {
			e = WithChildren(e, nk)
		}
	}
	r := f(e)
	done[orig] = r
	return r
}

// Mapper is MapUp with one memo across calls: expressions that share
// subexpressions (the coefficients of one lowered form, which share their
// Named nodes) are rebuilt so that the results share them too.
func Mapper(f func(Expr) Expr) func(Expr) Expr {
	done := map[Expr]Expr{}
	return func(e Expr) Expr { return mapUp(e, f, done) }
}

// Expand returns e with every Named node replaced by its definition.
func Expand(e Expr) Expr {
	return MapUp(e, func(x Expr) Expr {
		if n, ok := x.(*Named); ok {
			return n.X
		}
		return x
	})
}

// Contains reports whether any node of e satisfies pred. A shared
// subexpression is looked at once.
func Contains(e Expr, pred func(Expr) bool) bool {
	seen := map[Expr]bool{}
	var walk func(Expr) bool
	walk = func(n Expr) bool {
		if seen[n] {
			return false
		}
		seen[n] = true
		if pred(n) {
			return true
		}
		for _, k := range Children(n) {
			if walk(k) {
				return true
			}
		}
		return false
	}
	return walk(e)
}

// HasRole reports whether e contains a field in the given role.
func HasRole(e Expr, r Role) bool {
	return Contains(e, func(n Expr) bool {
		switch n := n.(type) {
		case *Field:
			return n.Role == r
		case *FieldD:
			return n.Field.Role == r
		}
		return false
	})
}

// HasField reports whether e contains any field (in any role).
func HasField(e Expr) bool {
	return Contains(e, func(n Expr) bool {
		switch n.(type) {
		case *Field, *FieldD:
			return true
		}
		return false
	})
}

// Constructors. Each takes the position the new node stands for.

// Int returns the integer constant n.
func Int(p source.Pos, n int64) *Num { return &Num{At{p}, big.NewRat(n, 1)} }

// Rat returns the rational constant a/b.
func Rat(p source.Pos, a, b int64) *Num { return &Num{At{p}, big.NewRat(a, b)} }

// NewNum wraps a big.Rat (which it does not copy).
func NewNum(p source.Pos, r *big.Rat) *Num { return &Num{At{p}, r} }

// Sum builds a sum node without simplifying.
func Sum(p source.Pos, terms ...Expr) Expr {
	if len(terms) == 1 {
		return terms[0]
	}
	return &Add{At{p}, terms}
}

// Prod builds a product node without simplifying.
func Prod(p source.Pos, factors ...Expr) Expr {
	if len(factors) == 1 {
		return factors[0]
	}
	return &Mul{At{p}, factors}
}

// Neg builds −e without simplifying.
func Neg(p source.Pos, e Expr) Expr { return &Mul{At{p}, []Expr{Int(p, -1), e}} }

// Sub builds a − b without simplifying.
func Sub(p source.Pos, a, b Expr) Expr { return &Add{At{p}, []Expr{a, Neg(p, b)}} }

// Zero returns the zero of the given rank in dimension dim.
func Zero(p source.Pos, rank, dim int) Expr {
	if rank == 0 {
		return Int(p, 0)
	}
	el := make([]Expr, dim)
	for i := range el {
		el[i] = Zero(p, rank-1, dim)
	}
	return &Vec{At{p}, el}
}

// IsZero reports whether e is literally zero: the number 0 or a Vec of zeros.
func IsZero(e Expr) bool {
	switch e := e.(type) {
	case *Num:
		return e.Val.Sign() == 0
	case *Vec:
		for _, x := range e.Elems {
			if !IsZero(x) {
				return false
			}
		}
		return true
	}
	return false
}

// IsNum reports whether e is the rational constant v.
func IsNum(e Expr, v int64) bool {
	n, ok := e.(*Num)
	return ok && n.Val.IsInt() && n.Val.Num().IsInt64() && n.Val.Num().Int64() == v
}
