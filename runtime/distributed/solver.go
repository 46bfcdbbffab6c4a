package distributed

import (
	"fmt"
	"strings"
)

// Method is the Krylov method (or the direct solver) of the engine.
type Method int

const (
	// MethodAuto chooses the direct solver below linsolve.DirectBelow2D
	// unknowns (DirectBelow3D in 3D), as runtime/linsolve's automatic
	// choice does, else CG for a symmetric matrix and GMRES otherwise.
	MethodAuto Method = iota
	// MethodDirect is a parallel sparse LU factorisation (MUMPS, Amestoy
	// et al. 2001, SIAM J. Matrix Anal. Appl. 23(1) [memory], where PETSc
	// has it; else SuperLU_DIST).
	MethodDirect
	MethodCG
	MethodGMRES
	MethodBiCGStab
)

var methodNames = []string{"auto", "direct", "cg", "gmres", "bicgstab"}

func (m Method) String() string {
	if m >= 0 && int(m) < len(methodNames) {
		return methodNames[m]
	}
	return fmt.Sprintf("Method(%d)", int(m))
}

// Precond is the preconditioner of the engine's Krylov methods.
type Precond int

const (
	// PrecondAMG is the default: algebraic multigrid, the classical kind
	// (PrecondClassicalAMG) where PETSc was built with hypre, else
	// smoothed aggregation (PrecondSAAMG). On the Poisson problem of
	// TestAMGIterations classical AMG needs a third of the iterations of
	// smoothed aggregation and less time.
	PrecondAMG Precond = iota
	PrecondNone
	PrecondJacobi
	// PrecondILU0 is ILU(0) of each rank's diagonal block (block Jacobi);
	// on one rank it is ILU(0).
	PrecondILU0
	// PrecondSAAMG is smoothed-aggregation algebraic multigrid (Vaněk,
	// Mandel & Brezina 1996, Computing 56 [memory]): PETSc's GAMG.
	PrecondSAAMG
	// PrecondClassicalAMG is classical algebraic multigrid with
	// Ruge–Stüben coarsening (Stüben 2001, J. Comput. Appl. Math. 128
	// [memory]) in hypre's parallel implementation (BoomerAMG; Henson &
	// Yang 2002, Appl. Numer. Math. 41 [memory]).
	PrecondClassicalAMG
	// PrecondAMGBlock is the block upper-triangular preconditioner of a
	// saddle-point system, as runtime/linsolve's of the same name: one AMG
	// V-cycle on the primary fields and the diagonal of A_pp − A_pu
	// diag(A_uu)⁻¹ A_up for the Schur complement of the constraint fields
	// (ir.LoweredUnknown.Constraint), in PETSc's field split. It is not
	// the automatic choice: on the seep-cell Stokes example, whose
	// grad-div term dominates the velocity block, GMRES needed 169
	// iterations at 64² cells and 3700 at 128², so the automatic choice
	// solves saddle-point systems of any size with the parallel direct
	// solver (310 000 unknowns in 8 s on 2 ranks; measured).
	PrecondAMGBlock
)

var precondNames = []string{"amg", "none", "jacobi", "ilu0", "sa-amg", "classical-amg", "amg-block"}

func (p Precond) String() string {
	if p >= 0 && int(p) < len(precondNames) {
		return precondNames[p]
	}
	return fmt.Sprintf("Precond(%d)", int(p))
}

// Solver is the engine's linear solver. The zero value is the automatic
// choice with algebraic multigrid, to the relative residual
// linsolve.DefaultRelTol. Options passed to PETSc (Options.PETScOptions)
// override it.
type Solver struct {
	Method  Method
	Precond Precond
	// RelTol is the relative residual ‖b − Ax‖/‖b‖ to reach (0: 1e-10,
	// runtime/linsolve's default); MaxIter the iteration limit (0:
	// 10000); Restart the GMRES cycle (0: 100, as runtime/problem's
	// automatic choice).
	RelTol  float64
	MaxIter int
	Restart int
}

// ParseSolver reads "METHOD[+PRECOND]": METHOD auto, direct, cg, gmres or
// bicgstab; PRECOND amg (the default), sa-amg, classical-amg, amg-block,
// ilu0, jacobi or none.
func ParseSolver(s string) (Solver, error) {
	meth, pre, hasPre := strings.Cut(s, "+")
	var out Solver
	found := false
	for i, n := range methodNames {
		if n == meth {
			out.Method, found = Method(i), true
		}
	}
	if !found {
		return out, fmt.Errorf("unknown method %q for the PETSc engine (use %s)", meth, strings.Join(methodNames, ", "))
	}
	if !hasPre {
		return out, nil
	}
	if out.Method == MethodDirect {
		return out, fmt.Errorf("the direct solver takes no preconditioner")
	}
	for i, n := range precondNames {
		if n == pre {
			out.Precond = Precond(i)
			return out, nil
		}
	}
	return out, fmt.Errorf("unknown preconditioner %q for the PETSc engine (use %s)", pre, strings.Join(precondNames, ", "))
}

func (s Solver) String() string {
	if s.Method == MethodDirect {
		return s.Method.String()
	}
	return s.Method.String() + "+" + s.Precond.String()
}

// codes are the method and preconditioner codes of the part header.
func (s Solver) codes() (method, precond int64) {
	method = map[Method]int64{MethodAuto: codeAuto, MethodDirect: codeDirect, MethodCG: codeCG, MethodGMRES: codeGMRES, MethodBiCGStab: codeBiCGStab}[s.Method]
	precond = map[Precond]int64{PrecondAMG: codePrecondDefault, PrecondNone: codePrecondNone, PrecondJacobi: codePrecondJacobi,
		PrecondILU0: codePrecondILU0, PrecondSAAMG: codePrecondGAMG, PrecondClassicalAMG: codePrecondHypre, PrecondAMGBlock: codePrecondBlock}[s.Precond]
	return method, precond
}
