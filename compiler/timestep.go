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
func BackwardEuler(form *ir.LoweredForm) (*ir.SteppedForm, error) {
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
		mass.Integrals, mass.Dirichlet, mass.Means = []ir.Integral{{Bilinear: massTerms}}, nil, nil
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
