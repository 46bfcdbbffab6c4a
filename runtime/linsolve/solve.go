package linsolve

import (
	"fmt"
	"math"
	"time"

	"github.com/formwright/formwright/runtime/sparse"
	"gonum.org/v1/gonum/floats"
)

// parallelCSR applies a CSR matrix with mulVec (row chunks taken by the
// workers from a shared counter; bitwise the same as A.MulVec).
type parallelCSR struct {
	A       *sparse.CSR
	workers int
}

func (p parallelCSR) Dim() int               { return p.A.N }
func (p parallelCSR) Apply(dst, x []float64) { mulVec(p.A, dst, x, p.workers) }

// NewPreconditioner builds the preconditioner of the given kind for A.
func NewPreconditioner(kind PrecondKind, A *sparse.CSR) (Preconditioner, error) {
	switch kind {
	case PrecondNone:
		return Identity{}, nil
	case PrecondJacobi:
		return NewJacobi(A)
	case PrecondILU0:
		return NewILU0(A)
	case PrecondAMG:
		return NewAMG(A, nil, AMGOptions{})
	case PrecondAMGBlock:
		panic("linsolve: PrecondAMGBlock needs a Layout: use Prepare with Options.Layout or NewBlockPreconditioner")
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
	lu   *scaledLU
	M    Preconditioner
}

// scaledLU is the LU factorisation of the symmetrically scaled matrix
// S A S, S = diag(|a_ii|^(−1/2)) (1 where a_ii = 0), applied as
// A⁻¹ = S (SAS)⁻¹ S. The scaling gives every nonzero diagonal entry
// magnitude 1, so the threshold pivoting keeps the diagonal pivots of the
// fill-reducing order where a block of the matrix is much smaller than
// another (the pressure block of a stabilised saddle-point system is
// O(h²) against the viscous block): symmetric diagonal equilibration,
// common practice before sparse LU (e.g. Duff, Erisman & Reid, Direct
// Methods for Sparse Matrices, 2nd ed. 2017, on scaling; recalled from
// memory).
type scaledLU struct {
	f   *SparseLU
	s   []float64
	tmp []float64
}

// ScaleSpread: the direct solver scales the matrix when its nonzero
// diagonal entries span more than this factor in magnitude, as the blocks
// of a stabilised saddle-point system do (about 10⁷ for the seep-cell
// Stokes example); scalar problems, whose diagonals span little, are
// factored as they are, where the scaling only perturbs the round-off of
// ill-conditioned solves (common practice, no source for the value).
const ScaleSpread = 1e4

func factorScaled(A *sparse.CSR, scale bool, progress func(done, total int)) (*scaledLU, error) {
	s := make([]float64, A.N)
	lo, hi := math.Inf(1), 0.0
	for i := 0; i < A.N; i++ {
		s[i] = 1
		coupled := false
		for k := A.RowPtr[i]; k < A.RowPtr[i+1]; k++ {
			coupled = coupled || int(A.Col[k]) != i && A.Val[k] != 0
		}
		if !coupled {
			continue // a decoupled row (an eliminated Dirichlet dof) needs no pivot choice
		}
		for k := A.RowPtr[i]; k < A.RowPtr[i+1]; k++ {
			if v := math.Abs(A.Val[k]); int(A.Col[k]) == i && v != 0 {
				s[i] = 1 / math.Sqrt(v)
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
	}
	if !scale || !(hi > ScaleSpread*lo) {
		for i := range s {
			s[i] = 1
		}
	}
	As := A.Clone()
	for i := 0; i < A.N; i++ {
		for k := As.RowPtr[i]; k < As.RowPtr[i+1]; k++ {
			As.Val[k] *= s[i] * s[As.Col[k]]
		}
	}
	f, err := factorSparseLU(As, NestedDissection(As), DefaultPivotTol, progress)
	if err != nil {
		return nil, err
	}
	return &scaledLU{f: f, s: s, tmp: make([]float64, A.N)}, nil
}

func (l *scaledLU) bytes() int64 { return l.f.Bytes() + int64(16*len(l.s)) }

// Solve sets dst = A⁻¹ b.
func (l *scaledLU) Solve(dst, b []float64) {
	for i, v := range b {
		l.tmp[i] = l.s[i] * v
	}
	l.f.Solve(dst, l.tmp)
	for i := range dst {
		dst[i] *= l.s[i]
	}
}

// Prepare checks A for NaN/Inf (→ *NonFiniteError with Iter 0) and builds
// the factorisation or preconditioner that opts asks for. MethodDirect
// factors the symmetrically scaled matrix S A S, S = diag(|a_ii|^(−1/2))
// (scaledLU), when the diagonal spans more than ScaleSpread and unless
// opts.Unscaled.
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
	var progress func(done, total int)
	if opts.OnPhase != nil {
		start := time.Now()
		progress = func(done, total int) {
			opts.OnPhase(PhaseReport{Phase: "factor", Step: done, Steps: total, Detail: fmt.Sprintf("%d of %d columns", done, total), Elapsed: time.Since(start)})
		}
	}
	amgOpts := opts.AMG
	if amgOpts.Workers == 0 {
		amgOpts.Workers = opts.Workers
	}
	if amgOpts.OnPhase == nil {
		amgOpts.OnPhase = opts.OnPhase
	}
	if opts.Method == MethodCG {
		amgOpts.Symmetric = true // CG needs a symmetric A anyway
	}
	switch {
	case opts.Method == MethodDirect:
		p.lu, err = factorScaled(A, !opts.Unscaled, progress)
	case opts.Precond == PrecondAMG:
		p.M, err = NewAMG(A, opts.Layout, amgOpts)
	case opts.Precond == PrecondAMGBlock:
		p.M, err = NewBlockPreconditioner(A, opts.Layout, BlockOptions{AMG: amgOpts, Schur: opts.Schur, OnPhase: opts.OnPhase})
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

func solveDirect(f *scaledLU, op Operator, b, x []float64, opts Options) (Result, error) {
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
