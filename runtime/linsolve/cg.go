package linsolve

import (
	"fmt"

	"gonum.org/v1/gonum/floats"
)

// CG solves A x = b for symmetric positive definite A by the preconditioned
// conjugate gradient method (Hestenes & Stiefel 1952, J. Res. Nat. Bur.
// Standards 49; preconditioned form as in Saad 2003, Algorithm 9.1). M
// must be symmetric positive definite too; nil means Identity. x holds the
// initial guess on entry and the solution on return.
//
// The residual is updated by recurrence; when the recurrence meets the
// tolerance the true residual b − A x is recomputed, and if it does not
// meet it, iteration restarts from the true residual (residual
// replacement), so Result.Residual always satisfies the tolerance.
//
// Errors: *BreakdownError if pᵀAp ≤ 0 or rᵀM⁻¹r ≤ 0 (A or M not SPD),
// *NonFiniteError on NaN/Inf, *NotConvergedError after MaxIter iterations.
func CG(A Operator, b, x []float64, M Preconditioner, opts Options) (Result, error) {
	const name = "cg"
	mon := newMonitor(name, A, b, x, opts)
	if mon.bnorm == 0 {
		return zeroRHS(name, x), nil
	}
	if M == nil {
		M = Identity{}
	}
	n := A.Dim()
	r := make([]float64, n)
	z := make([]float64, n)
	p := make([]float64, n)
	q := make([]float64, n)

	rn := residual(A, b, x, r)
	if !finite(rn) {
		return Result{}, &NonFiniteError{Solver: name, Iter: 0, What: "initial residual"}
	}
	if rn <= mon.target {
		return Result{Solver: name, Residual: mon.rel(rn)}, nil
	}
	M.Solve(z, r)
	copy(p, z)
	rz := floats.Dot(r, z)
	for it := 1; it <= mon.maxIter; it++ {
		if !(rz > 0) {
			if !finite(rz) {
				return Result{}, &NonFiniteError{Solver: name, Iter: it, What: "preconditioned residual"}
			}
			return Result{}, &BreakdownError{Solver: name, Iter: it, What: fmt.Sprintf("rᵀM⁻¹r = %g is not positive (preconditioner not SPD)", rz)}
		}
		A.Apply(q, p)
		pq := floats.Dot(p, q)
		if !finite(pq) {
			return Result{}, &NonFiniteError{Solver: name, Iter: it, What: "pᵀAp"}
		}
		if pq <= 0 {
			return Result{}, &BreakdownError{Solver: name, Iter: it, What: fmt.Sprintf("pᵀAp = %g is not positive (matrix not SPD)", pq)}
		}
		alpha := rz / pq
		floats.AddScaled(x, alpha, p)
		floats.AddScaled(r, -alpha, q)
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
			// Residual replacement: restart the directions from the true residual.
			M.Solve(z, r)
			copy(p, z)
			rz = floats.Dot(r, z)
			continue
		}
		M.Solve(z, r)
		rzNew := floats.Dot(r, z)
		beta := rzNew / rz
		rz = rzNew
		floats.AddScaledTo(p, z, beta, p)
	}
	rn = residual(A, b, x, r)
	return Result{Solver: name, Iterations: mon.maxIter, Residual: mon.rel(rn)}, mon.notConverged(mon.maxIter, rn)
}
