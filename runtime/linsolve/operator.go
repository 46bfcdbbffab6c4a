package linsolve

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/floats"
)

// Operator is a square linear map. *sparse.CSR satisfies it.
type Operator interface {
	Dim() int
	Apply(dst, x []float64) // dst = A x; dst and x do not alias
}

// Preconditioner applies an approximation of A⁻¹.
type Preconditioner interface {
	Solve(dst, r []float64) // dst ≈ A⁻¹ r; dst and r do not alias
}

// Identity is the trivial preconditioner dst = r.
type Identity struct{}

// Solve copies r into dst.
func (Identity) Solve(dst, r []float64) { copy(dst, r) }

// monitor holds the stopping test shared by the Krylov solvers.
type monitor struct {
	solver   string
	bnorm    float64
	target   float64 // absolute residual threshold
	maxIter  int
	progress func(int, float64)
}

func newMonitor(solver string, A Operator, b, x []float64, opts Options) monitor {
	n := A.Dim()
	if len(b) != n || len(x) != n {
		panic(fmt.Sprintf("linsolve: %s: operator dimension %d, len(b) = %d, len(x) = %d", solver, n, len(b), len(x)))
	}
	bn := floats.Norm(b, 2)
	return monitor{
		solver:   solver,
		bnorm:    bn,
		target:   math.Max(opts.relTol()*bn, opts.AbsTol),
		maxIter:  opts.maxIter(),
		progress: opts.Progress,
	}
}

// rel converts an absolute residual norm to a relative one.
func (m *monitor) rel(r float64) float64 {
	if m.bnorm == 0 {
		return r
	}
	return r / m.bnorm
}

func (m *monitor) report(it int, rnorm float64) {
	if m.progress != nil {
		m.progress(it, m.rel(rnorm))
	}
}

func (m *monitor) relTarget() float64 { return m.rel(m.target) }

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// residual computes r = b − A x and returns ‖r‖.
func residual(A Operator, b, x, r []float64) float64 {
	A.Apply(r, x)
	floats.SubTo(r, b, r)
	return floats.Norm(r, 2)
}

func (m *monitor) notConverged(it int, rnorm float64) error {
	return &NotConvergedError{Solver: m.solver, Iter: it, Residual: m.rel(rnorm), Tol: m.relTarget()}
}

// zeroRHS handles b = 0: the solution is x = 0.
func zeroRHS(solver string, x []float64) Result {
	for i := range x {
		x[i] = 0
	}
	return Result{Solver: solver}
}
