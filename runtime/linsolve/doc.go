// Package linsolve solves the sparse linear systems A x = b assembled by
// the formwright runtime.
//
// Place in the flow lang -> compiler -> runtime: the compiler's generated
// element kernels are assembled into a runtime/sparse CSR matrix; this
// package solves the resulting system; runtime/output writes the solution.
//
// Contents
//
//   - Krylov methods on a small Operator interface: preconditioned
//     conjugate gradients (CG; Hestenes & Stiefel 1952, J. Res. Nat. Bur.
//     Standards 49), restarted GMRES(m) with right preconditioning,
//     modified Gram–Schmidt and Givens rotations (Saad & Schultz 1986,
//     SIAM J. Sci. Stat. Comput. 7), and BiCGStab with right
//     preconditioning (van der Vorst 1992, SIAM J. Sci. Stat. Comput. 13).
//   - Preconditioners: Identity, Jacobi, and ILU(0) on the CSR pattern
//     (Saad, Iterative Methods for Sparse Linear Systems, 2nd ed., SIAM
//     2003, §10.3, Algorithm 10.4).
//   - Smoothed-aggregation algebraic multigrid, AMG (Vaněk, Mandel &
//     Brezina 1996, Computing 56): strength of connection, greedy
//     aggregation, tentative prolongators from near-null-space vectors
//     (constants per component, or rigid-body modes from node
//     coordinates) by a QR per aggregate, Jacobi-smoothed prolongators,
//     Galerkin coarse matrices by row-parallel sparse products, sparse LU
//     on the coarsest level, and a V-cycle with multicolour Gauss–Seidel
//     (symmetric, for CG), damped Jacobi, forward Gauss–Seidel or ILU(0)
//     smoothing. Setup and cycle run on Options.Workers goroutines with
//     results bitwise independent of their number.
//   - Block, the block upper-triangular preconditioner of saddle-point
//     systems (AMG on the primary fields, a Schur-complement
//     approximation on the constraint fields; Murphy, Golub & Wathen
//     2000; Elman, Silvester & Wathen 2005), for GMRES. Layout says which
//     dofs belong to which field, component and node.
//   - Direct solvers: a general sparse LU with threshold partial pivoting
//     (left-looking, Gilbert & Peierls 1988, SIAM J. Sci. Stat. Comput. 9)
//     under a nested-dissection ordering (George 1973, SIAM J. Numer.
//     Anal. 10), used by Solve; and a banded LU with partial pivoting (the
//     band algorithm of LAPACK's dgbtrf; Golub & Van Loan, Matrix
//     Computations, §4.3) under a reverse Cuthill–McKee ordering (George &
//     Liu, Computer Solution of Large Sparse Positive Definite Systems,
//     Prentice-Hall 1981). See FactorSparseLU and FactorBandLU for
//     complexity and limits.
//   - Solve and Prepare, a dispatcher driven by Options (Method and
//     PrecondKind parse from the strings "cg", "gmres", "bicgstab",
//     "direct" and "none", "jacobi", "ilu0", "amg", "amg-block");
//     Recommend, the rule behind an automatic choice; Prepared.Memory,
//     the bytes per unknown of matrix and preconditioner; Options.OnPhase,
//     progress of the long setup phases.
//
// Section and algorithm numbers cited from Saad (2003) and Golub & Van
// Loan (2013) are recalled from memory, not re-checked against the books.
// The literature of the multigrid and block preconditioners is listed in
// testdata/REFERENCES.md.
//
// Matrices are only read: no function changes RowPtr or Col, so several
// matrices may share one pattern.
//
// Convergence is declared when ‖b − A x‖₂ ≤ max(RelTol·‖b‖₂, AbsTol). The
// relative residual in Result is always recomputed explicitly from A, b and
// the returned x, never taken from a recurrence.
//
// Numerical failures are typed errors: *NotConvergedError,
// *BreakdownError, *NonFiniteError and *SingularError. Misuse (wrong
// lengths, non-square matrices) panics with a message prefixed
// "linsolve: ". Vector arithmetic uses gonum's floats package.
package linsolve
