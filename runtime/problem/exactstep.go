package problem

import (
	"math"

	"github.com/formwright/formwright/runtime/assemble"
	"github.com/formwright/formwright/runtime/linsolve"
)

// A form that reads recovered second derivatives (ir.Recovered) has a
// Jacobian that holds the recovered field fixed: the recovery couples each
// cell to its vertices' patches, and the exact Jacobian would have the
// sparsity of a second ring of neighbours. Newton's method with that
// Jacobian converges only linearly (a factor about 0.5 per iteration on
// the lid-driven cavity). exactStep restores the exact Jacobian where it
// is cheap to: it solves J δ = −F for the exact J by GMRES (Saad & Schultz
// 1986), right-preconditioned by the factorised fixed-recovery Jacobian
// and started from its step, with the products J v taken as directional
// differences of the residual, recovery included (the Jacobian-free
// Newton–Krylov method; Knoll & Keyes 2004, J. Comput. Phys. 193,
// 357–397). Each product costs one assembly and one recovery; the
// factorisation is reused. The forcing term η_k, the relative residual
// GMRES must reach, is Eisenstat & Walker's second choice (1996, SIAM J.
// Sci. Comput. 17, 16–32), η_k = γ(‖F_k‖/‖F_{k−1}‖)² with γ = 0.9,
// safeguarded by γη_{k−1}² when that exceeds 0.1, capped at etaMax and
// kept above half the Newton tolerance over ‖F_k‖ (Kelley 2003, §3.2.3
// [memory for the safeguards]).

// Limits of the corrected step: the largest forcing term, and the GMRES
// iterations (each one an assembly) one Newton iteration may spend
// (common practice, no source for the values).
const (
	etaMax            = 0.1
	exactStepMaxIters = 10
)

// directionalJacobian is the operator v ↦ J(u) v of the constrained
// Newton system, from the residual at u + εv: (F(u + εv) − F(u))/ε on the
// free dofs, v on the fixed ones (whose rows Constrain makes identity
// rows). ε = √(machine ε)·(1 + ‖u‖)/‖v‖ (Knoll & Keyes 2004, §2.2
// [memory]).
type directionalJacobian struct {
	s     *system
	in    assemble.Input
	u, f0 []float64 // the iterate and −F(u) on the free dofs
	fixed []bool
	x     []float64
	unorm float64
	evals int
	err   error
}

func (d *directionalJacobian) Dim() int { return len(d.u) }

func (d *directionalJacobian) Apply(dst, v []float64) {
	vn := norm2(v)
	if vn == 0 || d.err != nil {
		clear(dst)
		return
	}
	eps := math.Sqrt(0x1p-52) * (1 + d.unorm) / vn
	for i := range d.x {
		d.x[i] = d.u[i] + eps*v[i]
	}
	in := d.in
	in.Previous = d.x
	d.evals++
	if err := d.s.assemble(in); err != nil {
		d.err = err
		clear(dst)
		return
	}
	for i, b := range d.s.b {
		if d.fixed[i] {
			dst[i] = v[i]
		} else {
			dst[i] = (d.f0[i] - b) / eps // (F(u+εv) − F(u))/ε with F = −b
		}
	}
}

// factorPreconditioner applies the prepared direct solver as M⁻¹.
type factorPreconditioner struct{ p *linsolve.Prepared }

func (f factorPreconditioner) Solve(dst, r []float64) {
	clear(dst)
	// A failed solve leaves dst zero, which GMRES reports as a breakdown,
	// and exactStep then keeps the fixed-recovery step.
	f.p.Solve(r, dst)
}

// exactStep improves delta in place, the step of the fixed-recovery
// Jacobian for the constrained system whose right-hand side is rhs
// (−F(u), zero on the fixed dofs), toward the step of the exact Jacobian,
// to relative residual eta, and reports whether it reached eta. It
// returns the residual evaluations spent. When GMRES does not reach eta
// within exactStepMaxIters (the directional differences are then not
// those of a smooth map, or the fixed-recovery Jacobian is a poor
// preconditioner), or fails, delta holds whatever GMRES left, and the
// caller goes back to the fixed-recovery step, still a descent direction
// for the line search to try.
func (s *system) exactStep(u, rhs, delta []float64, fixed []bool, in assemble.Input, eta float64) (int, bool, error) {
	op := &directionalJacobian{s: s, in: in, u: u, f0: rhs, fixed: fixed, x: make([]float64, len(u)), unorm: norm2(u)}
	_, err := linsolve.GMRES(op, rhs, delta, factorPreconditioner{s.prepared}, linsolve.Options{RelTol: eta, MaxIter: exactStepMaxIters, Restart: exactStepMaxIters})
	if op.err != nil {
		return op.evals, false, op.err // an assembly failed: not a numerical matter of the step
	}
	return op.evals, err == nil, nil
}

// forcingTerm is η_k of Eisenstat & Walker's second choice with the
// safeguards above; r and rPrev are ‖F_k‖ and ‖F_{k−1}‖, etaPrev is
// η_{k−1} (0 on the first iteration) and tol the Newton tolerance on ‖F‖.
func forcingTerm(r, rPrev, etaPrev, tol float64) float64 {
	const gamma = 0.9
	if etaPrev == 0 {
		return etaMax
	}
	eta := gamma * (r / rPrev) * (r / rPrev)
	if s := gamma * etaPrev * etaPrev; s > 0.1 {
		eta = math.Max(eta, s)
	}
	eta = math.Min(eta, etaMax)
	return math.Max(eta, 0.5*tol/r)
}
