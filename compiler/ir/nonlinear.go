package ir

// NonlinearForm is the discrete problem F(u; v) = 0 of a nonlinear model
// for one method, as the two lowered forms Newton's method needs at an
// iterate u_k. Both read u_k (and its derivatives) as FieldD leaves with
// Role Previous:
//
//   - Residual has Linear terms only, Σ_Linear ∫ Coef D^β v = −F(u_k; v),
//     so that its assembled right-hand side is −F;
//   - Jacobian has Bilinear terms only, Σ ∫ Coef D^α δu D^β v =
//     J(u_k; δu, v), with the increment δu as the trial function.
//
// Their union (Step) is the linear problem J δu = −F of one Newton step,
// which assembles the matrix and the residual in one pass.
type NonlinearForm struct {
	Residual *LoweredForm
	Jacobian *LoweredForm
	// Approximations lists, in words, where Jacobian differs from the
	// exact derivative of Residual (empty: it is exact).
	Approximations []string
}

// Step returns the Newton step J(u_k; δu, v) = −F(u_k; v) as one lowered
// form with Newton set: the unknowns, value and mean conditions of the
// residual, and per domain the Bilinear terms of the Jacobian and the
// Linear terms of the residual, domains in the order they first appear
// in the residual and then in the Jacobian.
func (nf *NonlinearForm) Step() *LoweredForm {
	r := nf.Residual
	step := *r
	step.Newton = true
	step.Integrals = nil
	index := map[Domain]int{}
	add := func(in Integral, bilinear bool) {
		k, ok := index[in.Domain]
		if !ok {
			k = len(step.Integrals)
			index[in.Domain] = k
			step.Integrals = append(step.Integrals, Integral{Domain: in.Domain})
		}
		if bilinear {
			step.Integrals[k].Bilinear = append(step.Integrals[k].Bilinear, in.Bilinear...)
		} else {
			step.Integrals[k].Linear = append(step.Integrals[k].Linear, in.Linear...)
		}
	}
	for _, in := range r.Integrals {
		add(in, false)
	}
	for _, in := range nf.Jacobian.Integrals {
		add(in, true)
	}
	step.MaxDerivative = max(r.MaxDerivative, nf.Jacobian.MaxDerivative)
	return &step
}
