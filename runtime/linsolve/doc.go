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
//   - Direct solvers: a general sparse LU with threshold partial pivoting
//     (left-looking, Gilbert & Peierls 1988, SIAM J. Sci. Stat. Comput. 9)
//     under a nested-dissection ordering (George 1973, SIAM J. Numer.
//     Anal. 10), used by Solve; and a banded LU with partial pivoting (the
//     band algorithm of LAPACK's dgbtrf; Golub & Van Loan, Matrix
//     Computations, §4.3) under a reverse Cuthill–McKee ordering (George &
//     Liu, Computer Solution of Large Sparse Positive Definite Systems,
//     Prentice-Hall 1981). See FactorSparseLU and FactorBandLU for
//     complexity and limits.
//   - Solve, a dispatcher driven by Options (Method and PrecondKind parse
//     from the strings "cg", "gmres", "bicgstab", "direct" and "none",
//     "jacobi", "ilu0").
//
// Section and algorithm numbers cited from Saad (2003) and Golub & Van
// Loan (2013) are recalled from memory, not re-checked against the books.
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
