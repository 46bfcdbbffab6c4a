package compiler

import (
	"math/big"
	"sort"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
)

// maxSimplifyRounds caps the fixed-point iteration of Simplify; each round
// is a full bottom-up rewrite that pushes each derivative one level down,
// so deep nests need several; real models settle in under ten.
const maxSimplifyRounds = 100

// Simplify brings e to canonical form in dimension dim: sums and products
// flattened, constants folded exactly, like terms collected, operands put in
// a fixed order, and derivatives pushed inwards by the sum, product and
// chain rules until they rest on fields or on coefficients that vary in
// space. It repeats bottom-up rewriting to a fixed point (capped).
//
// Simplify is a pure function: it never modifies e.
func Simplify(e ir.Expr, dim int) ir.Expr {
	s := simplifier{dim: dim, derivs: map[derivKey]ir.Expr{}, fields: map[ir.Expr]bool{}}
	e = s.fixedPoint(e)
	// At the root, a number times a sum is written as a sum: −(a + b)
	// becomes −a − b, so a simplified operator reads as a list of terms.
	if m, ok := e.(*ir.Mul); ok && len(m.Factors) == 2 {
		if _, ok := num(m.Factors[0]); ok {
			if _, ok := m.Factors[1].(*ir.Add); ok {
				e = s.fixedPoint(&ir.Add{At: m.At, Terms: []ir.Expr{e}})
			}
		}
	}
	return e
}

func (s simplifier) fixedPoint(e ir.Expr) ir.Expr {
	for i := 0; i < maxSimplifyRounds; i++ {
		n := ir.MapUp(e, s.node)
		if ir.Equal(n, e) {
			return n
		}
		e = n
	}
	return e
}

type simplifier struct {
	dim int
	// derivs remembers each derivative rule applied to a node, so that
	// two derivatives of one shared subexpression (the chain rule on
	// sin(f) + cos(f)) are taken once and their results shared: a graph
	// of shared subexpressions stays a graph instead of unfolding into a
	// tree exponentially larger.
	derivs map[derivKey]ir.Expr
	// fields memoises hasField per node.
	fields map[ir.Expr]bool
}

// hasField reports whether e holds a field, memoised per node so that
// asking it of every node of a graph costs linear time.
func (s simplifier) hasField(e ir.Expr) bool {
	if v, ok := s.fields[e]; ok {
		return v
	}
	v := false
	switch e := e.(type) {
	case *ir.Field, *ir.FieldD:
		v = true
	case *ir.Named:
		v = false // lowering names only field-free quantities
	default:
		for _, k := range ir.Children(e) {
			if s.hasField(k) {
				v = true
				break
			}
		}
	}
	s.fields[e] = v
	return v
}

// derivKey is a derivative node by what it differentiates: the operand
// node, the operator and its axis.
type derivKey struct {
	x    ir.Expr
	op   byte // 'g' grad, 'd' div, 'l' lap, 'p' partial, 't' time
	axis int
}

func (s simplifier) node(e ir.Expr) ir.Expr {
	var k derivKey
	switch e := e.(type) {
	case *ir.Grad:
		k = derivKey{e.X, 'g', 0}
	case *ir.Div:
		k = derivKey{e.X, 'd', 0}
	case *ir.Lap:
		k = derivKey{e.X, 'l', 0}
	case *ir.Partial:
		k = derivKey{e.X, 'p', e.Axis}
	case *ir.TimeDeriv:
		k = derivKey{e.X, 't', 0}
	default:
		return s.rewrite(e)
	}
	if r, ok := s.derivs[k]; ok {
		return r
	}
	r := s.rewrite(e)
	s.derivs[k] = r
	return r
}

func (s simplifier) rewrite(e ir.Expr) ir.Expr {
	switch e := e.(type) {
	case *ir.Add:
		return s.add(e)
	case *ir.Mul:
		return s.mul(e)
	case *ir.Pow:
		return s.pow(e)
	case *ir.Call:
		return s.call(e)
	case *ir.Comp:
		return s.comp(e)
	case *ir.Dot:
		return s.dot(e)
	case *ir.DDot:
		return s.ddot(e)
	case *ir.Outer:
		return s.outer(e)
	case *ir.Grad:
		return s.grad(e)
	case *ir.Div:
		return s.div(e)
	case *ir.Lap:
		return s.lap(e)
	case *ir.Partial:
		return s.partial(e.P, e.X, e.Axis, e)
	case *ir.TimeDeriv:
		return s.timeDeriv(e)
	}
	return e
}

func num(e ir.Expr) (*big.Rat, bool) {
	n, ok := e.(*ir.Num)
	if !ok {
		return nil, false
	}
	return n.Val, true
}

// splitCoef writes a term as rational coefficient × rest (rest nil for a
// pure number).
func splitCoef(e ir.Expr) (*big.Rat, ir.Expr) {
	switch e := e.(type) {
	case *ir.Num:
		return e.Val, nil
	case *ir.Mul:
		if c, ok := num(e.Factors[0]); ok {
			rest := e.Factors[1:]
			if len(rest) == 1 {
				return c, rest[0]
			}
			return c, &ir.Mul{At: e.At, Factors: rest}
		}
	}
	return big.NewRat(1, 1), e
}

func scale(p source.Pos, c *big.Rat, rest ir.Expr) ir.Expr {
	if rest == nil {
		return ir.NewNum(p, c)
	}
	if c.Cmp(big.NewRat(1, 1)) == 0 {
		return rest
	}
	if m, ok := rest.(*ir.Mul); ok {
		f := append([]ir.Expr{ir.NewNum(p, c)}, m.Factors...)
		return &ir.Mul{At: m.At, Factors: f}
	}
	return &ir.Mul{At: ir.At{P: p}, Factors: []ir.Expr{ir.NewNum(p, c), rest}}
}

func (s simplifier) add(e *ir.Add) ir.Expr {
	rank := e.Rank()
	// Flatten nested sums; a number times a sum, as a term, spreads into
	// this sum so that like terms can meet: a − (b − c) = a − b + c. The
	// rule applies only here, never inside products, so the canonical form
	// does not depend on how a product was associated.
	var flat []ir.Expr
	for _, t := range e.Terms {
		switch t := t.(type) {
		case *ir.Add:
			flat = append(flat, t.Terms...)
			continue
		case *ir.Mul:
			if len(t.Factors) == 2 {
				if c, ok := num(t.Factors[0]); ok {
					if a, ok := t.Factors[1].(*ir.Add); ok {
						flat = append(flat, distribute(t.P, c, a).(*ir.Add).Terms...)
						continue
					}
				}
			}
		}
		flat = append(flat, t)
	}
	// Several literal vectors in one sum add componentwise.
	var vecs []*ir.Vec
	var others []ir.Expr
	for _, t := range flat {
		if v, ok := t.(*ir.Vec); ok {
			vecs = append(vecs, v)
		} else {
			others = append(others, t)
		}
	}
	if len(vecs) > 1 {
		n := len(vecs[0].Elems)
		el := make([]ir.Expr, n)
		for i := range el {
			parts := make([]ir.Expr, len(vecs))
			for j, v := range vecs {
				parts[j] = v.Elems[i]
			}
			el[i] = ir.Sum(e.P, parts...)
		}
		others = append(others, &ir.Vec{At: vecs[0].At, Elems: el})
	} else if len(vecs) == 1 {
		if !ir.IsZero(vecs[0]) {
			others = append(others, vecs[0])
		}
	}
	type term struct {
		c     *big.Rat
		rest  ir.Expr
		p     source.Pos
		field bool // rest holds a field
	}
	var terms []term
	for _, t := range others {
		c, rest := splitCoef(t)
		terms = append(terms, term{new(big.Rat).Set(c), rest, t.Pos(), rest != nil && s.hasField(rest)})
	}
	// Terms holding fields come first (so an operator reads before its
	// source), then the rest; a pure number last.
	sort.SliceStable(terms, func(i, j int) bool {
		a, b := terms[i].rest, terms[j].rest
		switch {
		case a == nil:
			return false
		case b == nil:
			return true
		}
		if fa, fb := terms[i].field, terms[j].field; fa != fb {
			return fa
		}
		return ir.Compare(a, b) < 0
	})
	var out []ir.Expr
	for i := 0; i < len(terms); {
		j := i + 1
		c := new(big.Rat).Set(terms[i].c)
		for j < len(terms) && sameRest(terms[i].rest, terms[j].rest) {
			c.Add(c, terms[j].c)
			j++
		}
		if c.Sign() != 0 {
			out = append(out, scale(terms[i].p, c, terms[i].rest))
		}
		i = j
	}
	switch len(out) {
	case 0:
		return ir.Zero(e.P, rank, s.dim)
	case 1:
		return out[0]
	}
	return &ir.Add{At: e.At, Terms: out}
}

func sameRest(a, b ir.Expr) bool {
	if a == nil || b == nil {
		return a == nil && b == nil
	}
	return ir.Equal(a, b)
}

func (s simplifier) mul(e *ir.Mul) ir.Expr {
	rank := e.Rank()
	var flat []ir.Expr
	for _, f := range e.Factors {
		if m, ok := f.(*ir.Mul); ok {
			flat = append(flat, m.Factors...)
		} else {
			flat = append(flat, f)
		}
	}
	c := big.NewRat(1, 1)
	// A scalar factor as base^exp with a rational exponent; a factor
	// with a symbolic exponent is kept whole as its own base.
	type power struct {
		base ir.Expr
		exp  *big.Rat
	}
	var scalars []power
	var tensor ir.Expr
	for _, f := range flat {
		if v, ok := num(f); ok {
			c.Mul(c, v)
			continue
		}
		if f.Rank() > 0 {
			if tensor != nil {
				// Two tensor factors cannot form a product; the checker
				// rules this out, so keep the node as it is.
				return e
			}
			tensor = f
			continue
		}
		if p, ok := f.(*ir.Pow); ok {
			if k, ok := num(p.Exp); ok {
				scalars = append(scalars, power{p.Base, new(big.Rat).Set(k)})
				continue
			}
			scalars = append(scalars, power{f, big.NewRat(1, 1)})
			continue
		}
		scalars = append(scalars, power{f, big.NewRat(1, 1)})
	}
	if c.Sign() == 0 || (tensor != nil && ir.IsZero(tensor)) {
		return ir.Zero(e.P, rank, s.dim)
	}
	sort.SliceStable(scalars, func(i, j int) bool { return ir.Compare(scalars[i].base, scalars[j].base) < 0 })
	var factors []ir.Expr
	for i := 0; i < len(scalars); {
		j := i + 1
		k := new(big.Rat).Set(scalars[i].exp)
		for j < len(scalars) && ir.Equal(scalars[i].base, scalars[j].base) {
			k.Add(k, scalars[j].exp)
			j++
		}
		b := scalars[i].base
		switch {
		case k.Sign() == 0:
		case k.Cmp(big.NewRat(1, 1)) == 0:
			factors = append(factors, b)
		default:
			factors = append(factors, &ir.Pow{At: ir.At{P: b.Pos()}, Base: b, Exp: ir.NewNum(b.Pos(), k)})
		}
		i = j
	}
	if len(factors) == 0 && tensor == nil {
		return ir.NewNum(e.P, c)
	}
	// Scalars times a literal vector go inside it.
	if v, ok := tensor.(*ir.Vec); ok {
		el := make([]ir.Expr, len(v.Elems))
		for i, x := range v.Elems {
			f := append([]ir.Expr{ir.NewNum(e.P, c)}, factors...)
			el[i] = &ir.Mul{At: e.At, Factors: append(f, x)}
		}
		return &ir.Vec{At: v.At, Elems: el}
	}
	if tensor != nil {
		factors = append(factors, tensor)
	}
	if c.Cmp(big.NewRat(1, 1)) != 0 {
		factors = append([]ir.Expr{ir.NewNum(e.P, c)}, factors...)
	}
	if len(factors) == 1 {
		return factors[0]
	}
	return &ir.Mul{At: e.At, Factors: factors}
}

func distribute(p source.Pos, c *big.Rat, a *ir.Add) ir.Expr {
	t := make([]ir.Expr, len(a.Terms))
	for i, x := range a.Terms {
		t[i] = &ir.Mul{At: ir.At{P: x.Pos()}, Factors: []ir.Expr{ir.NewNum(p, c), x}}
	}
	return &ir.Add{At: a.At, Terms: t}
}

// maxExactPower bounds exact rational powers so that folding cannot blow up.
const maxExactPower = 64

func (s simplifier) pow(e *ir.Pow) ir.Expr {
	k, kok := num(e.Exp)
	if kok {
		switch {
		case k.Sign() == 0:
			return ir.Int(e.P, 1)
		case k.Cmp(big.NewRat(1, 1)) == 0:
			return e.Base
		}
	}
	if b, ok := num(e.Base); ok {
		if b.Cmp(big.NewRat(1, 1)) == 0 {
			return ir.Int(e.P, 1)
		}
		if kok && k.IsInt() && k.Num().IsInt64() {
			n := k.Num().Int64()
			if n < 0 && b.Sign() == 0 {
				return e // 0^-n: leave for the numeric stage to report
			}
			if abs64(n) <= maxExactPower {
				return ir.NewNum(e.P, ratPow(b, n))
			}
		}
		if kok && b.Sign() > 0 && k.Cmp(big.NewRat(1, 2)) == 0 {
			if r, ok := ratSqrt(b); ok {
				return ir.NewNum(e.P, r)
			}
		}
	}
	if kok && k.IsInt() {
		switch b := e.Base.(type) {
		case *ir.Pow:
			// (b^m)^n = b^(mn) for integer n.
			if m, ok := num(b.Exp); ok {
				return &ir.Pow{At: e.At, Base: b.Base, Exp: ir.NewNum(e.P, new(big.Rat).Mul(m, k))}
			}
		case *ir.Mul:
			// (ab)^n = a^n b^n for integer n.
			f := make([]ir.Expr, len(b.Factors))
			for i, x := range b.Factors {
				f[i] = &ir.Pow{At: e.At, Base: x, Exp: e.Exp}
			}
			return &ir.Mul{At: b.At, Factors: f}
		}
	}
	return e
}

func abs64(n int64) int64 {
	if n < 0 {
		return -n
	}
	return n
}

func ratPow(b *big.Rat, n int64) *big.Rat {
	r := big.NewRat(1, 1)
	x := new(big.Rat).Set(b)
	if n < 0 {
		x.Inv(x)
		n = -n
	}
	for ; n > 0; n-- {
		r.Mul(r, x)
	}
	return r
}

func ratSqrt(b *big.Rat) (*big.Rat, bool) {
	p, q := b.Num(), b.Denom()
	sp, sq := new(big.Int).Sqrt(p), new(big.Int).Sqrt(q)
	if new(big.Int).Mul(sp, sp).Cmp(p) != 0 || new(big.Int).Mul(sq, sq).Cmp(q) != 0 {
		return nil, false
	}
	return new(big.Rat).SetFrac(sp, sq), true
}

func (s simplifier) call(e *ir.Call) ir.Expr {
	if e.Fn == ir.Norm {
		a := e.Args[0]
		if v, ok := a.(*ir.Vec); ok {
			parts := make([]ir.Expr, len(v.Elems))
			for i, x := range v.Elems {
				parts[i] = &ir.Pow{At: e.At, Base: x, Exp: ir.Int(e.P, 2)}
			}
			return &ir.Pow{At: e.At, Base: ir.Sum(e.P, parts...), Exp: ir.Rat(e.P, 1, 2)}
		}
		return e
	}
	if e.Fn == ir.Sqrt {
		return &ir.Pow{At: e.At, Base: e.Args[0], Exp: ir.Rat(e.P, 1, 2)}
	}
	x, ok := num(e.Args[0])
	if !ok {
		if e.Fn == ir.Abs {
			if m, ok := e.Args[0].(*ir.Mul); ok {
				if c, ok := num(m.Factors[0]); ok && c.Sign() < 0 {
					// |−c·r| = c·|r|
					inner := &ir.Mul{At: m.At, Factors: append([]ir.Expr{ir.NewNum(m.P, new(big.Rat).Neg(c))}, m.Factors[1:]...)}
					return &ir.Call{At: e.At, Fn: ir.Abs, Args: []ir.Expr{inner}}
				}
			}
		}
		return e
	}
	zero := x.Sign() == 0
	switch e.Fn {
	case ir.Sin, ir.Tan, ir.Tanh, ir.Sinh:
		if zero {
			return ir.Int(e.P, 0)
		}
	case ir.Cos, ir.Exp, ir.Cosh:
		if zero {
			return ir.Int(e.P, 1)
		}
	case ir.Log:
		if x.Cmp(big.NewRat(1, 1)) == 0 {
			return ir.Int(e.P, 0)
		}
	case ir.Abs:
		return ir.NewNum(e.P, new(big.Rat).Abs(x))
	case ir.Sign:
		return ir.Int(e.P, int64(x.Sign()))
	case ir.Min, ir.Max:
		y, ok := num(e.Args[1])
		if !ok {
			return e
		}
		if (x.Cmp(y) <= 0) == (e.Fn == ir.Min) {
			return e.Args[0]
		}
		return e.Args[1]
	}
	return e
}

func (s simplifier) comp(e *ir.Comp) ir.Expr {
	switch x := e.X.(type) {
	case *ir.Vec:
		return x.Elems[e.I]
	case *ir.Add:
		t := make([]ir.Expr, len(x.Terms))
		for i, a := range x.Terms {
			t[i] = &ir.Comp{At: e.At, X: a, I: e.I}
		}
		return &ir.Add{At: x.At, Terms: t}
	case *ir.Mul:
		f := append([]ir.Expr(nil), x.Factors...)
		last := f[len(f)-1]
		f[len(f)-1] = &ir.Comp{At: e.At, X: last, I: e.I}
		return &ir.Mul{At: x.At, Factors: f}
	case *ir.Grad:
		if x.X.Rank() == 0 {
			return &ir.Partial{At: e.At, X: x.X, Axis: e.I}
		}
		return &ir.Grad{At: x.At, X: &ir.Comp{At: e.At, X: x.X, I: e.I}}
	case *ir.Outer:
		return &ir.Mul{At: e.At, Factors: []ir.Expr{&ir.Comp{At: e.At, X: x.A, I: e.I}, x.B}}
	case *ir.Partial:
		return &ir.Partial{At: x.At, X: &ir.Comp{At: e.At, X: x.X, I: e.I}, Axis: x.Axis}
	case *ir.Lap:
		return &ir.Lap{At: x.At, X: &ir.Comp{At: e.At, X: x.X, I: e.I}}
	case *ir.TimeDeriv:
		return &ir.TimeDeriv{At: x.At, X: &ir.Comp{At: e.At, X: x.X, I: e.I}}
	case *ir.Dot:
		if x.A.Rank() >= 2 {
			return &ir.Dot{At: x.At, A: &ir.Comp{At: e.At, X: x.A, I: e.I}, B: x.B}
		}
	}
	return e
}

// pullScalars splits a product into its scalar factors and its one tensor
// factor.
func pullScalars(e ir.Expr) ([]ir.Expr, ir.Expr) {
	m, ok := e.(*ir.Mul)
	if !ok || e.Rank() == 0 {
		return nil, e
	}
	n := len(m.Factors)
	return m.Factors[:n-1], m.Factors[n-1]
}

// bilinear applies the rules every bilinear product shares: zero operands,
// sums distribute, scalar factors move out. rebuild makes the product of two
// reduced operands; literal handles two literal vectors.
func (s simplifier) bilinear(p source.Pos, a, b ir.Expr, rank int, rebuild func(a, b ir.Expr) ir.Expr) (ir.Expr, bool) {
	if ir.IsZero(a) || ir.IsZero(b) {
		return ir.Zero(p, rank, s.dim), true
	}
	if x, ok := a.(*ir.Add); ok {
		t := make([]ir.Expr, len(x.Terms))
		for i, u := range x.Terms {
			t[i] = rebuild(u, b)
		}
		return &ir.Add{At: ir.At{P: p}, Terms: t}, true
	}
	if x, ok := b.(*ir.Add); ok {
		t := make([]ir.Expr, len(x.Terms))
		for i, u := range x.Terms {
			t[i] = rebuild(a, u)
		}
		return &ir.Add{At: ir.At{P: p}, Terms: t}, true
	}
	sa, ta := pullScalars(a)
	sb, tb := pullScalars(b)
	if len(sa)+len(sb) > 0 {
		f := append(append(append([]ir.Expr(nil), sa...), sb...), rebuild(ta, tb))
		return &ir.Mul{At: ir.At{P: p}, Factors: f}, true
	}
	return nil, false
}

func (s simplifier) dot(e *ir.Dot) ir.Expr {
	rebuild := func(a, b ir.Expr) ir.Expr { return &ir.Dot{At: e.At, A: a, B: b} }
	if r, ok := s.bilinear(e.P, e.A, e.B, e.Rank(), rebuild); ok {
		return r
	}
	va, aok := e.A.(*ir.Vec)
	vb, bok := e.B.(*ir.Vec)
	switch {
	case aok && e.A.Rank() == 1:
		// [a1,...].B = Σ a_i B_i
		t := make([]ir.Expr, len(va.Elems))
		for i, x := range va.Elems {
			t[i] = &ir.Mul{At: e.At, Factors: []ir.Expr{x, &ir.Comp{At: e.At, X: e.B, I: i}}}
		}
		return &ir.Add{At: e.At, Terms: t}
	case aok:
		// A matrix given by rows: (A.B)_i = A_i . B
		t := make([]ir.Expr, len(va.Elems))
		for i, row := range va.Elems {
			t[i] = &ir.Dot{At: e.At, A: row, B: e.B}
		}
		return &ir.Vec{At: e.At, Elems: t}
	case bok && e.B.Rank() == 1:
		// A.[b1,...] = Σ_j A[:,j] b_j, written through components of A's
		// last index only for vectors.
		if e.A.Rank() == 1 {
			t := make([]ir.Expr, len(vb.Elems))
			for i, x := range vb.Elems {
				t[i] = &ir.Mul{At: e.At, Factors: []ir.Expr{x, &ir.Comp{At: e.At, X: e.A, I: i}}}
			}
			return &ir.Add{At: e.At, Terms: t}
		}
	}
	// Vector dot vector is symmetric: order the operands.
	if e.A.Rank() == 1 && e.B.Rank() == 1 && ir.Compare(e.B, e.A) < 0 {
		return &ir.Dot{At: e.At, A: e.B, B: e.A}
	}
	return e
}

func (s simplifier) ddot(e *ir.DDot) ir.Expr {
	rebuild := func(a, b ir.Expr) ir.Expr { return &ir.DDot{At: e.At, A: a, B: b} }
	if r, ok := s.bilinear(e.P, e.A, e.B, 0, rebuild); ok {
		return r
	}
	va, aok := e.A.(*ir.Vec)
	vb, bok := e.B.(*ir.Vec)
	if aok || bok {
		n := s.dim
		t := make([]ir.Expr, 0, n)
		for i := 0; i < n; i++ {
			var ra, rb ir.Expr = &ir.Comp{At: e.At, X: e.A, I: i}, &ir.Comp{At: e.At, X: e.B, I: i}
			if aok {
				ra = va.Elems[i]
			}
			if bok {
				rb = vb.Elems[i]
			}
			t = append(t, &ir.Dot{At: e.At, A: ra, B: rb})
		}
		return &ir.Add{At: e.At, Terms: t}
	}
	if ir.Compare(e.B, e.A) < 0 {
		return &ir.DDot{At: e.At, A: e.B, B: e.A}
	}
	return e
}

func (s simplifier) outer(e *ir.Outer) ir.Expr {
	rebuild := func(a, b ir.Expr) ir.Expr { return &ir.Outer{At: e.At, A: a, B: b} }
	if r, ok := s.bilinear(e.P, e.A, e.B, 2, rebuild); ok {
		return r
	}
	if va, ok := e.A.(*ir.Vec); ok {
		rows := make([]ir.Expr, len(va.Elems))
		for i, x := range va.Elems {
			rows[i] = &ir.Mul{At: e.At, Factors: []ir.Expr{x, e.B}}
		}
		return &ir.Vec{At: e.At, Elems: rows}
	}
	return e
}
