package compiler

import (
	"fmt"
	"math/big"

	"github.com/formwright/formwright/compiler/ir"
)

// PicardLinearisation is the Picard (fixed-point) linearisation of a
// nonlinear model: per equation the lagged operator L̂(u⁽ᵖʳᵉᵛ⁾)u, linear in
// u, and the source it moves to the right (the terms lagged whole), and
// per unknown the lagged τ. Model is the linear model they make, which
// derives and lowers like any other.
type PicardLinearisation struct {
	Operators []ir.Expr // m.Equations order
	Sources   []ir.Expr
	Tau       []ir.Expr // nil where the model has none
	Model     *Model
	Notes     []Note
}

// Picard derives the Picard linearisation of a nonlinear model. In every
// term of an operator in which the unknowns appear more than once, one
// occurrence stays implicit and the others are lagged to the previous
// iterate: the occurrence under the most derivatives (the first one, on a
// tie), among those not inside an elementary function or a non-integer
// power; a power u^n counts as u^(n−1)·u. So the convection (∇u)u becomes
// (∇u)u⁽ᵖʳᵉᵛ⁾ (the convecting velocity lagged) and −∇·(k(u)∇u) becomes
// −∇·(k(u⁽ᵖʳᵉᵛ⁾)∇u) (the coefficient lagged). A term with no such
// occurrence, like λeᵘ, is lagged whole and moves to the source side. τ
// is evaluated at the previous iterate. The iteration converges linearly
// at best (e.g. Kelley 1995, Iterative Methods for Linear and Nonlinear
// Equations, §4.1), where Newton's method converges quadratically.
func Picard(m *Model) (*PicardLinearisation, error) {
	pl := &PicardLinearisation{}
	pm := *m
	pm.Equations = nil
	for _, eq := range m.Equations {
		p := eq.Pos
		var op, src []ir.Expr
		for _, t := range additiveTerms(eq.Written) {
			deg, bad := trialDegree(t)
			if bad == nil && deg <= 1 {
				op = append(op, t)
				continue
			}
			lt := lagTerm(t)
			if ir.HasRole(lt, ir.Trial) {
				op = append(op, lt)
			} else {
				src = append(src, ir.Neg(t.Pos(), lt))
			}
		}
		if len(op) == 0 {
			return nil, fmt.Errorf("%s: the Picard linearisation of the equation for %s lags every term, so no unknown is left to solve for: use Newton's method", p, m.Unknowns[eq.For].Name)
		}
		e := *eq
		e.Written = ir.Sum(p, op...)
		e.Source = Simplify(ir.Sum(p, append([]ir.Expr{eq.Source}, src...)...), m.Dim)
		pm.Equations = append(pm.Equations, &e)
		pl.Operators = append(pl.Operators, Simplify(e.Written, m.Dim))
		pl.Sources = append(pl.Sources, e.Source)
	}
	pm.Tau = make([]ir.Expr, len(m.Tau))
	pl.Tau = make([]ir.Expr, len(m.Tau))
	for i, t := range m.Tau {
		if t != nil {
			pm.Tau[i] = withRole(t, ir.Trial, ir.Previous)
			pl.Tau[i] = Simplify(pm.Tau[i], m.Dim)
		}
	}
	pm.FineSym = nil
	lagCapture(&pm, pl)
	pl.Model = &pm
	pl.Notes = []Note{newNote(Assumption, `Picard linearisation (a second choice): in each term where the unknowns appear more than once, the occurrence under the most derivatives stays implicit and the others take the previous iterate ($u^n$ counts as $u^{n-1} u$); a term with the unknown only inside a function is lagged whole and moves to the source; $\tau$ is evaluated at the previous iterate. The iteration converges linearly at best, Newton's method quadratically`)}
	return pl, nil
}

// lagTerm lags every trial occurrence of t but one (see Picard).
func lagTerm(t ir.Expr) ir.Expr {
	// u^n → u^(n−1) u for integer n ≥ 2, so that one factor can stay.
	t = ir.MapUp(t, func(n ir.Expr) ir.Expr {
		pw, ok := n.(*ir.Pow)
		if !ok || !ir.HasRole(pw.Base, ir.Trial) {
			return n
		}
		k, ok := pw.Exp.(*ir.Num)
		if !ok || !k.Val.IsInt() || k.Val.Cmp(big.NewRat(2, 1)) < 0 {
			return n
		}
		p := pw.Pos()
		km1 := ir.NewNum(p, new(big.Rat).Sub(k.Val, big.NewRat(1, 1)))
		return &ir.Mul{At: pw.At, Factors: []ir.Expr{&ir.Pow{At: pw.At, Base: pw.Base, Exp: km1}, pw.Base}}
	})
	// Pick the implicit occurrence: pre-order index of the eligible trial
	// field under the most derivatives.
	best, bestDepth, idx := -1, -1, 0
	var walk func(e ir.Expr, depth int, eligible bool)
	walk = func(e ir.Expr, depth int, eligible bool) {
		switch e := e.(type) {
		case *ir.Field:
			if e.Role == ir.Trial {
				if eligible && depth > bestDepth {
					best, bestDepth = idx, depth
				}
				idx++
			}
			return
		case *ir.Grad, *ir.Div, *ir.Partial:
			walk(ir.Children(e)[0], depth+1, eligible)
			return
		case *ir.Lap:
			walk(e.X, depth+2, eligible)
			return
		case *ir.Call, *ir.Pow:
			eligible = false
		}
		for _, k := range ir.Children(e) {
			walk(k, depth, eligible)
		}
	}
	walk(t, 0, true)
	idx = 0
	var rebuild func(e ir.Expr) ir.Expr
	rebuild = func(e ir.Expr) ir.Expr {
		if f, ok := e.(*ir.Field); ok {
			if f.Role != ir.Trial {
				return f
			}
			i := idx
			idx++
			if i == best {
				return f
			}
			g := *f
			g.Role = ir.Previous
			return &g
		}
		kids := ir.Children(e)
		if len(kids) == 0 {
			return e
		}
		nk := make([]ir.Expr, len(kids))
		for i, k := range kids {
			nk[i] = rebuild(k)
		}
		return ir.WithChildren(e, nk)
	}
	return rebuild(t)
}

// PicardModel returns the linear model of the Picard linearisation of a
// nonlinear model (Picard), or the model itself when it is linear.
func PicardModel(m *Model) (*Model, error) {
	if !m.Nonlinear() {
		return m, nil
	}
	pl, err := Picard(m)
	if err != nil {
		return nil, err
	}
	return pl.Model, nil
}
