package problem

import (
	"fmt"
	"math"
	"slices"
	"time"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/interp"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/sparse"
)

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

// SolveTransient integrates a form stepped in time by backward Euler
// (compiler.BackwardEuler): each step is one steady solve of sf.Step with
// the previous time level held fixed and t the new time. The dof map,
// kernels and matrix pattern are set up once; while the constrained matrix
// does not change (no coefficient depends on t), its factorisation or
// preconditioner is built once and reused, so a step costs an assembly
// and a back-substitution. A Picard-iterated form (sf.Mass not nil) is
// iterated in every step from the old level uⁿ, with the right-hand side
// F + M uⁿ/Δt. It returns the solution at the last step.
func SolveTransient(sf *ir.SteppedForm, m *mesh.Mesh, opts TransientOptions) (*Solution, error) {
	if opts.Steps < 1 {
		return nil, fmt.Errorf("problem: %d time steps", opts.Steps)
	}
	if !(opts.Step > 0) || math.IsInf(opts.Step, 0) {
		return nil, fmt.Errorf("problem: time step %g must be positive and finite", opts.Step)
	}
	so := opts.Options
	so.Step = opts.Step
	so.PreviousFixed = sf.Mass == nil
	// One set-up for all steps; the linear solver is prepared again only
	// when the constrained matrix changes (coefficients that depend on t).
	sys, err := newSystem(sf.Step, m, so)
	if err != nil {
		return nil, err
	}
	x := initialValues(sys.dm, opts)
	if sf.Mass != nil {
		mk, err := interp.NewKernel(sf.Mass, m.Cell, interp.Options{Degree: opts.Degree})
		if err != nil {
			return nil, err
		}
		sys.mass = &oldLevel{k: mk, M: sys.asm.NewMatrix(), b: make([]float64, sys.dm.NumDofs)}
	}
	return sys.march(so, x, opts)
}

// march takes opts.Steps backward Euler steps from x, the values at
// opts.Start: each step is one solve of the system at the new time, with
// the old level as the previous field (PreviousFixed) or as the mass
// right-hand side (a Picard-iterated step, which also starts from it).
//
// The summary's phases are the set-up's, then each later phase summed over
// all steps, so the time breakdown covers the whole run.
func (s *system) march(so Options, x []float64, opts TransientOptions) (*Solution, error) {
	var sol *Solution
	var err error
	nSetup := len(s.setup.Phases)
	total := map[string]time.Duration{}
	var order []string
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
		for _, p := range sol.Summary.Phases[nSetup:] {
			if _, ok := total[p.Name]; !ok {
				order = append(order, p.Name)
			}
			total[p.Name] += p.Wall
		}
		if opts.Observe != nil {
			opts.Observe(n, so.Time, sol)
		}
	}
	phases := slices.Clone(sol.Summary.Phases[:nSetup])
	for _, name := range order {
		phases = append(phases, Phase{name, total[name]})
	}
	sol.Summary.Phases = phases
	return sol, nil
}

// initialValues evaluates opts.Initial at the nodes of each field (zero
// where there is none).
func initialValues(dm *dof.Numbering, opts TransientOptions) []float64 {
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
