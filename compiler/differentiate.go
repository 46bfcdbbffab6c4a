package compiler

import (
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
)

// This file holds the differentiation rules of Simplify: the sum rule, the
// product rule (including its tensor forms ∇(sT) = s∇T + T⊗∇s and
// ∇·(sT) = s∇·T + T·∇s), the chain rule for elementary functions, and
// Δ(fg) = fΔg + gΔf + 2∇f·∇g. Derivatives stop at fields (the unknowns and
// test functions) and at coefficients that vary, which print as ∇κ and so
// on; everything that does not depend on the variable differentiates to zero.

// spaceDeps is the set of all coordinate dependencies.
const spaceDeps = ir.DepX | ir.DepY | ir.DepZ

// dependsOn reports whether e may vary with any variable in mask. Fields
// vary with everything; cell quantities and τ are constant in a cell.
func dependsOn(e ir.Expr, mask ir.Deps) bool {
	return ir.Contains(e, func(n ir.Expr) bool {
		switch n := n.(type) {
		case *ir.Coord:
			return mask&ir.DepAxis(n.Axis) != 0
		case *ir.Time:
			return mask&ir.DepT != 0
		case *ir.Sym:
			return n.Deps&mask != 0
		case *ir.Field:
			// Test functions do not depend on time (semi-discretisation in
			// space; quasi-static fine scales).
			return n.Role != ir.Test || mask&spaceDeps != 0
		case *ir.FieldD:
			return n.Field.Role != ir.Test || mask&spaceDeps != 0
		}
		return false
	})
}

// productExcept returns the product of all factors but the ones at skip.
func productExcept(p source.Pos, f []ir.Expr, skip ...int) []ir.Expr {
	var out []ir.Expr
outer:
	for i, x := range f {
		for _, k := range skip {
			if i == k {
				continue outer
			}
		}
		out = append(out, x)
	}
	return out
}

func mulOf(p source.Pos, f ...ir.Expr) ir.Expr {
	if len(f) == 0 {
		return ir.Int(p, 1)
	}
	return ir.Prod(p, f...)
}

// chain differentiates a scalar Pow or Call with the operator d (one of
// grad, partial, time derivative), returning nil when no rule applies.
func chain(p source.Pos, e ir.Expr, d func(ir.Expr) ir.Expr) ir.Expr {
	switch e := e.(type) {
	case *ir.Pow:
		if !dependsOn(e.Exp, spaceDeps|ir.DepT) {
			// d(b^k) = k b^(k−1) db
			km1 := ir.Sum(p, e.Exp, ir.Int(p, -1))
			return ir.Prod(p, e.Exp, &ir.Pow{At: e.At, Base: e.Base, Exp: km1}, d(e.Base))
		}
		// d(b^k) = b^k (log b dk + k/b db)
		logb := &ir.Call{At: e.At, Fn: ir.Log, Args: []ir.Expr{e.Base}}
		inv := &ir.Pow{At: e.At, Base: e.Base, Exp: ir.Int(p, -1)}
		return ir.Prod(p, e, ir.Sum(p, ir.Prod(p, logb, d(e.Exp)), ir.Prod(p, e.Exp, inv, d(e.Base))))
	case *ir.Call:
		switch e.Fn {
		case ir.Min, ir.Max:
			// min(a,b) = (a + b − |a − b|)/2, max(a,b) = (a + b + |a − b|)/2
			a, b := e.Args[0], e.Args[1]
			sgn := &ir.Call{At: e.At, Fn: ir.Sign, Args: []ir.Expr{ir.Sub(p, a, b)}}
			half := ir.Rat(p, 1, 2)
			s := ir.Int(p, -1)
			if e.Fn == ir.Max {
				s = ir.Int(p, 1)
			}
			return ir.Sum(p, ir.Prod(p, half, ir.Sum(p, d(a), d(b))), ir.Prod(p, half, s, sgn, ir.Sub(p, d(a), d(b))))
		case ir.Norm:
			// d|a| = a·da / |a|
			a := e.Args[0]
			return ir.Prod(p, &ir.Pow{At: e.At, Base: e, Exp: ir.Int(p, -1)}, &ir.Dot{At: e.At, A: a, B: d(a)})
		}
		if f := e.Fn.Derivative(p, e.Args[0]); f != nil {
			return ir.Prod(p, f, d(e.Args[0]))
		}
	}
	return nil
}

// leibniz applies the rules shared by every derivative d that keeps the
// rank (a partial derivative in space or time): linearity over sums and
// literal vectors, the product rule over products and contractions, and
// the chain rule. It returns nil when none applies.
func leibniz(p source.Pos, x ir.Expr, d func(ir.Expr) ir.Expr) ir.Expr {
	at := ir.At{P: p}
	switch x := x.(type) {
	case *ir.Add:
		t := make([]ir.Expr, len(x.Terms))
		for i, u := range x.Terms {
			t[i] = d(u)
		}
		return &ir.Add{At: at, Terms: t}
	case *ir.Mul:
		var t []ir.Expr
		for i, f := range x.Factors {
			rest := productExcept(p, x.Factors, i)
			if f.Rank() > 0 {
				t = append(t, ir.Prod(p, append(rest, d(f))...))
			} else {
				t = append(t, ir.Prod(p, append([]ir.Expr{d(f)}, rest...)...))
			}
		}
		return ir.Sum(p, t...)
	case *ir.Pow, *ir.Call:
		return chain(p, x, d)
	case *ir.Vec:
		el := make([]ir.Expr, len(x.Elems))
		for i, u := range x.Elems {
			el[i] = d(u)
		}
		return &ir.Vec{At: at, Elems: el}
	case *ir.Dot:
		return ir.Sum(p, &ir.Dot{At: x.At, A: d(x.A), B: x.B}, &ir.Dot{At: x.At, A: x.A, B: d(x.B)})
	case *ir.DDot:
		return ir.Sum(p, &ir.DDot{At: x.At, A: d(x.A), B: x.B}, &ir.DDot{At: x.At, A: x.A, B: d(x.B)})
	case *ir.Outer:
		return ir.Sum(p, &ir.Outer{At: x.At, A: d(x.A), B: x.B}, &ir.Outer{At: x.At, A: x.A, B: d(x.B)})
	}
	return nil
}

func (s simplifier) grad(e *ir.Grad) ir.Expr {
	p := e.P
	x := e.X
	if !dependsOn(x, spaceDeps) {
		return ir.Zero(p, x.Rank()+1, s.dim)
	}
	g := func(y ir.Expr) ir.Expr { return &ir.Grad{At: e.At, X: y} }
	switch x := x.(type) {
	case *ir.Coord:
		el := make([]ir.Expr, s.dim)
		for i := range el {
			el[i] = ir.Int(p, 0)
		}
		el[x.Axis] = ir.Int(p, 1)
		return &ir.Vec{At: e.At, Elems: el}
	case *ir.Add:
		t := make([]ir.Expr, len(x.Terms))
		for i, u := range x.Terms {
			t[i] = g(u)
		}
		return &ir.Add{At: e.At, Terms: t}
	case *ir.Mul:
		n := len(x.Factors)
		last := x.Factors[n-1]
		switch last.Rank() {
		case 0:
			var t []ir.Expr
			for i, f := range x.Factors {
				t = append(t, ir.Prod(p, append(productExcept(p, x.Factors, i), g(f))...))
			}
			return ir.Sum(p, t...)
		case 1:
			sc := x.Factors[:n-1]
			t := []ir.Expr{ir.Prod(p, append(append([]ir.Expr(nil), sc...), g(last))...)}
			for i, f := range sc {
				rest := productExcept(p, sc, i)
				t = append(t, ir.Prod(p, append(rest, &ir.Outer{At: e.At, A: last, B: g(f)})...))
			}
			return ir.Sum(p, t...)
		}
	case *ir.Pow, *ir.Call:
		if r := chain(p, x, g); r != nil {
			return r
		}
	case *ir.Vec:
		if x.Rank() == 1 {
			el := make([]ir.Expr, len(x.Elems))
			for i, u := range x.Elems {
				el[i] = g(u)
			}
			return &ir.Vec{At: e.At, Elems: el}
		}
	}
	return e
}

func (s simplifier) partial(p source.Pos, x ir.Expr, axis int, orig ir.Expr) ir.Expr {
	if !dependsOn(x, ir.DepAxis(axis)) {
		return ir.Zero(p, x.Rank(), s.dim)
	}
	at := ir.At{P: p}
	d := func(y ir.Expr) ir.Expr { return &ir.Partial{At: at, X: y, Axis: axis} }
	switch x := x.(type) {
	case *ir.Coord:
		return ir.Int(p, 1) // x.Axis == axis, or dependsOn would have said no
	case *ir.Add, *ir.Mul, *ir.Pow, *ir.Call, *ir.Vec, *ir.Dot, *ir.DDot, *ir.Outer:
		if r := leibniz(p, x, d); r != nil {
			return r
		}
	case *ir.FieldD:
		d := *x
		d.D[axis]++
		return &d
	case *ir.Named:
		return d(x.X)
	case *ir.Partial:
		if axis < x.Axis {
			// Mixed derivatives commute; keep the smaller axis inside.
			return &ir.Partial{At: x.At, X: &ir.Partial{At: at, X: x.X, Axis: axis}, Axis: x.Axis}
		}
	}
	return orig
}

func (s simplifier) div(e *ir.Div) ir.Expr {
	p := e.P
	x := e.X
	if !dependsOn(x, spaceDeps) {
		return ir.Zero(p, x.Rank()-1, s.dim)
	}
	dv := func(y ir.Expr) ir.Expr { return &ir.Div{At: e.At, X: y} }
	switch x := x.(type) {
	case *ir.Add:
		t := make([]ir.Expr, len(x.Terms))
		for i, u := range x.Terms {
			t[i] = dv(u)
		}
		return &ir.Add{At: e.At, Terms: t}
	case *ir.Mul:
		n := len(x.Factors)
		last := x.Factors[n-1]
		sc := x.Factors[:n-1]
		t := []ir.Expr{ir.Prod(p, append(append([]ir.Expr(nil), sc...), dv(last))...)}
		for i, f := range sc {
			rest := productExcept(p, sc, i)
			t = append(t, ir.Prod(p, append(rest, &ir.Dot{At: e.At, A: last, B: &ir.Grad{At: e.At, X: f}})...))
		}
		return ir.Sum(p, t...)
	case *ir.Grad:
		return &ir.Lap{At: e.At, X: x.X}
	case *ir.Vec:
		if x.Rank() == 1 {
			t := make([]ir.Expr, len(x.Elems))
			for i, u := range x.Elems {
				t[i] = &ir.Partial{At: e.At, X: u, Axis: i}
			}
			return &ir.Add{At: e.At, Terms: t}
		}
		el := make([]ir.Expr, len(x.Elems))
		for i, row := range x.Elems {
			el[i] = dv(row)
		}
		return &ir.Vec{At: e.At, Elems: el}
	case *ir.Outer:
		// ∇·(a⊗b) = (∇a)b + a ∇·b
		return ir.Sum(p, &ir.Dot{At: e.At, A: &ir.Grad{At: e.At, X: x.A}, B: x.B}, ir.Prod(p, dv(x.B), x.A))
	}
	return e
}

func (s simplifier) lap(e *ir.Lap) ir.Expr {
	p := e.P
	x := e.X
	if !dependsOn(x, spaceDeps) {
		return ir.Zero(p, x.Rank(), s.dim)
	}
	l := func(y ir.Expr) ir.Expr { return &ir.Lap{At: e.At, X: y} }
	g := func(y ir.Expr) ir.Expr { return &ir.Grad{At: e.At, X: y} }
	switch x := x.(type) {
	case *ir.Add:
		t := make([]ir.Expr, len(x.Terms))
		for i, u := range x.Terms {
			t[i] = l(u)
		}
		return &ir.Add{At: e.At, Terms: t}
	case *ir.Mul:
		n := len(x.Factors)
		last := x.Factors[n-1]
		if last.Rank() == 0 {
			var t []ir.Expr
			for i, f := range x.Factors {
				t = append(t, ir.Prod(p, append(productExcept(p, x.Factors, i), l(f))...))
			}
			for i := 0; i < n; i++ {
				for j := i + 1; j < n; j++ {
					rest := productExcept(p, x.Factors, i, j)
					dot := &ir.Dot{At: e.At, A: g(x.Factors[i]), B: g(x.Factors[j])}
					t = append(t, ir.Prod(p, append([]ir.Expr{ir.Int(p, 2)}, append(rest, dot)...)...))
				}
			}
			return ir.Sum(p, t...)
		}
		// Δ(sT) = sΔT + TΔs + 2(∇T)∇s
		sc := mulOf(p, x.Factors[:n-1]...)
		return ir.Sum(p,
			ir.Prod(p, sc, l(last)),
			ir.Prod(p, l(sc), last),
			ir.Prod(p, ir.Int(p, 2), &ir.Dot{At: e.At, A: g(last), B: g(sc)}))
	case *ir.Pow, *ir.Call, *ir.Coord:
		return &ir.Div{At: e.At, X: g(x)}
	case *ir.Vec:
		el := make([]ir.Expr, len(x.Elems))
		for i, u := range x.Elems {
			el[i] = l(u)
		}
		return &ir.Vec{At: e.At, Elems: el}
	}
	return e
}

func (s simplifier) timeDeriv(e *ir.TimeDeriv) ir.Expr {
	p := e.P
	x := e.X
	if !dependsOn(x, ir.DepT) {
		return ir.Zero(p, x.Rank(), s.dim)
	}
	d := func(y ir.Expr) ir.Expr { return &ir.TimeDeriv{At: e.At, X: y} }
	switch x := x.(type) {
	case *ir.Time:
		return ir.Int(p, 1)
	case *ir.FieldD:
		n := *x
		n.DT++
		return &n
	case *ir.Named:
		return d(x.X)
	case *ir.Add, *ir.Mul, *ir.Pow, *ir.Call, *ir.Vec, *ir.Dot, *ir.DDot, *ir.Outer:
		if r := leibniz(p, x, d); r != nil {
			return r
		}
	case *ir.Grad:
		return &ir.Grad{At: x.At, X: d(x.X)}
	case *ir.Div:
		return &ir.Div{At: x.At, X: d(x.X)}
	case *ir.Lap:
		return &ir.Lap{At: x.At, X: d(x.X)}
	case *ir.Partial:
		return &ir.Partial{At: x.At, X: d(x.X), Axis: x.Axis}
	}
	return e
}
