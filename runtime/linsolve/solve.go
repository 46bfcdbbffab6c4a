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
//
// Solve is Prepare followed by one Prepared.Solve.
func Solve(A *sparse.CSR, b, x []float64, opts Options) (Result, error) {
	p, err := Prepare(A, opts)
	if err != nil {
		return Result{}, err
	}
	return p.Solve(b, x)
}

// Prepared is a solver set up for one matrix: the sparse LU factors of
// MethodDirect, or the preconditioner of an iterative method. Its Solve
// can be called for any number of right-hand sides, which saves the
// factorisation when only the right-hand side changes (time steps with a
// constant matrix). The matrix must not change while it is in use.
type Prepared struct {
	A    *sparse.CSR
	op   Operator
	opts Options
	lu   *SparseLU
	M    Preconditioner
}

// Prepare checks A for NaN/Inf (→ *NonFiniteError with Iter 0) and builds
// the factorisation or preconditioner that opts asks for.
func Prepare(A *sparse.CSR, opts Options) (*Prepared, error) {
	name := opts.Method.String()
	checkSquare(name, A)
	for i := 0; i < A.N; i++ {
		for k := A.RowPtr[i]; k < A.RowPtr[i+1]; k++ {
			if !finite(A.Val[k]) {
				return nil, &NonFiniteError{Solver: name, Iter: 0, What: fmt.Sprintf("matrix entry (%d,%d) is %v", i, A.Col[k], A.Val[k])}
			}
		}
	}
	p := &Prepared{A: A, op: A, opts: opts}
	if opts.Workers > 1 {
		p.op = parallelCSR{A, opts.Workers}
	}
	var err error
	switch {
	case opts.Method == MethodDirect:
		p.lu, err = FactorSparseLU(A, NestedDissection(A), DefaultPivotTol)
	case opts.Precond == PrecondILU0 && opts.ILUShift != 0:
		p.M, err = NewILU0Shifted(A, opts.ILUShift)
	default:
		switch opts.Method {
		case MethodCG, MethodGMRES, MethodBiCGStab:
		default:
			panic(fmt.Sprintf("linsolve: unknown Method %d", int(opts.Method)))
		}
		p.M, err = NewPreconditioner(opts.Precond, A)
	}
	if err != nil {
		return nil, err
	}
	return p, nil
}

// Solve solves A x = b with the prepared matrix; x is the initial guess of
// the iterative methods and the solution on return. b is scanned for
// NaN/Inf first.
func (p *Prepared) Solve(b, x []float64) (Result, error) {
	A, opts := p.A, p.opts
	name := opts.Method.String()
	if len(b) != A.N || len(x) != A.N {
		panic(fmt.Sprintf("linsolve: Solve: matrix %d×%d, len(b) = %d, len(x) = %d", A.N, A.N, len(b), len(x)))
	}
	for i := range b {
		if !finite(b[i]) {
			return Result{}, &NonFiniteError{Solver: name, Iter: 0, What: fmt.Sprintf("right-hand side entry %d is %v", i, b[i])}
		}
	}
	switch opts.Method {
	case MethodDirect:
		return solveDirect(p.lu, p.op, b, x, opts)
	case MethodCG:
		return CG(p.op, b, x, p.M, opts)
	case MethodGMRES:
		return GMRES(p.op, b, x, p.M, opts)
	case MethodBiCGStab:
		return BiCGStab(p.op, b, x, p.M, opts)
	}
	panic(fmt.Sprintf("linsolve: unknown Method %d", int(opts.Method)))
}

func solveDirect(f *SparseLU, op Operator, b, x []float64, opts Options) (Result, error) {
	const name = "direct"
	n := op.Dim()
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
