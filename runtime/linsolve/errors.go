package linsolve

import "fmt"

// NotConvergedError reports that an iterative solver used its iteration
// budget without meeting the tolerance. Residual is the relative residual
// ‖b − A x‖/‖b‖ of the returned iterate (recomputed explicitly); Tol is
// the relative tolerance that was asked for (max(RelTol, AbsTol/‖b‖)).
type NotConvergedError struct {
	Solver   string
	Iter     int
	Residual float64
	Tol      float64
}

func (e *NotConvergedError) Error() string {
	return fmt.Sprintf("%s: not converged after %d iterations (relative residual %.1e > tolerance %g)", e.Solver, e.Iter, e.Residual, e.Tol)
}

// BreakdownError reports a breakdown of a Krylov recurrence: a division by
// a zero (or, for CG, non-positive) quantity at iteration Iter. What names
// the quantity.
type BreakdownError struct {
	Solver string
	Iter   int
	What   string
}

func (e *BreakdownError) Error() string {
	return fmt.Sprintf("%s: breakdown at iteration %d: %s", e.Solver, e.Iter, e.What)
}

// NonFiniteError reports a NaN or infinity, either in the input (Iter = 0,
// What names the entry) or produced during iteration Iter.
type NonFiniteError struct {
	Solver string
	Iter   int
	What   string
}

func (e *NonFiniteError) Error() string {
	return fmt.Sprintf("%s: NaN or Inf at iteration %d: %s", e.Solver, e.Iter, e.What)
}

// SingularError reports a zero pivot (or zero diagonal) met by a
// factorisation or a preconditioner setup at row Row (in the ordering the
// factorisation uses).
type SingularError struct {
	Solver string
	Row    int
	What   string
}

func (e *SingularError) Error() string {
	return fmt.Sprintf("%s: singular: %s at row %d", e.Solver, e.What, e.Row)
}
