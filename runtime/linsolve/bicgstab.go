package linsolve

import (
	"fmt"

	"gonum.org/v1/gonum/floats"
)

// BiCGStab solves A x = b by the stabilised biconjugate gradient method
// (van der Vorst 1992, SIAM J. Sci. Stat. Comput. 13, 631–644) with right
// preconditioning (Saad 2003, Algorithm 7.7 applied to A M⁻¹), so the
// residual it monitors is the true residual up to rounding. Each iteration
// costs two products with A and two preconditioner solves. M nil means
// Identity. x holds the initial guess on entry and the solution on return.
// The shadow residual is the initial residual. When the recurrence meets
// the tolerance the true residual is recomputed; if it misses, iteration
// restarts from it.
//
// Errors: *BreakdownError when r̂ᵀr, r̂ᵀv or ω vanish, *NonFiniteError on
// NaN/Inf, *NotConvergedError after MaxIter iterations.
func BiCGStab(A Operator, b, x []float64, M Preconditioner, opts Options) (Result, error) {
	const name = "bicgstab"
	mon := newMonitor(name, A, b, x, opts)
	if mon.bnorm == 0 {
		return zeroRHS(name, x), nil
	}
	if M == nil {
		M = Identity{}
	}
	n := A.Dim()
	r := make([]float64, n)
	rhat := make([]float64, n)
	p := make([]float64, n)
	v := make([]float64, n)
	ph := make([]float64, n)
	s := make([]float64, n)
	sh := make([]float64, n)
	t := make([]float64, n)

	rn := residual(A, b, x, r)
	if !finite(rn) {
		return Result{}, &NonFiniteError{Solver: name, Iter: 0, What: "initial residual"}
	}
	if rn <= mon.target {
		return Result{Solver: name, Residual: mon.rel(rn)}, nil
	}
	restart := func() {
		copy(rhat, r)
		copy(p, r)
	}
	restart()
	rho := floats.Dot(rhat, r)
	fresh := true
	brokeSinceStep := false // a breakdown restart with no step since
	var alphaPrev, omegaPrev float64
	for it := 1; it <= mon.maxIter; it++ {
		if !fresh {
			rhoNew := floats.Dot(rhat, r)
			if rhoNew == 0 {
				// r̂ᵀr = 0 with r ≠ 0 happens when the residual has moved
				// off the support of r̂ (e.g. a right-hand side living only
				// on Dirichlet rows, which converge at once). Restart once
				// with r̂ = r; a second breakdown right after it is real.
				if !brokeSinceStep {
					restart()
					rho = floats.Dot(rhat, r)
					brokeSinceStep = true
					fresh = true
					it--
					continue
				}
				return Result{}, &BreakdownError{Solver: name, Iter: it, What: "r̂ᵀr = 0"}
			}
			brokeSinceStep = false
			beta := (rhoNew / rho) * (alphaPrev / omegaPrev)
			rho = rhoNew
			// p = r + β (p − ω v)
			floats.AddScaled(p, -omegaPrev, v)
			floats.AddScaledTo(p, r, beta, p)
		}
		fresh = false
		M.Solve(ph, p)
		A.Apply(v, ph)
		rv := floats.Dot(rhat, v)
		if !finite(rv) {
			return Result{}, &NonFiniteError{Solver: name, Iter: it, What: "r̂ᵀv"}
		}
		if rv == 0 {
			return Result{}, &BreakdownError{Solver: name, Iter: it, What: "r̂ᵀA M⁻¹p = 0"}
		}
		alpha := rho / rv
		floats.AddScaledTo(s, r, -alpha, v)
		sn := floats.Norm(s, 2)
		if !finite(sn) {
			return Result{}, &NonFiniteError{Solver: name, Iter: it, What: "residual norm"}
		}
		if sn <= mon.target {
			floats.AddScaled(x, alpha, ph)
			mon.report(it, sn)
			rn = residual(A, b, x, r)
			if rn <= mon.target {
				return Result{Solver: name, Iterations: it, Residual: mon.rel(rn)}, nil
			}
			restart()
			rho = floats.Dot(rhat, r)
			fresh = true
			continue
		}
		M.Solve(sh, s)
		A.Apply(t, sh)
		tt := floats.Dot(t, t)
		ts := floats.Dot(t, s)
		if !finite(tt) || !finite(ts) {
			return Result{}, &NonFiniteError{Solver: name, Iter: it, What: "tᵀs"}
		}
		if tt == 0 || ts == 0 {
			return Result{}, &BreakdownError{Solver: name, Iter: it, What: fmt.Sprintf("ω = tᵀs/tᵀt vanishes (tᵀs = %g, tᵀt = %g)", ts, tt)}
		}
		omega := ts / tt
		floats.AddScaled(x, alpha, ph)
		floats.AddScaled(x, omega, sh)
		floats.AddScaledTo(r, s, -omega, t)
		rn = floats.Norm(r, 2)
		if !finite(rn) {
			return Result{}, &NonFiniteError{Solver: name, Iter: it, What: "residual norm"}
		}
		mon.report(it, rn)
		if rn <= mon.target {
			rn = residual(A, b, x, r)
			if rn <= mon.target {
				return Result{Solver: name, Iterations: it, Residual: mon.rel(rn)}, nil
			}
			restart()
			rho = floats.Dot(rhat, r)
			fresh = true
			continue
		}
		alphaPrev, omegaPrev = alpha, omega
	}
	rn = residual(A, b, x, r)
	return Result{Solver: name, Iterations: mon.maxIter, Residual: mon.rel(rn)}, mon.notConverged(mon.maxIter, rn)
}
