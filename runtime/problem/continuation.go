package problem

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/mesh"
)

// ContinuationError reports the step of a continuation whose solve
// failed, with the parameter value it failed at.
type ContinuationError struct {
	Step  int // 1-based
	Value float64
	Err   error
}

func (e *ContinuationError) Error() string {
	return fmt.Sprintf("continuation step %d (value %g): %v", e.Step, e.Value, e.Err)
}

func (e *ContinuationError) Unwrap() error { return e.Err }

// Ramp returns the values of a natural-parameter continuation from start
// to target in steps steps, start excluded and target included: evenly
// spaced, or evenly spaced in log |value| when geometric (both values
// must then be nonzero and of one sign).
func Ramp(start, target float64, steps int, geometric bool) ([]float64, error) {
	if steps < 1 {
		return nil, fmt.Errorf("problem: a ramp needs at least one step, not %d", steps)
	}
	if math.IsNaN(start) || math.IsInf(start, 0) || math.IsNaN(target) || math.IsInf(target, 0) {
		return nil, fmt.Errorf("problem: ramp from %g to %g: give finite values", start, target)
	}
	if geometric && (start == 0 || target == 0 || (start < 0) != (target < 0)) {
		return nil, fmt.Errorf("problem: a geometric ramp from %g to %g needs nonzero values of one sign", start, target)
	}
	out := make([]float64, steps)
	for i := 1; i <= steps; i++ {
		s := float64(i) / float64(steps)
		if geometric {
			out[i-1] = start * math.Pow(target/start, s)
		} else {
			out[i-1] = start + (target-start)*s
		}
	}
	out[steps-1] = target
	return out, nil
}

// Continue solves a sequence of problems by natural-parameter
// continuation: formAt(v) is the form at parameter value v, and each
// solve starts from the solution of the one before (opts.Initial for the
// first). A nonlinear problem that Newton's method cannot solve from a
// poor start often can be reached this way, as long as the solution path
// has no turning point between the values (Allgower & Georg 1990,
// Numerical Continuation Methods, ch. 1). each, if not nil, is called
// after every step. It returns the last solution, whose Summary accounts
// for all the steps: phases, nonlinear iterations and solver set-ups are
// summed over them, and StepIterations lists each step's iterations. A
// failed step is a *ContinuationError.
func Continue(values []float64, formAt func(v float64) (*ir.LoweredForm, error), m *mesh.Mesh, opts Options, each func(step int, v float64, s *Solution)) (*Solution, error) {
	var sol *Solution
	var phases []Phase
	var iters []int
	prepared := 0
	for i, v := range values {
		form, err := formAt(v)
		if err != nil {
			return nil, err
		}
		if sol != nil {
			opts.Initial = sol.X
		}
		next, err := Solve(form, m, opts)
		if err != nil {
			return nil, &ContinuationError{Step: i + 1, Value: v, Err: err}
		}
		sol = next
		if each != nil {
			each(i+1, v, sol)
		}
		phases = addPhases(phases, sol.Summary.Phases)
		iters = append(iters, sol.Summary.NonlinearIters)
		prepared += sol.Summary.Prepared
	}
	if sol != nil {
		sol.Summary.Phases = phases
		sol.Summary.StepIterations = iters
		sol.Summary.NonlinearIters = 0
		for _, n := range iters {
			sol.Summary.NonlinearIters += n
		}
		sol.Summary.Prepared = prepared
	}
	return sol, nil
}

// addPhases adds the durations of more to total, phase by phase by name,
// keeping the order in which the names first appear.
func addPhases(total, more []Phase) []Phase {
	for _, p := range more {
		found := false
		for i := range total {
			if total[i].Name == p.Name {
				total[i].Wall += p.Wall
				found = true
				break
			}
		}
		if !found {
			total = append(total, p)
		}
	}
	return total
}
