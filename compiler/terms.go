package compiler

import (
	"math/big"

	"github.com/formwright/formwright/compiler/ir"
)

// additiveTerms writes e as a list of terms whose sum is e, distributing
// numbers, products and the linear differential operators (grad, div, lap,
// partial, dt, components, contractions) over sums, but applying no product
// rule: div(κ grad u − a u) gives div(κ grad u) and −div(a u), each still in
// the form the model wrote. The advective/diffusive/reactive split and the
// linearity check work on these terms.
func additiveTerms(e ir.Expr) []ir.Expr {
	var out []ir.Expr
	for _, t := range termsOf(e) {
		out = append(out, scale(t.e.Pos(), t.c, t.e))
	}
	return out
}

type cterm struct {
	c *big.Rat
	e ir.Expr
}

func termsOf(e ir.Expr) []cterm {
	one := func(x ir.Expr) []cterm { return []cterm{{big.NewRat(1, 1), x}} }
	wrap := func(inner []cterm, mk func(ir.Expr) ir.Expr) []cterm {
		out := make([]cterm, len(inner))
		for i, t := range inner {
			out[i] = cterm{t.c, mk(t.e)}
		}
		return out
	}
	switch e := e.(type) {
	case *ir.Add:
		var out []cterm
		for _, t := range e.Terms {
			out = append(out, termsOf(t)...)
		}
		return out
	case *ir.Num:
		return []cterm{{new(big.Rat).Set(e.Val), ir.Int(e.P, 1)}}
	case *ir.Mul:
		acc := []cterm{{big.NewRat(1, 1), nil}}
		for _, f := range e.Factors {
			var parts []cterm
			if n, ok := f.(*ir.Num); ok {
				parts = []cterm{{new(big.Rat).Set(n.Val), nil}}
			} else if ir.HasField(f) {
				parts = termsOf(f)
			} else {
				parts = one(f)
			}
			var next []cterm
			for _, a := range acc {
				for _, b := range parts {
					c := new(big.Rat).Mul(a.c, b.c)
					var x ir.Expr
					switch {
					case a.e == nil:
						x = b.e
					case b.e == nil:
						x = a.e
					default:
						x = mulPair(e, a.e, b.e)
					}
					next = append(next, cterm{c, x})
				}
			}
			acc = next
		}
		for i := range acc {
			if acc[i].e == nil {
				acc[i].e = ir.Int(e.P, 1)
			}
		}
		return acc
	case *ir.Grad:
		return wrap(termsOf(e.X), func(x ir.Expr) ir.Expr { return &ir.Grad{At: e.At, X: x} })
	case *ir.Div:
		return wrap(termsOf(e.X), func(x ir.Expr) ir.Expr { return &ir.Div{At: e.At, X: x} })
	case *ir.Lap:
		return wrap(termsOf(e.X), func(x ir.Expr) ir.Expr { return &ir.Lap{At: e.At, X: x} })
	case *ir.Partial:
		return wrap(termsOf(e.X), func(x ir.Expr) ir.Expr { return &ir.Partial{At: e.At, X: x, Axis: e.Axis} })
	case *ir.TimeDeriv:
		return wrap(termsOf(e.X), func(x ir.Expr) ir.Expr { return &ir.TimeDeriv{At: e.At, X: x} })
	case *ir.Comp:
		return wrap(termsOf(e.X), func(x ir.Expr) ir.Expr { return &ir.Comp{At: e.At, X: x, I: e.I} })
	case *ir.Dot, *ir.DDot, *ir.Outer:
		kids := ir.Children(e)
		var out []cterm
		for _, a := range termsOf(kids[0]) {
			for _, b := range termsOf(kids[1]) {
				out = append(out, cterm{new(big.Rat).Mul(a.c, b.c), ir.WithChildren(e, []ir.Expr{a.e, b.e})})
			}
		}
		return out
	}
	return one(e)
}

// mulPair multiplies two term parts, keeping a tensor factor last.
func mulPair(at *ir.Mul, a, b ir.Expr) ir.Expr {
	var f []ir.Expr
	for _, x := range []ir.Expr{a, b} {
		if m, ok := x.(*ir.Mul); ok {
			f = append(f, m.Factors...)
		} else if !ir.IsNum(x, 1) {
			f = append(f, x)
		}
	}
	// Keep the one non-scalar factor last.
	for i, x := range f {
		if x.Rank() > 0 && i != len(f)-1 {
			f = append(append(f[:i:i], f[i+1:]...), x)
			break
		}
	}
	if len(f) == 1 {
		return f[0]
	}
	return &ir.Mul{At: at.At, Factors: f}
}

// trialDegree is the polynomial degree of t in the trial fields; bad is the
// node where a trial field sits inside a nonlinear function. Each node of
// t is examined once, so shared subexpressions cost linear time.
func trialDegree(t ir.Expr) (deg int, bad ir.Expr) {
	type result struct {
		deg int
		bad ir.Expr
	}
	memo := map[ir.Expr]result{}
	var walk func(t ir.Expr) (int, ir.Expr)
	walk = func(t ir.Expr) (int, ir.Expr) {
		if r, ok := memo[t]; ok {
			return r.deg, r.bad
		}
		d, b := trialDegreeNode(t, walk)
		memo[t] = result{d, b}
		return d, b
	}
	return walk(t)
}

func trialDegreeNode(t ir.Expr, trialDegree func(ir.Expr) (int, ir.Expr)) (deg int, bad ir.Expr) {
	switch t := t.(type) {
	case *ir.Field:
		if t.Role == ir.Trial {
			return 1, nil
		}
		return 0, nil
	case *ir.FieldD:
		if t.Field.Role == ir.Trial {
			return 1, nil
		}
		return 0, nil
	case *ir.Mul, *ir.Dot, *ir.DDot, *ir.Outer:
		sum := 0
		for _, k := range ir.Children(t) {
			d, b := trialDegree(k)
			if b != nil {
				return 0, b
			}
			sum += d
		}
		return sum, nil
	case *ir.Pow:
		db, b := trialDegree(t.Base)
		if b != nil {
			return 0, b
		}
		de, b := trialDegree(t.Exp)
		if b != nil {
			return 0, b
		}
		if de > 0 {
			return 0, t
		}
		if db == 0 {
			return 0, nil
		}
		if n, ok := t.Exp.(*ir.Num); ok && n.Val.IsInt() && n.Val.Sign() > 0 && n.Val.Num().IsInt64() {
			return db * int(n.Val.Num().Int64()), nil
		}
		return 0, t
	case *ir.Call:
		for _, a := range t.Args {
			if d, b := trialDegree(a); b != nil {
				return 0, b
			} else if d > 0 {
				return 0, t
			}
		}
		return 0, nil
	}
	max := 0
	for _, k := range ir.Children(t) {
		d, b := trialDegree(k)
		if b != nil {
			return 0, b
		}
		if d > max {
			max = d
		}
	}
	return max, nil
}

// derivOrder is the order of the highest spatial derivative applied to a
// trial field in t, and whether a time derivative is.
func derivOrder(t ir.Expr) (order int, timeDeriv bool) {
	// below(e) is the highest number of derivatives between e and a
	// trial field under it (−1: none), computed once per node.
	memo := map[ir.Expr]int{}
	var below func(e ir.Expr) int
	below = func(e ir.Expr) int {
		if v, ok := memo[e]; ok {
			return v
		}
		v := -1
		switch e := e.(type) {
		case *ir.Field:
			if e.Role == ir.Trial {
				v = 0
			}
		case *ir.Grad, *ir.Div, *ir.Partial:
			if d := below(ir.Children(e)[0]); d >= 0 {
				v = d + 1
			}
		case *ir.Lap:
			if d := below(e.X); d >= 0 {
				v = d + 2
			}
		case *ir.TimeDeriv:
			v = below(e.X)
			if v >= 0 {
				timeDeriv = true
			}
		default:
			for _, k := range ir.Children(e) {
				v = max(v, below(k))
			}
		}
		memo[e] = v
		return v
	}
	return max(0, below(t)), timeDeriv
}

// trialFactor splits a product that is linear in the unknown into the one
// factor holding the unknown and the other factors (nil, all factors when
// none holds it).
func trialFactor(m *ir.Mul) (field ir.Expr, rest []ir.Expr) {
	for _, f := range m.Factors {
		if field == nil && ir.HasRole(f, ir.Trial) {
			field = f
		} else {
			rest = append(rest, f)
		}
	}
	return field, rest
}
