package compiler

import (
	"math/big"

	"github.com/formwright/formwright/compiler/ir"
)

// FineScale is a fine-scale quantity of residual-based VMS with its
// definition: U′ = −τ_U R_U(u) of unknown U (Sym kind ir.FineScale), or
// the same at the previous iterate, U′⁽ᵖʳᵉᵛ⁾ = −τ_U R_U(previous(u))
// (ir.LaggedFineScale), which convects where a model lags its convecting
// velocity with previous(U).
type FineScale struct {
	Unknown int
	// Sym (fine_<U> or fine_prev_<U>) stands for Def in derived forms;
	// lowering substitutes.
	Sym *ir.Sym
	Def ir.Expr
}

// maxExpansionOrder caps the order of the fine-scale expansion: an
// operator of higher polynomial degree is expanded to first order, like a
// non-polynomial one (the terms would be many and small).
const maxExpansionOrder = 4

// maxMoves caps the integrations by parts that move derivatives off a
// fine-scale factor in one term.
const maxMoves = 4

// fineExpansion is the result of fineScaleExpansion.
type fineExpansion struct {
	fine    []*FineScale
	terms   ir.Expr   // cell integrand of the terms beyond first order in u′ (nil: none)
	dropped []ir.Expr // integrands left out, for the derivation to show
	notes   []Note
}

// fineScaleExpansion derives the variational multiscale terms that the
// linear fine-scale term −Σ_K (τR, L′(u_h)* v)_K does not hold. It
// substitutes u_h + u′ for every unknown with a τ, and previous(u) +
// u′⁽ᵖʳᵉᵛ⁾ for every lagged one, into the operator as written and expands
// in the fine scales (Hughes 1995, CMAME 127; Bazilevs, Calo, Cottrell,
// Hughes, Reali & Scovazzi 2007, CMAME 197):
//
//	L(u_h + u′; previous(u) + u′⁽ᵖʳᵉᵛ⁾) = L(u_h) + L′(u_h)u′ + ∂_prev L[u′⁽ᵖʳᵉᵛ⁾] + Σ_{n≥2} (1/n!) δⁿL[u′, …]
//
// The first term is the Galerkin form, the second the linear fine-scale
// term (the adjoint of the linearisation on the test function, with
// u′ = −τR). This pass returns the rest: the first-order terms in the
// lagged fine scale (with the unknown u_h: the cross stress), and the
// terms of order two and up (the Reynolds stress). For an operator that
// is a polynomial in the unknowns the expansion ends at its degree and is
// exact; for any other it is cut after the first order, and the dropped
// second-order term is returned in dropped.
//
// The fine scales vanish on cell boundaries and are modelled pointwise, so
// every derivative acting on them is moved onto the other factors by parts,
// cell by cell (moveOffFine). A term where that leaves a derivative of a
// fine scale, such as −((∇·u′)u′, v) from (∇u′)u′, is dropped and listed.
// A transient model gets no such terms: its fine scales would need ∂ₜu at
// the iterate inside a product, which backward Euler stepping does not
// provide.
func fineScaleExpansion(m *Model) (*fineExpansion, error) {
	x := &fineExpansion{}
	state := map[int]*FineScale{}
	lagged := map[int]*FineScale{}
	for _, eq := range m.Equations {
		U := m.Unknowns[eq.For]
		if m.TauSym[U.Index] == nil {
			continue
		}
		p := eq.Pos
		r := residual(m, eq, p)
		all := ir.DepX | ir.DepY | ir.DepZ | ir.DepT
		state[U.Index] = &FineScale{Unknown: U.Index,
			Sym: &ir.Sym{At: ir.At{P: p}, Name: "fine_" + U.Name, Kind: ir.FineScale, R: U.Rank, Deps: all},
			Def: Simplify(ir.Neg(p, ir.Prod(p, m.TauSym[U.Index], r)), m.Dim)}
		lagged[U.Index] = &FineScale{Unknown: U.Index,
			Sym: &ir.Sym{At: ir.At{P: p}, Name: "fine_prev_" + U.Name, Kind: ir.LaggedFineScale, R: U.Rank, Deps: all},
			Def: Simplify(ir.Neg(p, ir.Prod(p, m.TauSym[U.Index], withRole(r, ir.Trial, ir.Previous))), m.Dim)}
	}
	moved := func(f *ir.Field) bool {
		switch f.Role {
		case ir.Trial:
			return state[f.Index] != nil
		case ir.Previous:
			return lagged[f.Index] != nil
		}
		return false
	}
	all := direction{dim: m.Dim, Field: func(f *ir.Field) ir.Expr {
		switch {
		case f.Role == ir.Trial && state[f.Index] != nil:
			return state[f.Index].Sym
		case f.Role == ir.Previous && lagged[f.Index] != nil:
			return lagged[f.Index].Sym
		}
		return nil
	}}
	lag := direction{dim: m.Dim, Field: func(f *ir.Field) ir.Expr {
		if f.Role == ir.Previous && lagged[f.Index] != nil {
			return lagged[f.Index].Sym
		}
		return nil
	}}
	var kept []ir.Expr
	var firstOrder, polynomial, crossTerms bool
	var highest int
	for _, eq := range m.Equations {
		var eqFirst, eqPoly, eqCross bool
		eqHighest := 0
		v := m.Test(eq.For)
		transient := ir.Contains(eq.Written, func(e ir.Expr) bool { _, ok := e.(*ir.TimeDeriv); return ok })
		var parts []ir.Expr     // integrands of this equation to move off the fine scales
		var eqDropped []ir.Expr // second-order terms of a first-order expansion
		for _, t := range additiveTerms(eq.Written) {
			p := t.Pos()
			if c := gateaux(t, lag); !ir.IsZero(Simplify(c, m.Dim)) {
				parts = append(parts, contract(p, c, v))
				eqCross = true
			}
			deg, poly := degreeIn(t, moved)
			if poly && deg < 2 {
				continue
			}
			if !poly || deg > maxExpansionOrder {
				// First order only: report ½ δ²L[u′, u′].
				d2 := gateaux(gateaux(t, all), all)
				eqDropped = append(eqDropped, Simplify(contract(p, ir.Prod(p, ir.Rat(p, 1, 2), d2), v), m.Dim))
				eqFirst = true
				continue
			}
			eqPoly = true
			eqHighest = max(eqHighest, deg)
			dn := t
			fact := big.NewRat(1, 1)
			for n := 1; n <= deg; n++ {
				dn = gateaux(dn, all)
				fact.Mul(fact, big.NewRat(int64(n), 1))
				if n >= 2 {
					parts = append(parts, contract(p, ir.Prod(p, ir.NewNum(p, new(big.Rat).Inv(fact)), dn), v))
				}
			}
		}
		if len(parts) == 0 && len(eqDropped) == 0 {
			continue
		}
		if transient {
			u := m.Unknowns[eq.For].Name
			x.notes = append(x.notes, newNote(Warning, `the equation for $%[1]s$ is transient, so its fine scales $%[1]s' = -\tau R_{%[1]s}$ would need $\partial_t %[1]s$ at the iterate inside a product, which backward Euler stepping does not provide: the VMS form has no cross- or Reynolds-stress terms (Bazilevs et al. 2007), only $-(\tau R, L'^* v)$`, tn(u)))
			continue
		}
		firstOrder, polynomial, crossTerms = firstOrder || eqFirst, polynomial || eqPoly, crossTerms || eqCross
		highest = max(highest, eqHighest)
		for _, in := range parts {
			k, d, err := moveOffFine(m.Dim, in, 0)
			if err != nil {
				return nil, err
			}
			kept = append(kept, k...)
			eqDropped = append(eqDropped, d...)
		}
		if len(eqDropped) > 0 {
			if all := Simplify(ir.Sum(eq.Pos, eqDropped...), m.Dim); !ir.IsZero(all) {
				x.dropped = append(x.dropped, all)
			}
		}
	}
	if len(kept) > 0 {
		x.terms = Simplify(ir.Sum(m.Equations[0].Pos, kept...), m.Dim)
		if ir.IsZero(x.terms) {
			x.terms = nil
		}
	}
	used := map[string]bool{}
	for _, e := range append([]ir.Expr{x.terms}, x.dropped...) {
		if e == nil {
			continue
		}
		ir.Inspect(e, func(n ir.Expr) bool {
			if s, ok := n.(*ir.Sym); ok {
				used[s.Name] = true
			}
			return true
		})
	}
	for _, u := range m.Unknowns {
		for _, fs := range []*FineScale{state[u.Index], lagged[u.Index]} {
			if fs != nil && used[fs.Sym.Name] {
				x.fine = append(x.fine, fs)
			}
		}
	}
	if x.terms != nil || len(x.dropped) > 0 {
		what := "$u_h + u'$ for the unknowns"
		if crossTerms {
			what += " and $u^{\\mathrm{prev}} + u'^{\\mathrm{prev}}$ for the lagged ones, previous(u) (the convecting velocity of a Picard linearisation becomes $u^{\\mathrm{prev}} + u'^{\\mathrm{prev}}$, the fine scale at the previous iterate)"
		}
		x.notes = append(x.notes, newNote(Assumption, `VMS by substitution: %s are put into the operator, which is expanded in the fine scales (Hughes 1995; Bazilevs, Calo, Cottrell, Hughes, Reali \& Scovazzi 2007, CMAME 197). The first-order term in $u'$ is $-\sum_K (\tau R, L'^* v)_K$ above; the terms added to the form are the rest: first-order terms in the lagged fine scale (the cross stress) and terms of order two and up (the Reynolds stress)`, what))
		if polynomial && !firstOrder {
			x.notes = append(x.notes, newNote(Assumption, "the operator is a polynomial of degree %d in the unknowns (and their previous iterates), so the expansion ends at order %d and is exact", highest, highest))
		}
		x.notes = append(x.notes, newNote(Assumption, `the fine scales vanish on cell boundaries and are known at points only ($u' = -\tau R$), so every derivative acting on a fine scale is moved onto the other factors by parts, cell by cell`))
		if firstOrder {
			x.notes = append(x.notes, newNote(Warning, "the operator is not a polynomial of low degree in the unknowns, so the expansion is cut after the first order: the second-order terms listed as dropped are left out (with the higher ones), which is consistent, as they vanish with the residual"))
		}
		if len(x.dropped) > 0 && !firstOrder {
			x.notes = append(x.notes, newNote(Warning, `the terms listed as dropped keep a derivative of a fine scale after integration by parts, which the pointwise model $u' = -\tau R$ does not give: they are left out (they vanish with the residual, so the form stays consistent; in the conservation form of the convection used by Bazilevs et al. 2007 they do not arise)`))
		}
	}
	return x, nil
}

// degreeIn is the polynomial degree of t in the fields that in selects,
// and whether t is a polynomial in them at all (a selected field inside
// an elementary function or a non-integer power is not).
func degreeIn(t ir.Expr, in func(*ir.Field) bool) (deg int, poly bool) {
	switch t := t.(type) {
	case *ir.Field:
		if in(t) {
			return 1, true
		}
		return 0, true
	case *ir.Mul, *ir.Dot, *ir.DDot, *ir.Outer:
		sum := 0
		for _, k := range ir.Children(t) {
			d, ok := degreeIn(k, in)
			if !ok {
				return 0, false
			}
			sum += d
		}
		return sum, true
	case *ir.Pow:
		db, ok := degreeIn(t.Base, in)
		if !ok {
			return 0, false
		}
		de, ok := degreeIn(t.Exp, in)
		if !ok || de > 0 {
			return 0, false
		}
		if db == 0 {
			return 0, true
		}
		if n, ok := t.Exp.(*ir.Num); ok && n.Val.IsInt() && n.Val.Sign() > 0 && n.Val.Num().IsInt64() && n.Val.Num().Int64() <= 64 {
			return db * int(n.Val.Num().Int64()), true
		}
		return 0, false
	case *ir.Call:
		for _, a := range t.Args {
			if d, ok := degreeIn(a, in); !ok || d > 0 {
				return 0, false
			}
		}
		return 0, true
	}
	best := 0
	for _, k := range ir.Children(t) {
		d, ok := degreeIn(k, in)
		if !ok {
			return 0, false
		}
		best = max(best, d)
	}
	return best, true
}

func isFineSym(e ir.Expr) bool {
	s, ok := e.(*ir.Sym)
	return ok && (s.Kind == ir.FineScale || s.Kind == ir.LaggedFineScale)
}

func hasFine(e ir.Expr) bool { return ir.Contains(e, isFineSym) }

// fineWeight counts the derivatives acting on fine scales in e: each
// first-order derivative node whose operand holds a fine scale counts 1,
// a Laplacian 2.
func fineWeight(e ir.Expr) int {
	w := 0
	ir.Inspect(e, func(n ir.Expr) bool {
		switch n := n.(type) {
		case *ir.Grad, *ir.Div, *ir.Partial:
			if hasFine(ir.Children(n)[0]) {
				w++
			}
		case *ir.Lap:
			if hasFine(n.X) {
				w += 2
			}
		}
		return true
	})
	return w
}

// moveOffFine integrates a scalar cell integrand by parts until no
// derivative acts on a fine scale. One step takes the first derivative
// node (in pre-order) whose operand X holds a fine scale and moves it onto
// the rest of the term (adjointTerm, with X in the place of the unknown):
// ∫ D(X)·W = ∫ X·D*(W). The simplified result is split into terms: those
// that equal c times the term itself are collected (the term then equals
// the others divided by 1 − c, as in ∫ u′ ∂ₓu′ v = −½ ∫ u′² ∂ₓv); those
// with fewer derivatives on fine scales are moved further; those with no
// fewer are returned in dropped. depth counts the steps taken.
func moveOffFine(dim int, term ir.Expr, depth int) (kept, dropped []ir.Expr, err error) {
	// One additive piece at a time: adjointTerm moves the operations off
	// the marked factor and drops the pieces that do not hold it.
	for _, piece := range additiveTerms(term) {
		k, d, err := movePiece(dim, piece, depth)
		if err != nil {
			return nil, nil, err
		}
		kept, dropped = append(kept, k...), append(dropped, d...)
	}
	return kept, dropped, nil
}

func movePiece(dim int, term ir.Expr, depth int) (kept, dropped []ir.Expr, err error) {
	s := Simplify(term, dim)
	if ir.IsZero(s) {
		return nil, nil, nil
	}
	w := fineWeight(s)
	if w == 0 {
		return []ir.Expr{s}, nil, nil
	}
	if depth >= maxMoves {
		return nil, []ir.Expr{s}, nil
	}
	moved, ok := moveOnce(dim, term)
	if !ok {
		return nil, []ir.Expr{s}, nil
	}
	// c: how many times the term itself came back.
	c := new(big.Rat)
	var rest []ir.Expr
	sc, sr := splitCoef(s)
	for _, q := range additiveTerms(moved) {
		q = Simplify(q, dim)
		if ir.IsZero(q) {
			continue
		}
		qc, qr := splitCoef(q)
		if (qr == nil) == (sr == nil) && (qr == nil || ir.Equal(qr, sr)) {
			c.Add(c, new(big.Rat).Quo(qc, sc))
			continue
		}
		rest = append(rest, q)
	}
	one := big.NewRat(1, 1)
	if c.Cmp(one) == 0 {
		return nil, []ir.Expr{s}, nil
	}
	scale := new(big.Rat).Quo(one, new(big.Rat).Sub(one, c))
	p := s.Pos()
	for _, q := range rest {
		var k, d []ir.Expr
		if fineWeight(q) < w {
			if k, d, err = moveOffFine(dim, q, depth+1); err != nil {
				return nil, nil, err
			}
		} else {
			d = []ir.Expr{q}
		}
		for _, x := range k {
			kept = append(kept, Simplify(ir.Prod(p, ir.NewNum(p, scale), x), dim))
		}
		for _, x := range d {
			dropped = append(dropped, Simplify(ir.Prod(p, ir.NewNum(p, scale), x), dim))
		}
	}
	return kept, dropped, nil
}

// fineMarkerIndex is the unknown index of the marker field that stands,
// in moveOnce, for the operand being integrated by parts: the one trial
// field of the term, so that adjointTerm moves every operation off it.
const fineMarkerIndex = -1

// moveOnce performs one integration by parts of moveOffFine on term: it
// returns the simplified ∫ X·D*(W) for the first derivative node D(X)
// whose operand holds a fine scale, and false when adjointTerm cannot
// move it (the node sits inside a power or a function).
func moveOnce(dim int, term ir.Expr) (ir.Expr, bool) {
	// The unknown's own trial fields are held as coefficients meanwhile.
	t := swapRoles(term, ir.Trial, ir.Increment)
	var operand ir.Expr
	t = mapFirst(t, func(n ir.Expr) (ir.Expr, bool) {
		switch n.(type) {
		case *ir.Grad, *ir.Div, *ir.Partial, *ir.Lap:
			x := ir.Children(n)[0]
			if !hasFine(x) {
				return nil, false
			}
			operand = x
			marker := &ir.Field{At: ir.At{P: x.Pos()}, Name: "u′", Index: fineMarkerIndex, Role: ir.Trial, R: x.Rank()}
			return ir.WithChildren(n, []ir.Expr{marker}), true
		}
		return nil, false
	})
	if operand == nil {
		return nil, false
	}
	p := term.Pos()
	var paired []ir.Expr
	err := adjointTerm(dim, t, ir.Int(p, 1), func(i int, w ir.Expr) {
		if i == fineMarkerIndex {
			paired = append(paired, w)
		}
	})
	if err != nil || len(paired) == 0 {
		return nil, false
	}
	out := contract(p, operand, ir.Sum(p, paired...))
	return Simplify(swapRoles(out, ir.Trial, ir.Increment), dim), true
}

// mapFirst replaces the first node in pre-order for which f reports true
// by f's result.
func mapFirst(e ir.Expr, f func(ir.Expr) (ir.Expr, bool)) ir.Expr {
	done := false
	var walk func(ir.Expr) ir.Expr
	walk = func(n ir.Expr) ir.Expr {
		if done {
			return n
		}
		if r, ok := f(n); ok {
			done = true
			return r
		}
		kids := ir.Children(n)
		if len(kids) == 0 {
			return n
		}
		nk := make([]ir.Expr, len(kids))
		for i, k := range kids {
			nk[i] = walk(k)
		}
		return ir.WithChildren(n, nk)
	}
	return walk(e)
}
