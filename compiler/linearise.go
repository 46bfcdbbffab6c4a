package compiler

import (
	"github.com/formwright/formwright/compiler/ir"
)

// Linearisation is the linearised operator of a nonlinear model and what
// the stabilised methods read off it.
type Linearisation struct {
	// Operator[k] is L′_k(u)δu = d/dε L_k(u + εδu)|ε=0 for equation k
	// (m.Equations order), simplified: the Gateaux derivative in the
	// direction of the increments δu (Role Increment), previous(·) held.
	Operator []ir.Expr
	// Split is the linearisation divided by the derivative order acting on
	// δu (temporal, advective, diffusive, reactive), as SplitOperator does
	// for a linear operator.
	Split []Split
	// Adjoint[i] is (L′(u)* v)_i, the formal adjoint of the linearisation
	// on the test functions: ∫ L′(u)δu·v = ∫ δu·L′(u)*v for δu, v
	// vanishing on ∂Ω.
	Adjoint []ir.Expr
	// Advection[k] is the advective velocity of equation k read off the
	// first-order part of the linearisation, L′_A δu = a·∇δu (for a vector
	// unknown, (∇δu) a in its own components); nil where there is none or
	// it is not of that form.
	Advection []ir.Expr
}

// Linearise derives the linearisation of the model's operator: L′(u)δu by
// the Gateaux derivative (gateaux), its split by derivative order, and
// its formal adjoint. Split and adjoint are those of a linear operator in
// δu, with the state u a coefficient: the linear machinery runs with the
// roles of u and δu exchanged (swapRoles).
func Linearise(m *Model) (*Linearisation, error) {
	lin := &Linearisation{}
	dir := direction{Field: fieldDirection(ir.Trial, ir.Increment), dim: m.Dim}
	lm := *m
	lm.Equations = nil
	for _, eq := range m.Equations {
		op := expanded(gateaux(eq.Written, dir), m.Dim)
		lin.Operator = append(lin.Operator, op)
		e := *eq
		e.Written = swapRoles(op, ir.Trial, ir.Increment)
		e.Source = ir.Zero(eq.Pos, op.Rank(), m.Dim)
		lm.Equations = append(lm.Equations, &e)
	}
	adj, err := Adjoint(&lm)
	if err != nil {
		return nil, err
	}
	for _, a := range adj {
		lin.Adjoint = append(lin.Adjoint, expanded(swapRoles(a, ir.Trial, ir.Increment), m.Dim))
	}
	for k, s := range SplitOperator(&lm) {
		for p, part := range s.Parts {
			if part != nil {
				s.Parts[p] = swapRoles(part, ir.Trial, ir.Increment)
			}
		}
		lin.Split = append(lin.Split, s)
		lin.Advection = append(lin.Advection, advectionOf(m, m.Equations[k], s.Parts[Advective]))
	}
	return lin, nil
}

// expanded simplifies e after distributing its products over the sums
// that hold fields (additiveTerms), so that like terms from different
// product-rule expansions cancel: −(2u Δu + 2∇u·∇u) v + 2 (∇u·∇u) v + …
// becomes −2u Δu v + ….
func expanded(e ir.Expr, dim int) ir.Expr {
	s := Simplify(e, dim)
	if ir.IsZero(s) {
		return s
	}
	return Simplify(ir.Sum(s.Pos(), additiveTerms(s)...), dim)
}

// advectionOf reads the advective velocity a off the first-order part of
// a linearisation, adv = a·∇δu (scalar) or (∇δu) a (vector, the same a
// for every component): a_j is adv with δu replaced by x_j (by x_j e_c for
// a vector, component c). Parts of adv that act on other unknowns'
// increments (∇δp in a momentum equation) are left out; nil when adv is
// not of that form.
func advectionOf(m *Model, eq *Equation, adv ir.Expr) ir.Expr {
	if adv == nil {
		return nil
	}
	u := m.Unknowns[eq.For]
	p := eq.Pos
	// Only the terms acting on the equation's own increment.
	var own []ir.Expr
	for _, t := range additiveTerms(adv) {
		if ir.Contains(t, func(x ir.Expr) bool {
			f, ok := x.(*ir.Field)
			return ok && f.Role == ir.Increment && f.Index == u.Index
		}) {
			own = append(own, t)
		}
	}
	if len(own) == 0 {
		return nil
	}
	self := ir.Sum(p, own...)
	subst := func(by ir.Expr) ir.Expr {
		return Simplify(ir.MapUp(self, func(x ir.Expr) ir.Expr {
			if f, ok := x.(*ir.Field); ok && f.Role == ir.Increment {
				if f.Index == u.Index {
					return by
				}
				return ir.Zero(p, f.R, m.Dim)
			}
			return x
		}), m.Dim)
	}
	comps := make([]ir.Expr, m.Dim)
	for j := range comps {
		x := &ir.Coord{At: ir.At{P: p}, Axis: j}
		if u.Rank == 0 {
			comps[j] = subst(x)
			if ir.HasRole(comps[j], ir.Increment) {
				return nil
			}
			continue
		}
		for c := 0; c < m.Dim; c++ {
			el := make([]ir.Expr, m.Dim)
			for i := range el {
				el[i] = ir.Int(p, 0)
			}
			el[c] = x
			r := subst(&ir.Vec{At: ir.At{P: p}, Elems: el})
			v, ok := r.(*ir.Vec)
			if !ok {
				return nil
			}
			for i, ei := range v.Elems {
				switch {
				case i == c && c == 0:
					comps[j] = ei
				case i == c:
					if !ir.Equal(ei, comps[j]) {
						return nil
					}
				case !ir.IsZero(ei):
					return nil
				}
			}
		}
	}
	return collapseGradient(collapseComponents(&ir.Vec{At: ir.At{P: p}, Elems: comps}), m.Dim)
}

// collapseGradient writes [c ∂₁X, …, c ∂_d X] as c ∇X, for a scalar X
// and a product c; other expressions come back unchanged.
func collapseGradient(e ir.Expr, dim int) ir.Expr {
	v, ok := e.(*ir.Vec)
	if !ok || len(v.Elems) != dim {
		return e
	}
	hole := &ir.Sym{Name: "gradient component", Kind: ir.Param}
	var x, rest ir.Expr
	for j, c := range v.Elems {
		var got ir.Expr
		r := mapFirst(c, func(n ir.Expr) (ir.Expr, bool) {
			if pd, ok := n.(*ir.Partial); ok && pd.Axis == j && pd.X.Rank() == 0 {
				got = pd.X
				return hole, true
			}
			return nil, false
		})
		if got == nil || (x != nil && !ir.Equal(got, x)) || (rest != nil && !ir.Equal(r, rest)) {
			return e
		}
		x, rest = got, r
	}
	// The hole must be a factor of a product (or the whole).
	at := ir.At{P: v.Pos()}
	grad := &ir.Grad{At: at, X: x}
	if rest == hole {
		return grad
	}
	m, ok := rest.(*ir.Mul)
	if !ok {
		return e
	}
	var f []ir.Expr
	found := false
	for _, y := range m.Factors {
		if y == hole {
			found = true
			continue
		}
		if ir.Contains(y, func(n ir.Expr) bool { return n == hole }) {
			return e
		}
		f = append(f, y)
	}
	if !found {
		return e
	}
	return Simplify(&ir.Mul{At: m.At, Factors: append(f, grad)}, dim)
}

// collapseComponents writes [X[1], ..., X[d]] as X.
func collapseComponents(v *ir.Vec) ir.Expr {
	var whole ir.Expr
	for j, e := range v.Elems {
		c, ok := e.(*ir.Comp)
		if !ok || c.I != j || c.X.Rank() != 1 || (whole != nil && !ir.Equal(whole, c.X)) {
			return v
		}
		whole = c.X
	}
	if whole == nil {
		return v
	}
	return whole
}
