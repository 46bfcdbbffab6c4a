package problem

import (
	"fmt"
	"math"
	"math/big"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/interp"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/sparse"
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
// (Picard) are stepped by SolveTransient with splitBackwardEuler instead.
func BackwardEuler(form *ir.LoweredForm) (*ir.LoweredForm, error) {
	if formReadsPrevious(form) {
		return nil, fmt.Errorf("problem: the form is also Picard-iterated (previous(...)), so its time step has no single stepped form: SolveTransient steps it with a separate mass form on the interpreted kernels, and no kernels are generated for it")
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
			st, err := steppedTerm(t)
			if err != nil {
				return nil, err
			}
			n.Bilinear = append(n.Bilinear, st)
			prevField := *t.Trial.Field
			prevField.Role = ir.Previous
			prev := *st.Trial
			prev.Field = &prevField
			n.Linear = append(n.Linear, ir.Term{Coef: ir.Prod(st.Coef.Pos(), st.Coef, &prev), Test: t.Test})
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
	if formReadsPrevious(form) {
		return solveTransientPicard(form, m, opts)
	}
	step, err := BackwardEuler(form)
	if err != nil {
		return nil, err
	}
	dm, err := dofMap(form, m)
	if err != nil {
		return nil, err
	}
	x := initialValues(dm, opts)
	so := opts.Options
	so.PreviousFixed = true
	so.Step = opts.Step
	// One set-up for all steps; the linear solver is prepared again only
	// when the constrained matrix changes (coefficients that depend on t).
	sys, err := newSystem(step, m, so)
	if err != nil {
		return nil, err
	}
	return sys.march(so, x, opts)
}

// splitBackwardEuler rewrites a form whose coefficients read the previous
// Picard iterate into one backward Euler step without touching that role:
// the step form, where every c ∂ₜD^αu · D^βv becomes c D^αu/Δt · D^βv and
// the linear form is unchanged, and the mass form M of the same
// time-derivative terms, c D^αu/Δt · D^βv alone. The old time level enters
// as the right-hand side M uⁿ, so previous(·) keeps meaning the Picard
// iterate within the step; where c reads the iterate (τ and the SUPG test
// function of a stabilised flow), M is assembled again at every iteration.
// Time-derivative terms must be in cell integrals.
func splitBackwardEuler(form *ir.LoweredForm) (step, mass *ir.LoweredForm, err error) {
	s, mf := *form, *form
	s.Integrals, mf.Integrals, mf.Dirichlet, mf.Means = nil, nil, nil, nil
	var massTerms []ir.Term
	for _, in := range form.Integrals {
		n := ir.Integral{Domain: in.Domain, Linear: in.Linear}
		for _, t := range in.Bilinear {
			if t.Trial.DT == 0 {
				n.Bilinear = append(n.Bilinear, t)
				continue
			}
			if in.Domain.Side != "" {
				return nil, nil, fmt.Errorf("problem: a time derivative in a boundary integral (side %q) cannot be stepped", in.Domain.Side)
			}
			st, err := steppedTerm(t)
			if err != nil {
				return nil, nil, err
			}
			n.Bilinear = append(n.Bilinear, st)
			massTerms = append(massTerms, st)
		}
		s.Integrals = append(s.Integrals, n)
	}
	mf.Integrals = []ir.Integral{{Bilinear: massTerms}}
	return &s, &mf, nil
}

// solveTransientPicard is SolveTransient for a form that is also
// Picard-iterated (a convecting velocity lagged by previous(·), as in
// transient Navier–Stokes): each backward Euler step is a Picard
// iteration that starts from the old time level uⁿ, with the right-hand
// side F + M uⁿ/Δt (splitBackwardEuler).
func solveTransientPicard(form *ir.LoweredForm, m *mesh.Mesh, opts TransientOptions) (*Solution, error) {
	step, mass, err := splitBackwardEuler(form)
	if err != nil {
		return nil, err
	}
	so := opts.Options
	so.Step = opts.Step
	so.PreviousFixed = false
	sys, err := newSystem(step, m, so)
	if err != nil {
		return nil, err
	}
	mk, err := interp.NewKernel(mass, m.Cell, interp.Options{Degree: opts.Degree})
	if err != nil {
		return nil, err
	}
	x := initialValues(sys.dm, opts)
	sys.mass = &oldLevel{k: mk, M: sys.asm.NewMatrix(), b: make([]float64, sys.dm.NumDofs)}
	return sys.march(so, x, opts)
}

// march takes opts.Steps backward Euler steps from x, the values at
// opts.Start: each step is one solve of the system at the new time, with
// the old level as the previous field (PreviousFixed) or as the mass
// right-hand side (a Picard-iterated step, which also starts from it).
func (s *system) march(so Options, x []float64, opts TransientOptions) (*Solution, error) {
	var sol *Solution
	var err error
	for n := 1; n <= opts.Steps; n++ {
		so.Time = opts.Start + float64(n)*opts.Step
		if s.mass != nil {
			s.mass.old = x
		}
		so.Initial = x
		if sol, err = s.solve(so); err != nil {
			return nil, fmt.Errorf("time step %d (t = %g): %w", n, so.Time, err)
		}
		x = sol.X
		if opts.Observe != nil {
			opts.Observe(n, so.Time, sol)
		}
	}
	return sol, nil
}

// initialValues evaluates opts.Initial at the nodes of each field (zero
// where there is none).
func initialValues(dm *dof.Map, opts TransientOptions) []float64 {
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
	return x
}

// oldLevel is the old time level of a Picard-iterated backward Euler step:
// the mass kernel, its matrix and a right-hand-side buffer, and uⁿ.
type oldLevel struct {
	k   kernel.Kernel
	M   *sparse.CSR
	b   []float64
	old []float64
}

// steppedTerm is the backward Euler image of a first time-derivative term:
// c ∂ₜD^αu · D^βv becomes c D^αu/Δt · D^βv, Δt the cell quantity
// time_step.
func steppedTerm(t ir.Term) (ir.Term, error) {
	if t.Trial.DT > 1 {
		return ir.Term{}, fmt.Errorf("problem: backward Euler handles first time derivatives, not ∂ₜ^%d", t.Trial.DT)
	}
	p := t.Coef.Pos()
	invStep := &ir.Pow{At: ir.At{P: p}, Base: &ir.CellQ{At: ir.At{P: p}, Q: ir.TimeStep}, Exp: ir.NewNum(p, big.NewRat(-1, 1))}
	trial := *t.Trial
	trial.DT = 0
	return ir.Term{Coef: ir.Prod(p, invStep, t.Coef), Trial: &trial, Test: t.Test}, nil
}
