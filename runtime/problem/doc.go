// Package problem is the solve driver of formwright: it takes a lowered
// form (compiler/ir.LoweredForm) and a mesh and returns the discrete
// solution with a summary of what was done.
//
// Place in the flow lang -> compiler -> runtime: the command parses a
// model (lang), derives and lowers its weak form (compiler), and calls
// Solve, which numbers the dofs (runtime/dof), builds kernels — the
// interpreted ones of runtime/interp, or the generated ones passed in
// Options.Kernels —, assembles in parallel (runtime/assemble), imposes the
// value conditions by row elimination and solves (runtime/linsolve). The
// verify command and the convergence tests use ErrorNorms against exact
// solutions.
//
// Before anything is numbered, ResolveParts computes the boundary parts
// the model defines (ir.PartDef: sets of mesh names and conditions on the
// facet midpoint, with the tie rule of parts.go) on the mesh, checks that
// every name the form uses exists there and that no facet is claimed by
// two conditions of one unknown, and counts the facets that take the
// natural condition (Summary.Natural).
//
// Nonlinear forms whose coefficients read a previous iterate (Picard
// linearisation of a convecting velocity) are solved by repeated
// assembly and solution until the iterates settle. A Newton step form
// (ir.LoweredForm.Newton: the Jacobian and the residual of a nonlinear
// model in one form) is solved by Newton's method with an Armijo
// backtracking line search on ‖F‖ (Dennis & Schnabel 1983, §6.3; Kelley
// 2003), which reports each iteration and returns a *NewtonError with the
// history when it does not converge. Continue ramps a parameter
// (natural-parameter continuation), and CheckJacobian compares a Newton
// step's Jacobian with its residual by the Taylor test.
package problem
