package linsolve

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/runtime/sparse"
	"gonum.org/v1/gonum/floats"
)

// parallelCSR applies a CSR matrix with MulVecParallel.
type parallelCSR struct {
	A       *sparse.CSR
	workers int
}

func (p parallelCSR) Dim() int               { return p.A.N }
func (p parallelCSR) Apply(dst, x []float64) { p.A.MulVecParallel(dst, x, p.workers) }

// NewPreconditioner builds the preconditioner of the given kind for A.
func NewPreconditioner(kind PrecondKind, A *sparse.CSR) (Preconditioner, error) {
	switch kind {
	case PrecondNone:
		return Identity{}, nil
	case PrecondJacobi:
		return NewJacobi(A)
	case PrecondILU0:
		return NewILU0(A)
	}
	panic(fmt.Sprintf("linsolve: unknown PrecondKind %d", int(kind)))
}

// Solve solves A x = b with the method and preconditioner named in opts.
// x holds the initial guess for the iterative methods (ignored by
// MethodDirect) and the solution on return. Before solving, A and b are
// scanned for NaN/Inf (→ *NonFiniteError with Iter 0).
//
// MethodDirect factors with FactorSparseLU(A, NestedDissection(A),
// DefaultPivotTol) and then applies up to
// two steps of iterative refinement while the explicit residual exceeds
// the tolerance; it reports the residual it reaches without a
// not-converged error (the factorisation is as accurate as the
// conditioning allows). Result.Iterations counts refinement steps.
func Solve(A *sparse.CSR, b, x []float64, opts Options) (Result, error) {
	name := opts.Method.String()
	checkSquare(name, A)
	if len(b) != A.N || len(x) != A.N {
		panic(fmt.Sprintf("linsolve: Solve: matrix %d×%d, len(b) = %d, len(x) = %d", A.N, A.N, len(b), len(x)))
	}
	for i := 0; i < A.N; i++ {
		for k := A.RowPtr[i]; k < A.RowPtr[i+1]; k++ {
			if !finite(A.Val[k]) {
				return Result{}, &NonFiniteError{Solver: name, Iter: 0, What: fmt.Sprintf("matrix entry (%d,%d) is %v", i, A.Col[k], A.Val[k])}
			}
		}
		if !finite(b[i]) {
			return Result{}, &NonFiniteError{Solver: name, Iter: 0, What: fmt.Sprintf("right-hand side entry %d is %v", i, b[i])}
		}
	}
	var op Operator = A
	if opts.Workers > 1 {
		op = parallelCSR{A, opts.Workers}
	}
	if opts.Method == MethodDirect {
		return solveDirect(A, op, b, x, opts)
	}
	var M Preconditioner
	var err error
	if opts.Precond == PrecondILU0 && opts.ILUShift != 0 {
		M, err = NewILU0Shifted(A, opts.ILUShift)
	} else {
		M, err = NewPreconditioner(opts.Precond, A)
	}
	if err != nil {
		return Result{}, err
	}
	switch opts.Method {
	case MethodCG:
		return CG(op, b, x, M, opts)
	case MethodGMRES:
		return GMRES(op, b, x, M, opts)
	case MethodBiCGStab:
		return BiCGStab(op, b, x, M, opts)
	}
	panic(fmt.Sprintf("linsolve: unknown Method %d", int(opts.Method)))
}

func solveDirect(A *sparse.CSR, op Operator, b, x []float64, opts Options) (Result, error) {
	const name = "direct"
	f, err := FactorSparseLU(A, NestedDissection(A), DefaultPivotTol)
	if err != nil {
		return Result{}, err
	}
	n := A.N
	bn := floats.Norm(b, 2)
	if bn == 0 {
		return zeroRHS(name, x), nil
	}
	target := math.Max(opts.relTol()*bn, opts.AbsTol)
	f.Solve(x, b)
	r := make([]float64, n)
	d := make([]float64, n)
	rn := residual(op, b, x, r)
	steps := 0
	for ; steps < 2 && rn > target; steps++ {
		f.Solve(d, r)
		floats.Add(x, d)
		rn2 := residual(op, b, x, r)
		if opts.Progress != nil {
			opts.Progress(steps+1, rn2/bn)
		}
		if !(rn2 < rn) {
			floats.Sub(x, d) // refinement did not help: keep the previous x
			rn = residual(op, b, x, r)
			steps++
			break
		}
		rn = rn2
	}
	if !finite(rn) {
		return Result{}, &NonFiniteError{Solver: name, Iter: steps, What: "solution"}
	}
	return Result{Solver: name, Iterations: steps, Residual: rn / bn}, nil
}
