package compiler

import (
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
)

// direction says how the fields and symbols of an expression move in a
// Gateaux derivative d/dε e(u + εw)|ε=0: Field gives the direction w of a
// field occurrence, Sym the derivative of a symbol whose value depends on
// the fields (a τ, a fine-scale quantity). A nil result means the
// occurrence is held fixed (its derivative is zero).
type direction struct {
	Field func(f *ir.Field) ir.Expr
	Sym   func(s *ir.Sym) ir.Expr
	dim   int
}

// gateaux returns the Gateaux (directional) derivative
//
//	δe = d/dε e(u + εw)|ε=0
//
// of e in direction dir, computed on the typed IR by the rules of
// differentiation: linearity over sums, the product rule over products
// and contractions, the chain rule over powers and elementary functions,
// and commutation with the linear differential operators (∇, ∇·, Δ, ∂ₖ,
// ∂ₜ, components), which do not act on ε. The result is not simplified.
//
// The derivative of the Euclidean norm, a·δa/|a|, is written
// sign(|a|) (a·δa)/(1 + |a| − sign(|a|)): the same away from a = 0, and 0
// at a = 0, where the norm has no derivative (0 is a subgradient there),
// instead of the 0/0 of the plain rule.
func gateaux(e ir.Expr, dir direction) ir.Expr {
	p := e.Pos()
	at := ir.At{P: p}
	zero := func() ir.Expr { return ir.Zero(p, e.Rank(), dir.dim) }
	d := func(x ir.Expr) ir.Expr { return gateaux(x, dir) }
	switch e := e.(type) {
	case *ir.Num, *ir.Const, *ir.Coord, *ir.Time, *ir.CellQ, *ir.FieldD:
		return zero()
	case *ir.Field:
		if dir.Field != nil {
			if w := dir.Field(e); w != nil {
				return w
			}
		}
		return zero()
	case *ir.Sym:
		if dir.Sym != nil {
			if w := dir.Sym(e); w != nil {
				return w
			}
		}
		return zero()
	case *ir.Named:
		return d(e.X)
	case *ir.Add:
		t := make([]ir.Expr, len(e.Terms))
		for i, x := range e.Terms {
			t[i] = d(x)
		}
		return &ir.Add{At: at, Terms: t}
	case *ir.Call:
		if e.Fn == ir.Norm {
			return normDerivative(p, e, d(e.Args[0]))
		}
	case *ir.Comp:
		return &ir.Comp{At: at, X: d(e.X), I: e.I}
	case *ir.Grad:
		return &ir.Grad{At: at, X: d(e.X)}
	case *ir.Div:
		return &ir.Div{At: at, X: d(e.X)}
	case *ir.Lap:
		return &ir.Lap{At: at, X: d(e.X)}
	case *ir.Partial:
		return &ir.Partial{At: at, X: d(e.X), Axis: e.Axis}
	case *ir.TimeDeriv:
		return &ir.TimeDeriv{At: at, X: d(e.X)}
	case *ir.Pow:
		if !dependsOnDir(e.Exp, dir) {
			// δ(b^k) = k b^(k−1) δb for an exponent the direction does not move.
			km1 := ir.Sum(p, e.Exp, ir.Int(p, -1))
			return ir.Prod(p, e.Exp, &ir.Pow{At: at, Base: e.Base, Exp: km1}, d(e.Base))
		}
	}
	if r := leibniz(p, e, d); r != nil {
		return r
	}
	panic("compiler: gateaux: no rule for " + nodeName(e))
}

// normDerivative is δ|a| = sign(|a|) (a·δa)/(1 + |a| − sign(|a|)) for
// norm = |a| (see gateaux).
func normDerivative(p source.Pos, norm *ir.Call, da ir.Expr) ir.Expr {
	at := ir.At{P: p}
	sgn := &ir.Call{At: at, Fn: ir.Sign, Args: []ir.Expr{norm}}
	den := ir.Sum(p, ir.Int(p, 1), norm, ir.Neg(p, sgn))
	return ir.Prod(p, sgn, &ir.Dot{At: at, A: norm.Args[0], B: da}, &ir.Pow{At: at, Base: den, Exp: ir.Int(p, -1)})
}

// dependsOnDir reports whether e holds a field or symbol that dir moves.
func dependsOnDir(e ir.Expr, dir direction) bool {
	return ir.Contains(e, func(x ir.Expr) bool {
		switch x := x.(type) {
		case *ir.Field:
			return dir.Field != nil && dir.Field(x) != nil
		case *ir.Sym:
			return dir.Sym != nil && dir.Sym(x) != nil
		}
		return false
	})
}

// fieldDirection moves every field of role from to the same field with
// role to (held fields: none of role from).
func fieldDirection(from, to ir.Role) func(*ir.Field) ir.Expr {
	return func(f *ir.Field) ir.Expr {
		if f.Role != from {
			return nil
		}
		g := *f
		g.Role = to
		return &g
	}
}

// swapRoles exchanges two field roles in e. The linear machinery
// (Adjoint, SplitOperator, adjointTerm) acts on the Trial field; swapping
// Trial and Increment lets it act on the increment δu of a linearised
// operator while the state u is carried along as a coefficient.
func swapRoles(e ir.Expr, a, b ir.Role) ir.Expr {
	return ir.MapUp(e, func(n ir.Expr) ir.Expr {
		f, ok := n.(*ir.Field)
		if !ok || (f.Role != a && f.Role != b) {
			return n
		}
		g := *f
		if f.Role == a {
			g.Role = b
		} else {
			g.Role = a
		}
		return &g
	})
}
