package compiler

import (
	"fmt"
	"math/big"

	"github.com/formwright/formwright/compiler/ir"
)

// BackwardEuler rewrites a lowered form with first time derivatives of the
// unknown into one implicit (backward) Euler step (e.g. Hughes, The Finite
// Element Method, 1987, §8.2: first order in time, unconditionally stable
// for the heat equation). Every term c ∂ₜD^αu · D^βv becomes
// c D^αu/Δt · D^βv, with Δt the quantity ir.TimeStep that kernels read
// from their input, so one stepped form, and one set of generated kernels,
// serves every step size.
//
// For a form that reads no previous iterate the old level uⁿ is the
// form's previous field: each such term adds c D^αuⁿ/Δt · D^βv to the
// linear form, and the result has no Mass. A Picard-iterated form keeps
// previous(·) for the iterate: the step form changes only the
// time-derivative terms, and Mass holds them alone, so the runtime adds
// M uⁿ to the right-hand side (see ir.SteppedForm). Time derivatives in
// boundary integrals and of second order are errors.
//
// A Newton step form (form.Newton) is stepped by backwardEulerNewton.
func BackwardEuler(form *ir.LoweredForm) (*ir.SteppedForm, error) {
	if form.Newton {
		return backwardEulerNewton(form)
	}
	picard := form.ReadsPrevious()
	step := *form
	step.Integrals = nil
	var massTerms []ir.Term
	for _, in := range form.Integrals {
		n := ir.Integral{Domain: in.Domain, Linear: append([]ir.Term(nil), in.Linear...)}
		for _, t := range in.Bilinear {
			if t.Trial.DT == 0 {
				n.Bilinear = append(n.Bilinear, t)
				continue
			}
			if in.Domain.Side != "" {
				return nil, fmt.Errorf("a time derivative in a boundary integral (side %q) cannot be stepped", in.Domain.Side)
			}
			if t.Trial.DT > 1 {
				return nil, fmt.Errorf("backward Euler steps first time derivatives, not ∂ₜ^%d", t.Trial.DT)
			}
			st := steppedTerm(t)
			n.Bilinear = append(n.Bilinear, st)
			if picard {
				massTerms = append(massTerms, st)
				continue
			}
			prevField := *t.Trial.Field
			prevField.Role = ir.Previous
			prev := *st.Trial
			prev.Field = &prevField
			n.Linear = append(n.Linear, ir.Term{Coef: ir.Prod(st.Coef.Pos(), st.Coef, &prev), Test: t.Test})
		}
		step.Integrals = append(step.Integrals, n)
	}
	out := &ir.SteppedForm{Step: &step}
	if picard {
		mass := *form
		mass.Integrals, mass.Dirichlet, mass.Means, mass.Claims = []ir.Integral{{Bilinear: massTerms}}, nil, nil, nil
		out.Mass = &mass
	}
	return out, nil
}

// steppedTerm is the backward Euler image of a first time-derivative term:
// c ∂ₜD^αu · D^βv becomes c D^αu/Δt · D^βv.
func steppedTerm(t ir.Term) ir.Term {
	p := t.Coef.Pos()
	invStep := &ir.Pow{At: ir.At{P: p}, Base: &ir.CellQ{At: ir.At{P: p}, Q: ir.TimeStep}, Exp: ir.NewNum(p, big.NewRat(-1, 1))}
	trial := *t.Trial
	trial.DT = 0
	return ir.Term{Coef: ir.Prod(p, invStep, t.Coef), Trial: &trial, Test: t.Test}
}

// backwardEulerNewton steps a Newton step form J δu = −F. The Jacobian's
// time-derivative terms c ∂ₜD^αδu · D^βv become c D^αδu/Δt · D^βv. The
// residual's coefficients read ∂ₜD^α u_k linearly, c₀ + Σ c_j ∂ₜD^α_j u_k
// (c_j free of time derivatives); backward Euler replaces ∂ₜD^α u_k by
// (D^α u_k − D^α uⁿ)/Δt, so the coefficient becomes c₀ + Σ c_j D^α_j u_k/Δt
// and the old level enters as M(u_k) uⁿ, with Mass holding the terms
// −c_j/Δt · D^α_j uⁿ · D^βv (see ir.SteppedForm). A Jacobian coefficient
// that reads ∂ₜ of the iterate, or a residual coefficient that is not
// linear in it, cannot be stepped this way and is an error.
func backwardEulerNewton(form *ir.LoweredForm) (*ir.SteppedForm, error) {
	step := *form
	step.Integrals = nil
	var massTerms []ir.Term
	readsDT := func(e ir.Expr) bool {
		return ir.Contains(e, func(x ir.Expr) bool { f, ok := x.(*ir.FieldD); return ok && f.DT > 0 })
	}
	for _, in := range form.Integrals {
		n := ir.Integral{Domain: in.Domain}
		for _, t := range in.Bilinear {
			if readsDT(t.Coef) {
				return nil, fmt.Errorf("a Jacobian coefficient reads the time derivative of the iterate, which one backward Euler step cannot provide (freeze τ and the test operator)")
			}
			if t.Trial.DT == 0 {
				n.Bilinear = append(n.Bilinear, t)
				continue
			}
			if in.Domain.Side != "" {
				return nil, fmt.Errorf("a time derivative in a boundary integral (side %q) cannot be stepped", in.Domain.Side)
			}
			if t.Trial.DT > 1 {
				return nil, fmt.Errorf("backward Euler steps first time derivatives, not ∂ₜ^%d", t.Trial.DT)
			}
			n.Bilinear = append(n.Bilinear, steppedTerm(t))
		}
		for _, t := range in.Linear {
			if !readsDT(t.Coef) {
				n.Linear = append(n.Linear, t)
				continue
			}
			if in.Domain.Side != "" {
				return nil, fmt.Errorf("a time derivative in a boundary integral (side %q) cannot be stepped", in.Domain.Side)
			}
			c0, parts, err := splitTimeDerivatives(t.Coef, form.Dim)
			if err != nil {
				return nil, err
			}
			p := t.Coef.Pos()
			invStep := &ir.Pow{At: ir.At{P: p}, Base: &ir.CellQ{At: ir.At{P: p}, Q: ir.TimeStep}, Exp: ir.NewNum(p, big.NewRat(-1, 1))}
			coef := []ir.Expr{c0}
			for _, pt := range parts {
				now := *pt.f
				now.DT = 0
				coef = append(coef, ir.Prod(p, invStep, pt.c, &now))
				trial := now
				tf := *now.Field
				tf.Role = ir.Trial
				trial.Field = &tf
				massTerms = append(massTerms, ir.Term{Coef: Simplify(ir.Prod(p, ir.Int(p, -1), invStep, pt.c), form.Dim), Trial: &trial, Test: t.Test})
			}
			n.Linear = append(n.Linear, ir.Term{Coef: Simplify(ir.Sum(p, coef...), form.Dim), Test: t.Test})
		}
		step.Integrals = append(step.Integrals, n)
	}
	out := &ir.SteppedForm{Step: &step}
	if len(massTerms) > 0 {
		mass := *form
		mass.Newton = false
		mass.Integrals, mass.Dirichlet, mass.Means, mass.Claims = []ir.Integral{{Bilinear: massTerms}}, nil, nil, nil
		out.Mass = &mass
	}
	return out, nil
}

// timePart is one term c·∂ₜD^α u_k of a coefficient.
type timePart struct {
	c ir.Expr
	f *ir.FieldD
}

// splitTimeDerivatives writes a lowered coefficient as c₀ + Σ c_j ∂ₜD^α_j u_k
// with c₀ and c_j free of time derivatives; it fails when the coefficient
// is not linear in them.
func splitTimeDerivatives(c ir.Expr, dim int) (ir.Expr, []timePart, error) {
	// Mark the time derivatives as trial functions, and expand.
	marked := ir.MapUp(c, func(x ir.Expr) ir.Expr {
		f, ok := x.(*ir.FieldD)
		if !ok || f.DT == 0 {
			return x
		}
		g := *f
		ff := *f.Field
		ff.Role = ir.Trial
		g.Field = &ff
		return &g
	})
	// Named quantities that read a time derivative are opened up.
	marked = ir.MapUp(marked, func(x ir.Expr) ir.Expr {
		if n, ok := x.(*ir.Named); ok && ir.HasRole(n.X, ir.Trial) {
			return n.X
		}
		return x
	})
	ms, err := newLowerer(&Model{Dim: dim}).monomials(marked)
	if err != nil {
		return nil, nil, fmt.Errorf("a coefficient is not linear in the time derivative of the iterate: %v", err)
	}
	p := c.Pos()
	var c0 []ir.Expr
	var parts []timePart
	index := map[[7]int]int{}
	for _, mo := range ms {
		coef := mulOf(p, mo.coef...)
		if mo.trial == nil {
			c0 = append(c0, coef)
			continue
		}
		f := *mo.trial
		ff := *f.Field
		ff.Role = ir.Previous
		f.Field = &ff
		k := fdKey(&f)
		if i, ok := index[k]; ok {
			parts[i].c = ir.Sum(p, parts[i].c, coef)
			continue
		}
		index[k] = len(parts)
		parts = append(parts, timePart{coef, &f})
	}
	for i := range parts {
		parts[i].c = Simplify(parts[i].c, dim)
	}
	if len(c0) == 0 {
		return ir.Int(p, 0), parts, nil
	}
	return Simplify(ir.Sum(p, c0...), dim), parts, nil
}
