package linsolve

import (
	"fmt"
	"strings"
)

// Method selects a solver in Solve. The zero value is MethodGMRES, which
// suits any nonsingular matrix.
type Method int

const (
	MethodGMRES    Method = iota // restarted GMRES(m), right preconditioned
	MethodCG                     // preconditioned CG, for symmetric positive definite A
	MethodBiCGStab               // BiCGStab, right preconditioned
	MethodDirect                 // sparse LU, nested dissection, threshold partial pivoting
)

var methodNames = [...]string{MethodGMRES: "gmres", MethodCG: "cg", MethodBiCGStab: "bicgstab", MethodDirect: "direct"}

func (m Method) String() string {
	if m >= 0 && int(m) < len(methodNames) {
		return methodNames[m]
	}
	return fmt.Sprintf("Method(%d)", int(m))
}

// ParseMethod parses "cg", "gmres", "bicgstab" or "direct" (case
// insensitive).
func ParseMethod(s string) (Method, error) {
	for m, name := range methodNames {
		if strings.EqualFold(s, name) {
			return Method(m), nil
		}
	}
	return 0, fmt.Errorf("linsolve: unknown method %q (want one of cg, gmres, bicgstab, direct)", s)
}

// PrecondKind selects a preconditioner in Solve. The zero value is
// PrecondNone.
type PrecondKind int

const (
	PrecondNone   PrecondKind = iota // identity
	PrecondJacobi                    // inverse of the diagonal
	PrecondILU0                      // incomplete LU with zero fill
	// PrecondAMG is one V-cycle of smoothed-aggregation AMG on the whole
	// matrix (NewAMG), with Options.AMG and Options.Layout.
	PrecondAMG
	// PrecondAMGBlock is the block upper-triangular preconditioner of a
	// saddle-point system (NewBlockPreconditioner): AMG on the primary
	// fields, a Schur-complement approximation on the constraint fields
	// of Options.Layout. Use it with GMRES.
	PrecondAMGBlock
)

var precondNames = [...]string{PrecondNone: "none", PrecondJacobi: "jacobi", PrecondILU0: "ilu0", PrecondAMG: "amg", PrecondAMGBlock: "amg-block"}

func (p PrecondKind) String() string {
	if p >= 0 && int(p) < len(precondNames) {
		return precondNames[p]
	}
	return fmt.Sprintf("PrecondKind(%d)", int(p))
}

// ParsePrecond parses "none", "jacobi", "ilu0", "amg" or "amg-block"
// (case insensitive).
func ParsePrecond(s string) (PrecondKind, error) {
	for p, name := range precondNames {
		if strings.EqualFold(s, name) {
			return PrecondKind(p), nil
		}
	}
	return 0, fmt.Errorf("linsolve: unknown preconditioner %q (want one of none, jacobi, ilu0, amg, amg-block)", s)
}

// Default values used when the corresponding Options field is zero. They
// are common practice, no source.
const (
	DefaultRelTol  = 1e-10
	DefaultMaxIter = 10000
	DefaultRestart = 50
)

// Options controls the solvers. The zero value asks for GMRES(50) without
// preconditioning to relative tolerance 1e-10.
type Options struct {
	Method  Method
	Precond PrecondKind

	// Stop when ‖b − A x‖ ≤ max(RelTol·‖b‖, AbsTol). If both are zero,
	// RelTol = DefaultRelTol.
	RelTol, AbsTol float64
	// MaxIter bounds the iterations (GMRES: inner steps over all cycles;
	// BiCGStab: full steps of two products each). 0 means DefaultMaxIter.
	MaxIter int
	// Restart is the GMRES cycle length m. 0 means DefaultRestart.
	Restart int
	// ILUShift > 0 makes the ILU(0) preconditioner factorise
	// A + ILUShift·diag(A) instead of A: the shifted incomplete
	// factorisation of Manteuffel (1980, Math. Comp. 34). ILU(0) of an
	// advection-dominated stabilised matrix can have factors whose inverse
	// grows exponentially with the mesh (Elman 1986, Math. Comp. 47); a
	// shift of about 0.1 keeps them bounded at a small cost in quality.
	ILUShift float64
	// Unscaled makes MethodDirect factor A itself instead of the
	// diagonally scaled S A S (see Prepare); for comparison only.
	Unscaled bool
	// Workers > 1 makes Solve's matrix–vector products, and the AMG setup
	// and cycle, run on that many goroutines (rows in chunks; bitwise the
	// same results as serial).
	Workers int
	// Progress, if not nil, is called after every iteration with the
	// iteration count and the current (recurrence) relative residual.
	Progress func(iter int, relres float64)
	// OnPhase, if not nil, is called during the long phases of Prepare:
	// each level of an AMG setup, every tenth of a sparse LU
	// factorisation, the block preconditioner's setup.
	OnPhase func(PhaseReport)

	// Layout gives the fields, components and node coordinates of the
	// dofs, for PrecondAMG (near-null-space vectors, node blocks) and
	// PrecondAMGBlock (which dofs form the constraint block). nil means
	// one scalar field.
	Layout *Layout
	// AMG tunes PrecondAMG and the AMG of PrecondAMGBlock; its zero value
	// is the default V(1,1) cycle. Its Workers and OnPhase default to the
	// fields above.
	AMG AMGOptions
	// Schur selects the Schur-complement approximation of
	// PrecondAMGBlock.
	Schur SchurKind
}

func (o Options) relTol() float64 {
	if o.RelTol == 0 && o.AbsTol == 0 {
		return DefaultRelTol
	}
	return o.RelTol
}

func (o Options) maxIter() int {
	if o.MaxIter <= 0 {
		return DefaultMaxIter
	}
	return o.MaxIter
}

func (o Options) restart() int {
	if o.Restart <= 0 {
		return DefaultRestart
	}
	return o.Restart
}

// Result describes a successful solve.
type Result struct {
	Solver     string  // e.g. "cg", "gmres", "direct"
	Iterations int     // iterations used (0 for direct)
	Residual   float64 // final ‖b − A x‖/‖b‖, recomputed explicitly at the end
}
