package problem

import (
	"fmt"
	"math"
	"slices"
	"strings"
	"time"

	"github.com/formwright/formwright/runtime/assemble"
	"github.com/formwright/formwright/runtime/linsolve"
	"github.com/formwright/formwright/runtime/sparse"
)

// NewtonOptions control Newton's method, which Solve runs for a Newton
// step form (ir.LoweredForm.Newton; compiler.Derivation.Lower gives one
// for a nonlinear model). Zero values ask for the defaults.
type NewtonOptions struct {
	// MaxIter is the iteration limit (0: 30, or RecoveredMaxIter for a
	// form that reads recovered second derivatives).
	MaxIter int
	// RelTol: converged when ‖F(u_k)‖ ≤ RelTol·‖F(u_0)‖ (0: 1e-10).
	RelTol float64
	// AbsTol: converged when ‖F(u_k)‖ ≤ AbsTol (0: never on this test
	// alone).
	AbsTol float64
	// StepTol: converged when a full Newton update is small,
	// ‖δu‖ ≤ StepTol·‖u‖ (0: 1e-11).
	StepTol float64
	// Damping λ₀ in (0, 1] is the first step length tried in each
	// iteration (0 or 1: the full Newton step).
	Damping float64
	// NoLineSearch takes the step λ₀ δu without testing it.
	NoLineSearch bool
	// FixedRecovery, for a form that reads recovered second derivatives,
	// takes the step of the Jacobian that holds the recovered field fixed
	// as it is, instead of correcting it toward the exact Jacobian's
	// (exactStep): one assembly per iteration, linear convergence.
	FixedRecovery bool
	// MinStep is the shortest step of the line search before it gives up
	// (0: 2⁻¹²).
	MinStep float64
	// Progress, if not nil, is called with the initial residual
	// (iteration 0) and after every iteration.
	Progress func(NewtonStep)
}

// RecoveredMaxIter is the default Newton iteration limit for a form that
// reads recovered second derivatives. Its assembled Jacobian holds the
// recovered field fixed; with FixedRecovery, Newton converges linearly
// (measured: a factor about 0.5 per iteration on Kovasznay flow and the
// lid-driven cavity, 20–30 iterations to 1e-10 from a good start), which
// the limit allows for.
const RecoveredMaxIter = 80

// NewtonStep is one line of the iteration history.
type NewtonStep struct {
	Iter int `json:"iteration"`
	// Residual is ‖F(u_k)‖₂ over the dofs without a value condition, and
	// Relative the same divided by ‖F(u_0)‖.
	Residual float64 `json:"residual"`
	Relative float64 `json:"relative_residual"`
	// Step is the accepted step length λ and Update ‖λ δu‖/‖u_k‖.
	Step   float64 `json:"step_length"`
	Update float64 `json:"relative_update"`
	// LinearIters are the iterations of the linear solve (0: direct).
	LinearIters int `json:"linear_iterations"`
	// Backtracks counts the step lengths the line search rejected.
	Backtracks int `json:"backtracks"`
	// Directional counts the residual evaluations of the step's
	// correction toward the exact Jacobian (exactStep; 0 without one).
	Directional int `json:"directional_residuals"`
}

// String is the progress line of one iteration.
func (s NewtonStep) String() string {
	if s.Iter == 0 {
		return fmt.Sprintf("newton %2d: ‖F‖ = %.3e", s.Iter, s.Residual)
	}
	lin := "direct"
	if s.LinearIters > 0 {
		lin = fmt.Sprintf("%d linear iterations", s.LinearIters)
	}
	if s.Directional > 0 {
		plural := "s"
		if s.Directional == 1 {
			plural = ""
		}
		lin += fmt.Sprintf(", %d directional residual%s", s.Directional, plural)
	}
	return fmt.Sprintf("newton %2d: ‖F‖ = %.3e (relative %.2e), step %.4g, update %.2e, %s", s.Iter, s.Residual, s.Relative, s.Step, s.Update, lin)
}

// NewtonError reports a Newton iteration that did not converge: it
// diverged (a non-finite residual), stalled (no step length down to
// MinStep reduced the residual enough), reached the iteration limit, or
// could not solve for its step (the Jacobian singular or nearly so, as
// near a fold; Err is then the linear solver's error). History holds
// every iteration, the initial residual first.
type NewtonError struct {
	Reason  string
	History []NewtonStep
	Err     error
}

// Unwrap returns the linear solver's error, if that is what stopped the
// iteration.
func (e *NewtonError) Unwrap() error { return e.Err }

func (e *NewtonError) Error() string {
	var b strings.Builder
	last := e.History[len(e.History)-1]
	fmt.Fprintf(&b, "problem: the Newton iteration did not converge: %s after %d iterations (‖F‖ = %.3e, relative %.2e); history:", e.Reason, last.Iter, last.Residual, last.Relative)
	for _, h := range e.History {
		b.WriteString("\n  " + h.String())
	}
	return b.String()
}

// Armijo's sufficient-decrease constant for the line search on ‖F‖:
// accept λ when ‖F(u + λδu)‖ ≤ (1 − αλ)‖F(u)‖ with α = 10⁻⁴ (Dennis &
// Schnabel 1983, §6.3; Kelley 2003, Solving Nonlinear Equations with
// Newton's Method, §1.6).
const armijoAlpha = 1e-4

// newton solves a Newton step form by Newton's method with a backtracking
// line search: at the iterate u_k it assembles J(u_k) and −F(u_k) in one
// pass, solves J δu = −F with δu = 0 where a value condition holds (the
// iterate satisfies the values from the start), and tries u_k + λ δu for
// λ = λ₀, λ₀/2, … until Armijo's condition on ‖F‖ holds (Dennis &
// Schnabel 1983, §6.3). The trial's assembly is kept: when it is
// accepted, it is the next iteration's system. Mean conditions fix one
// dof of δu and shift each iterate to its mean. For a form that reads
// recovered second derivatives, solved directly, δu is then corrected
// toward the exact Jacobian's step (exactStep) unless FixedRecovery.
func (s *system) newton(opts Options) (*Solution, error) {
	form, m, dm := s.form, s.m, s.dm
	no := opts.Newton
	if no.MaxIter <= 0 {
		no.MaxIter = 30
		if s.needRec {
			no.MaxIter = RecoveredMaxIter
		}
	}
	if no.RelTol <= 0 {
		no.RelTol = 1e-10
	}
	if no.StepTol <= 0 {
		no.StepTol = 1e-11
	}
	if no.Damping <= 0 || no.Damping > 1 {
		no.Damping = 1
	}
	if no.MinStep <= 0 {
		no.MinStep = 1.0 / 4096
	}
	sum := s.setup
	sum.Phases = slices.Clone(s.setup.Phases)
	sum.Nonlinear = "newton"
	clock := time.Now()
	fixed, values, err := dirichlet(form, m, dm, opts.Time)
	if err != nil {
		return nil, err
	}
	for _, mf := range s.means {
		fixed[mf.pin], values[mf.pin] = true, 0
	}
	zeros := make([]float64, dm.NumDofs)
	sum.Phases = append(sum.Phases, Phase{"dirichlet-data", time.Since(clock)})

	u := make([]float64, dm.NumDofs)
	if opts.Initial != nil {
		if len(opts.Initial) != dm.NumDofs {
			return nil, fmt.Errorf("problem: initial iterate has %d values for %d dofs", len(opts.Initial), dm.NumDofs)
		}
		copy(u, opts.Initial)
	}
	for i, f := range fixed {
		if f {
			u[i] = values[i]
		}
	}
	for i := range s.means {
		s.means[i].shift(u)
	}
	var tAsm, tSolve time.Duration
	// residual assembles at x and returns ‖F(x)‖ over the free dofs.
	residual := func(x []float64) (float64, error) {
		t0 := time.Now()
		err := s.assemble(assemble.Input{Time: opts.Time, Step: opts.Step, Previous: x})
		tAsm += time.Since(t0)
		if err != nil {
			return 0, err
		}
		r := 0.0
		for i, v := range s.b {
			if !fixed[i] {
				r += v * v
			}
		}
		return math.Sqrt(r), nil
	}
	opts.report("assembly", 1, dm.NumDofs)
	r0, err := residual(u)
	if err != nil {
		return nil, err
	}
	if !systemFinite(s.A, s.b) {
		return nil, s.nonFinite(opts)
	}
	hist := []NewtonStep{{Iter: 0, Residual: r0, Relative: 1}}
	if no.Progress != nil {
		no.Progress(hist[0])
	}
	if math.IsNaN(r0) || math.IsInf(r0, 0) {
		return nil, &NewtonError{Reason: "the residual at the initial iterate is not finite", History: hist}
	}
	rel := func(r float64) float64 {
		if r0 == 0 {
			return 0
		}
		return r / r0
	}
	converged := r0 == 0 || r0 <= no.AbsTol
	r := r0
	rPrev, eta := r0, 0.0
	// The correction is tried once a step has passed the line search
	// undamped (near the solution, where the fixed recovery slows Newton
	// down); before, the directional differences may cross the kinks of
	// |u| in τ (at a zero start), and a damped step gains little from it.
	// fixedStep keeps the fixed-recovery step to go back to.
	correct, lastWhole := s.needRec && !no.FixedRecovery, false
	var fixedStep []float64
	delta := make([]float64, dm.NumDofs)
	trial := make([]float64, dm.NumDofs)
	var Asys *sparse.CSR
	var bsys []float64
	for it := 1; it <= no.MaxIter && !converged; it++ {
		t0 := time.Now()
		Asys = s.A.Clone()
		bsys = append(bsys[:0], s.b...)
		sum.Symmetric = assemble.Constrain(Asys, bsys, fixed, zeros)
		tAsm += time.Since(t0)
		so, why := chooseSolver(opts, Asys, s.layout)
		sum.Solver, sum.SolverReason = solverName(so), why
		clear(delta)
		opts.report("solve", it, dm.NumDofs)
		t1 := time.Now()
		res, err := s.linearSolve(Asys, bsys, delta, so)
		tSolve += time.Since(t1)
		if err == nil {
			err = checkResidual(res, so)
		}
		if err != nil {
			return nil, &NewtonError{Reason: fmt.Sprintf("the linear system of iteration %d could not be solved (%v)", it, err), History: hist, Err: err}
		}
		sum.BytesPerUnknown = s.prepared.Memory().PerUnknown()
		sum.Iterations, sum.Residual = res.Iterations, res.Residual
		step := NewtonStep{Iter: it, LinearIters: res.Iterations}
		corrected := false
		if correct && lastWhole && so.Method == linsolve.MethodDirect {
			fixedStep = append(fixedStep[:0], delta...)
			eta = forcingTerm(r, rPrev, eta, no.RelTol*r0)
			t2 := time.Now()
			step.Directional, corrected, err = s.exactStep(u, bsys, delta, fixed, assemble.Input{Time: opts.Time, Step: opts.Step}, eta)
			tAsm += time.Since(t2)
			if err != nil {
				return nil, err
			}
			if !corrected {
				copy(delta, fixedStep)
			}
		}
		rPrev = r
		un, dn := norm2(u), norm2(delta)
		full := dn <= no.StepTol*math.Max(un, math.SmallestNonzeroFloat64)
		lambda := no.Damping
		for {
			for i := range u {
				trial[i] = u[i] + lambda*delta[i]
			}
			for i := range s.means {
				s.means[i].shift(trial)
			}
			opts.report("assembly", it+1, dm.NumDofs)
			rt, err := residual(trial)
			if err != nil {
				return nil, err
			}
			finite := !math.IsNaN(rt) && !math.IsInf(rt, 0)
			if no.NoLineSearch || full || (finite && rt <= (1-armijoAlpha*lambda)*r) {
				if !finite {
					step.Residual, step.Relative, step.Step = rt, rel(rt), lambda
					hist = append(hist, step)
					return nil, &NewtonError{Reason: "the residual is not finite (the iteration diverged)", History: hist}
				}
				r = rt
				break
			}
			if corrected {
				// The corrected step failed its first test: back to the
				// fixed-recovery step, which the line search then damps.
				corrected = false
				copy(delta, fixedStep)
				dn = norm2(delta)
				continue
			}
			step.Backtracks++
			lambda /= 2
			if lambda < no.MinStep {
				step.Residual, step.Relative, step.Step = rt, rel(rt), lambda*2
				hist = append(hist, step)
				return nil, &NewtonError{Reason: fmt.Sprintf("the line search stalled: no step length down to %.2g reduced ‖F‖", no.MinStep), History: hist}
			}
		}
		copy(u, trial)
		lastWhole = step.Backtracks == 0
		step.Residual, step.Relative, step.Step = r, rel(r), lambda
		step.Update = lambda * dn / math.Max(norm2(u), math.SmallestNonzeroFloat64)
		hist = append(hist, step)
		if no.Progress != nil {
			no.Progress(step)
		}
		converged = r <= no.RelTol*r0 || r <= no.AbsTol || full
	}
	if !converged {
		return nil, &NewtonError{Reason: "the iteration limit was reached", History: hist}
	}
	sum.NonlinearIters = len(hist) - 1
	sum.History = hist
	sum.Prepared = s.prepares
	// The equation a mean condition replaced: its residual relative to
	// the initial residual.
	sum.MeanResidual = 0
	for _, mf := range s.means {
		sum.MeanResidual = math.Max(sum.MeanResidual, math.Abs(s.b[mf.pin])/math.Max(r0, math.SmallestNonzeroFloat64))
	}
	sum.Phases = append(sum.Phases, Phase{"assembly+dirichlet", tAsm}, Phase{"solve", tSolve})
	return s.solution(u, sum, opts.Time), nil
}

func norm2(x []float64) float64 {
	s := 0.0
	for _, v := range x {
		s += v * v
	}
	return math.Sqrt(s)
}
