package problem

import (
	"fmt"
	"math"
	"math/big"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/mesh"
)

// IsTransient reports whether a form has time derivatives of the unknown.
func IsTransient(form *ir.LoweredForm) bool {
	for _, in := range form.Integrals {
		for _, t := range in.Bilinear {
			if t.Trial.DT > 0 {
				return true
			}
		}
	}
	return false
}

// BackwardEuler rewrites a form with first time derivatives of the unknown
// into the steady form of one implicit (backward) Euler step: every term
// c ∂ₜD^αu · D^βv becomes c D^αu/Δt · D^βv in the bilinear form and
// c D^αuⁿ/Δt · D^βv in the linear form, where uⁿ, the solution of the
// previous time level, is the form's previous field. Δt stays symbolic,
// the cell quantity time_step that kernels read from their input
// (assemble.Input.Step), so one stepped form, and one set of generated
// kernels, serves every step size. The method is first order in time and
// unconditionally stable for the heat equation (e.g. Hughes, The Finite
// Element Method, 1987, §8.2). Forms that already read a previous iterate
// (Picard) cannot be stepped this way.
func BackwardEuler(form *ir.LoweredForm) (*ir.LoweredForm, error) {
	if formReadsPrevious(form) {
		return nil, fmt.Errorf("problem: time stepping of a form that is also Picard-iterated (previous(...)) is not supported")
	}
	out := *form
	out.Integrals = nil
	for _, in := range form.Integrals {
		n := ir.Integral{Domain: in.Domain, Linear: append([]ir.Term(nil), in.Linear...)}
		for _, t := range in.Bilinear {
			if t.Trial.DT == 0 {
				n.Bilinear = append(n.Bilinear, t)
				continue
			}
			if t.Trial.DT > 1 {
				return nil, fmt.Errorf("problem: backward Euler handles first time derivatives, not ∂ₜ^%d", t.Trial.DT)
			}
			p := t.Coef.Pos()
			invStep := &ir.Pow{At: ir.At{P: p}, Base: &ir.CellQ{At: ir.At{P: p}, Name: "time_step"}, Exp: ir.NewNum(p, big.NewRat(-1, 1))}
			scaled := ir.Prod(p, invStep, t.Coef)
			trial := *t.Trial
			trial.DT = 0
			n.Bilinear = append(n.Bilinear, ir.Term{Coef: scaled, Trial: &trial, Test: t.Test})
			prevField := *t.Trial.Field
			prevField.Role = ir.Previous
			prev := trial
			prev.Field = &prevField
			n.Linear = append(n.Linear, ir.Term{Coef: ir.Prod(p, scaled, &prev), Test: t.Test})
		}
		out.Integrals = append(out.Integrals, n)
	}
	return &out, nil
}

// TransientOptions control SolveTransient.
type TransientOptions struct {
	// Options are the options of each step's solve (Time is set per step).
	Options
	// Step is the time step, Steps the number of steps from Start.
	Step  float64
	Steps int
	Start float64
	// Initial gives the initial value of each field (nil entries and a nil
	// slice mean zero); it is evaluated at the field's nodes.
	Initial []Exact
	// Observe, if not nil, is called after every step.
	Observe func(step int, t float64, s *Solution)
}

// SolveTransient integrates a form with time derivatives by backward Euler
// steps (BackwardEuler): each step is one steady solve with the previous
// time level held fixed and t the new time. The dof map, kernels and
// matrix pattern are set up once; while the constrained matrix does not
// change (no coefficient depends on t), its factorisation or
// preconditioner is built once and reused, so a step costs an assembly
// and a back-substitution. It returns the solution at the last step.
func SolveTransient(form *ir.LoweredForm, m *mesh.Mesh, opts TransientOptions) (*Solution, error) {
	if opts.Steps < 1 {
		return nil, fmt.Errorf("problem: %d time steps", opts.Steps)
	}
	if !(opts.Step > 0) || math.IsInf(opts.Step, 0) {
		return nil, fmt.Errorf("problem: time step %g must be positive and finite", opts.Step)
	}
	step, err := BackwardEuler(form)
	if err != nil {
		return nil, err
	}
	dm, err := dofMap(form, m)
	if err != nil {
		return nil, err
	}
	x := make([]float64, dm.NumDofs)
	for k, f := range dm.Fields {
		if k >= len(opts.Initial) || opts.Initial[k] == nil {
			continue
		}
		coords := dm.NodeCoords(k)
		u := make([]float64, f.Components)
		g := make([]float64, f.Components*dm.Dim)
		for n := 0; n < f.NumNodes; n++ {
			opts.Initial[k](coords[n*dm.Dim:(n+1)*dm.Dim], opts.Start, u, g)
			for c := 0; c < f.Components; c++ {
				x[dm.Global(k, c, n)] = u[c]
			}
		}
	}
	so := opts.Options
	so.PreviousFixed = true
	so.Step = opts.Step
	// One set-up for all steps; the linear solver is prepared again only
	// when the constrained matrix changes (coefficients that depend on t).
	sys, err := newSystem(step, m, so)
	if err != nil {
		return nil, err
	}
	var sol *Solution
	for n := 1; n <= opts.Steps; n++ {
		so.Time = opts.Start + float64(n)*opts.Step
		so.Initial = x
		sol, err = sys.solve(so)
		if err != nil {
			return nil, fmt.Errorf("time step %d (t = %g): %w", n, so.Time, err)
		}
		x = sol.X
		if opts.Observe != nil {
			opts.Observe(n, so.Time, sol)
		}
	}
	return sol, nil
}
