// Package distributed solves a lowered form on many processes: it runs
// the same model on PETSc with MPI (Balay et al., PETSc/TAO Users Manual,
// Argonne ANL-21/39 [memory]), with the element kernels that
// compiler/gogen.GenerateC writes in C.
//
// Place in the flow lang → compiler → runtime: the command derives and
// lowers a model (compiler), generates the C kernels of the form
// (compiler/gogen; this package, a runtime package, may not import the
// compiler, so it receives them as bytes, Kernels) and calls Solve in
// place of runtime/problem.Solve. The solution comes back as a
// problem.Solution, so output, plots, error norms and convergence studies
// (runtime/study, Config.SolveFunc) work on it unchanged.
//
// # What Solve does
//
// In Go, on one process: the dofs are numbered and the value and mean
// conditions evaluated exactly as runtime/problem does. The mesh is
// partitioned by recursive coordinate bisection of the cell centroids
// (Bisect); each dof belongs to the lowest rank among the cells that hold
// it; the dofs are renumbered so that every rank owns one contiguous
// range; and the nonzeros of every row are counted inside and outside
// its owner's diagonal block from the cell-to-dof table (Partition). Each
// rank's part — its cells with their vertices and dofs, its boundary
// facets, its rows' nonzero counts, its prescribed dofs and values — is
// written to a file of its own (format.go documents the layout).
//
// The driver (driver/driver.c, embedded) is compiled with mpicc against
// PETSc, with the flags pkg-config gives for PETSc, together with the
// kernels; the executable is kept under DefaultCacheDir, keyed by a hash
// of the driver, the kernel sources, the compiler and every flag, so a
// model is built once. mpiexec starts it on the ranks. Each rank reads
// only its part, assembles its cells with the generated kernels into a
// parallel AIJ matrix preallocated with the exact counts (the driver
// reports allocations during assembly and unused preallocated entries:
// both are 0), imposes the value conditions by row elimination (and
// column elimination when the matrix is symmetric, as
// runtime/assemble.Constrain does), and solves with PETSc's Krylov methods
// and preconditioners: by default the direct solver (MUMPS) below the
// bounds of runtime/linsolve's automatic choice (linsolve.DirectBelow2D,
// DirectBelow3D in 3D) and for saddle-point systems of any size, above
// them CG or GMRES with algebraic multigrid (Solver). The tolerance is on the unpreconditioned relative
// residual ‖b − Ax‖/‖b‖, as in runtime/linsolve, and the explicit residual
// is recomputed after the solve and checked; a result above the
// tolerance is an error, never a solution. Mean conditions pin one dof
// and shift the field afterwards, as runtime/problem does. Forms that
// read the previous iterate (Picard linearisation) are iterated in the
// driver around the parallel linear solve, the previous iterate gathered
// to every rank's cells by a scatter.
//
// # Nonlinear forms
//
// Both iterations of runtime/problem run in the driver, around the
// parallel linear solve, with the iterate gathered to the dofs of every
// rank's cells by a scatter built once and reassembly into the same
// matrix (its pattern is kept through the value conditions):
//
//   - Picard iteration of forms that read a lagged iterate: the relative
//     change ‖x_k − x_{k−1}‖/‖x_k‖, under-relaxation and mean shifts as in
//     runtime/problem.
//   - Newton's method for a Newton step form (ir.LoweredForm.Newton, the
//     residual's Jacobian as its bilinear part and −F as its linear part,
//     both reading the iterate through the kernels' previous input):
//     J(u_k) δu = −F(u_k) with δu = 0 where values are prescribed, a
//     backtracking line search on ‖F‖ with Armijo's condition, the
//     trial's assembly kept as the next system, and the same stopping
//     tests, defaults and history (problem.NewtonStep) as runtime/problem.
//
// # Set-up
//
// The engine needs mpicc, mpiexec and PETSc (with pkg-config's PETSc.pc);
// on Debian or Ubuntu InstallCommand installs them. Available says
// whether they are there. Running as root under Open MPI needs its
// allow-root settings, and more ranks than cores need oversubscription;
// the launcher sets both.
package distributed
