package problem

import (
	"errors"
	"fmt"
	"math"
	"runtime"
	"slices"
	"time"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/assemble"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/compiled"
	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/interp"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/linsolve"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/quadrature"
	"github.com/formwright/formwright/runtime/sparse"
	"github.com/formwright/formwright/runtime/tape"
)

// KernelSet is a set of compiled element kernels for one form on one cell
// type: the cell kernel and one facet kernel per boundary side carrying an
// integral. The generated Go kernels of the back end come as a KernelSet.
type KernelSet struct {
	Cell   kernel.Kernel
	Facets []kernel.FacetKernel
}

// Options control Solve. The zero value asks for the compiled kernels of
// the form where some are registered (runtime/compiled) and the
// interpreted ones otherwise, the form's quadrature, GOMAXPROCS workers,
// the automatic solver choice and t = 0.
type Options struct {
	// Time is the value of t in coefficients and boundary data.
	Time float64
	// Step is the value of the cell quantity time_step (Δt) in the form:
	// set by SolveTransient for the stepped form of BackwardEuler.
	Step float64
	// Workers for the element loop (<= 0: GOMAXPROCS) and the solver's
	// matrix–vector products.
	Workers int
	// Degree is the quadrature degree (0: the form's own,
	// ir.LoweredForm.QuadratureDegree). Compiled kernels are used only
	// when they integrate with this degree.
	Degree int
	// Kernels, if not nil, are the kernels to use; otherwise Solve looks
	// the form up among the compiled kernels by its content hash
	// (ir.FormHash) and falls back to the interpreted kernels.
	Kernels *KernelSet
	// Interpreted makes Solve use the interpreted kernels even where
	// compiled ones are registered.
	Interpreted bool
	// Solver, if not nil, overrides the automatic choice (see Solve).
	Solver *linsolve.Options
	// AutoTol, AutoMaxIter and AutoRestart tune the solver the automatic
	// choice picks: its relative tolerance, iteration limit and GMRES
	// restart (0: the solver's defaults).
	AutoTol     float64
	AutoMaxIter int
	AutoRestart int
	// Picard iteration for forms whose coefficients read a previous
	// iterate: at most MaxPicard solves (0: 50), stopping when
	// ‖x_k − x_{k−1}‖ ≤ PicardTol·‖x_k‖ (0: 1e-8). Initial is the first
	// previous iterate (nil: zero with the Dirichlet values).
	MaxPicard int
	PicardTol float64
	// PicardRelax ω in (0, 1) under-relaxes the iteration: the next
	// previous iterate is u_prev + ω (u − u_prev) (0 or 1: none). It helps
	// iterations that oscillate, such as a discontinuity-capturing
	// diffusivity lagged by one iterate.
	PicardRelax float64
	Initial     []float64
	// Progress, if not nil, is told when each phase of a solve starts
	// (Event), so a command can show that long work is under way; and
	// Iterations after each iteration of an iterative linear solver the
	// automatic choice picks (linsolve.Options.Progress).
	Progress   func(Event)
	Iterations func(iter int, relres float64)
	// PreviousFixed holds the previous field at Initial for a single solve
	// instead of iterating: the previous time level of a time step (see
	// SolveTransient).
	PreviousFixed bool
	// Newton controls Newton's method for a Newton step form
	// (ir.LoweredForm.Newton), which starts from Initial (nil: zero with
	// the Dirichlet values).
	Newton NewtonOptions
}

// Event is a phase of a solve as it starts or moves on: "dofs",
// "kernels", "pattern", "assembly" and "solve" (Step counts the nonlinear
// iteration from 1, Of the dofs), and the linear solver's own long phases
// (linsolve.PhaseReport: "amg-setup" per level, "factor" by tenths;
// Step of Of, with Detail).
type Event struct {
	Phase    string
	Step, Of int
	Detail   string
}

func (o Options) report(phase string, step, of int) {
	if o.Progress != nil {
		o.Progress(Event{Phase: phase, Step: step, Of: of})
	}
}

// AutoILUShift is the diagonal shift of ILU(0) (linsolve.Options.ILUShift)
// in the automatic choice for nonsymmetric matrices: measured on the
// skew-advection benchmark, 0.1 keeps GMRES iterations growing slower than
// h⁻¹ up to 512² (plain ILU(0) stagnates there).
const AutoILUShift = 0.1

// Phase is the wall time of one step of Solve.
type Phase struct {
	Name string
	Wall time.Duration
}

// FieldRange is the range of one component of one field.
type FieldRange struct {
	Field    string
	Comp     int
	Min, Max float64
}

// Summary describes a solve for reports and logs.
type Summary struct {
	Mesh       string // e.g. "triangle mesh, 2 dimensions"
	Cells      int
	Vertices   int
	Nodes      []int // global nodes of each field's space
	Dofs       int
	Method     string // the form's method: galerkin, supg, gls, vms
	KernelPath string // "interpreted" or "compiled"
	// Quadrature names the rules the integrals use, e.g. "degree 5: 7
	// points per cell, 3 per facet".
	Quadrature string
	Symmetric  bool   // the assembled matrix is symmetric (before Dirichlet)
	Solver     string // linsolve method and preconditioner, e.g. "cg+amg"
	// SolverReason says why the automatic choice picked the solver.
	SolverReason string
	// BytesPerUnknown is the memory of the matrix, the preconditioner or
	// factors and the Krylov vectors, per unknown (linsolve.MemoryUse).
	BytesPerUnknown float64
	Iterations      int // of the last linear solve
	Residual        float64
	NonlinearIters  int // nonlinear iterations, Picard or Newton (1 for a linear problem)
	// StepIterations lists the nonlinear iterations of each step of a
	// continuation (Continue); NonlinearIters is their sum.
	StepIterations []int
	// Nonlinear names the nonlinear iteration: "newton", "picard", or ""
	// for a linear problem.
	Nonlinear string
	// History is the iteration history of Newton's method.
	History []NewtonStep
	// Prepared counts the factorisations (or preconditioner set-ups) of
	// the linear solver so far; a transient solve with a constant matrix
	// has 1 for all its steps.
	Prepared int
	// MeanResidual is, for forms with mean conditions, the largest
	// relative residual of the equations replaced by fixing one dof (0 when
	// the constant is exactly free; see meanFix).
	MeanResidual float64
	Workers      int
	Phases       []Phase
	Ranges       []FieldRange
	// Engine names the engine that assembled and solved when it is not
	// this package (e.g. "PETSc 3.18.5, Open MPI" for runtime/distributed;
	// empty here), and Ranks its number of processes.
	Engine string
	Ranks  int
	// Natural says which unknowns have boundary facets without a
	// condition (zero flux holds there), and how many (NaturalText); ""
	// when every facet has one.
	Natural string
}

// FieldValues are the nodal values of one field: Values[comp][node] at
// the nodes of the field's space (Solution.Dofs.NodeCoords(field)).
type FieldValues struct {
	Name       string
	Components int
	Values     [][]float64
}

// Solution is the result of Solve.
type Solution struct {
	Form *ir.LoweredForm
	Mesh *mesh.Mesh
	Dofs *dof.Numbering
	X    []float64 // global dof vector (runtime/dof order)
	// Time is the t the solution belongs to (the new level of a time step).
	Time   float64
	Fields []FieldValues
	// Matrix and RHS are the assembled system before Dirichlet
	// elimination (of the last Picard step). The solutions SolveTransient
	// hands to Observe share them with the next step, which overwrites
	// them.
	Matrix  *sparse.CSR
	RHS     []float64
	Summary Summary
}

// PicardError reports a Picard iteration that did not settle.
type PicardError struct {
	Iter   int
	Change float64 // last relative change ‖x_k − x_{k−1}‖/‖x_k‖
	Tol    float64
}

func (e *PicardError) Error() string {
	return fmt.Sprintf("problem: Picard iteration not converged after %d steps (relative change %.1e > %g)", e.Iter, e.Change, e.Tol)
}

// dofMap numbers the form's fields on the mesh, with the elements the
// kernels use (kernel.LayoutFor).
func dofMap(form *ir.LoweredForm, m *mesh.Mesh) (*dof.Numbering, error) {
	lay, err := kernel.LayoutFor(form, m.Cell)
	if err != nil {
		return nil, err
	}
	var specs []dof.FieldSpec
	for i, f := range lay.Fields {
		specs = append(specs, dof.FieldSpec{Name: form.Unknowns[i].Name, Element: f.Element, Components: f.Components})
	}
	return dof.New(m.Cell, m.Coords, m.Cells, specs)
}

// previousUser is the optional capability of a kernel that says whether
// it reads the previous iterate (interp.Kernel has it).
type previousUser interface{ NeedsPrevious() bool }

// Solve discretises form on m and solves it: dof numbering (runtime/dof),
// kernels (interpreted from the form unless opts.Kernels is set), parallel
// assembly (runtime/assemble), Dirichlet values by row elimination at the
// boundary nodes (values from the lowered expressions evaluated there with
// the coefficient tape; later conditions win where sides meet), and the
// linear solve (runtime/linsolve). The automatic solver choice is
// linsolve.Recommend's: direct for small systems, algebraic multigrid as
// the preconditioner of CG for symmetric elliptic ones and of GMRES for a
// saddle-point system (block form) or a mildly nonsymmetric one, and
// GMRES with the shifted ILU(0) of AutoILUShift (or AMG smoothed by it,
// on large meshes) for advection-dominated ones.
//
// Input errors (unknown element, side missing from the mesh, malformed
// form) are returned as errors; numerical failures of the linear solver
// are returned unchanged as the linsolve typed errors
// (*linsolve.NotConvergedError, ...), so callers can tell them apart.
func Solve(form *ir.LoweredForm, m *mesh.Mesh, opts Options) (*Solution, error) {
	s, err := newSystem(form, m, opts)
	if err != nil {
		return nil, err
	}
	return s.solve(opts)
}

// compiledKernels returns the generated kernels registered for the form
// (runtime/compiled, by content hash) on cells c, or nil when there are
// none for this cell type and quadrature degree (0: the form's own).
func compiledKernels(form *ir.LoweredForm, c cell.Type, degree int) *KernelSet {
	if degree <= 0 {
		degree = form.QuadratureDegree()
	}
	k, ok := compiled.Lookup(ir.FormHash(form))
	if !ok || k.Cell != c || k.Degree != degree {
		return nil
	}
	ks := &KernelSet{Cell: k.NewCell()}
	if k.NewFacets != nil {
		ks.Facets = k.NewFacets()
	}
	return ks
}

// system is the set-up of one form on one mesh that does not change
// between solves: dof numbering, kernels, assembler and matrix pattern.
// SolveTransient keeps one for all time steps, together with the prepared
// linear solver while the constrained matrix stays the same.
type system struct {
	form     *ir.LoweredForm
	m        *mesh.Mesh
	dm       *dof.Numbering
	layout   *linsolve.Layout
	cellK    kernel.Kernel
	facetK   []kernel.FacetKernel
	asm      *assemble.Assembler
	A        *sparse.CSR
	b        []float64
	needPrev bool
	// needRec says the form reads recovered second derivatives
	// (ir.LoweredForm.ReadsRecovered): each assembly first recovers the
	// gradient of the previous iterate into rec (RecoverGradient).
	needRec bool
	recov   *GradientRecovery
	rec     []float64
	means   []meanFix
	// mass, if not nil, is the old time level of a Picard-iterated time
	// step (splitBackwardEuler): each iteration assembles the mass form
	// with the current iterate and adds M(u_prev) uⁿ to the right-hand
	// side, uⁿ = mass.old.
	mass  *oldLevel
	setup Summary // mesh, dofs, kernel path and the set-up phases
	// prepared is the linear solver of the last solve and its options;
	// prepares counts how often one was built.
	prepared     *linsolve.Prepared
	preparedOpts linsolve.Options
	prepares     int
}

func newSystem(form *ir.LoweredForm, m *mesh.Mesh, opts Options) (*system, error) {
	m, natural, err := ResolveParts(form, m) // parts.go
	if err != nil {
		return nil, err
	}
	sum := Summary{Natural: NaturalText(natural), Method: form.Method, Cells: m.NumCells(), Vertices: m.NumVertices(), Workers: opts.Workers}
	if sum.Workers <= 0 {
		sum.Workers = runtime.GOMAXPROCS(0)
	}
	sum.Mesh = fmt.Sprintf("%v mesh, %d dimensions, sides %v", m.Cell, m.Dim, m.BoundaryNames())
	clock := time.Now()
	phase := func(name string) {
		now := time.Now()
		sum.Phases = append(sum.Phases, Phase{name, now.Sub(clock)})
		clock = now
	}
	opts.report("dofs", 0, 0)
	dm, err := dofMap(form, m)
	if err != nil {
		return nil, err
	}
	for _, f := range dm.Fields {
		sum.Nodes = append(sum.Nodes, f.NumNodes)
	}
	sum.Dofs = dm.NumDofs
	phase("dofs")
	opts.report("kernels", 0, dm.NumDofs)

	s := &system{form: form, m: m, dm: dm, layout: layoutOf(form, dm)}
	sum.Quadrature = quadratureText(form, m.Cell, opts.Degree)
	ks := opts.Kernels
	if ks == nil && !opts.Interpreted {
		ks = compiledKernels(form, m.Cell, opts.Degree)
	}
	if ks != nil {
		sum.KernelPath = "compiled"
		s.cellK, s.facetK = ks.Cell, ks.Facets
	} else {
		sum.KernelPath = "interpreted"
		ik, err := interp.NewKernel(form, m.Cell, interp.Options{Degree: opts.Degree})
		if err != nil {
			return nil, err
		}
		s.cellK = ik
		fks, err := interp.NewFacetKernels(form, m.Cell, interp.Options{Degree: opts.Degree})
		if err != nil {
			return nil, err
		}
		for _, f := range fks {
			s.facetK = append(s.facetK, f)
		}
	}
	for _, fk := range s.facetK {
		if _, ok := m.Boundaries[fk.Side()]; !ok {
			return nil, fmt.Errorf("problem: boundary integral on %q: %w (sides: %v)", fk.Side(), ErrNoSide, m.BoundaryNames())
		}
	}
	phase("kernels")
	opts.report("pattern", 0, dm.NumDofs)

	if s.means, err = newMeanFixes(form, m, dm); err != nil {
		return nil, err
	}
	s.asm = assemble.New(m, dm)
	s.asm.Workers = opts.Workers
	s.A = s.asm.NewMatrix()
	s.b = make([]float64, dm.NumDofs)
	phase("pattern")

	// Whether the form reads the previous iterate is a property of the
	// form, whichever kernels implement it; a kernel may also say so.
	s.needPrev = form.ReadsPrevious()
	if form.ReadsRecovered() {
		s.needRec = true
		if s.recov, err = NewGradientRecovery(m, dm); err != nil {
			return nil, err
		}
		s.rec = make([]float64, dm.NumDofs*dm.Dim)
	}
	if p, ok := s.cellK.(previousUser); ok && p.NeedsPrevious() {
		s.needPrev = true
	}
	for _, fk := range s.facetK {
		if p, ok := fk.(previousUser); ok && p.NeedsPrevious() {
			s.needPrev = true
		}
	}
	s.setup = sum
	return s, nil
}

// linearSolve solves the constrained system, reusing the prepared solver
// of the previous call when the matrix and the options are the same (bit
// for bit: assembly is deterministic, so a constant matrix is recognised
// exactly).
func (s *system) linearSolve(A *sparse.CSR, b, x []float64, so linsolve.Options) (linsolve.Result, error) {
	if p := s.prepared; p == nil || !sameOptions(s.preparedOpts, so) || !slices.Equal(p.A.Val, A.Val) ||
		!slices.Equal(p.A.Col, A.Col) || !slices.Equal(p.A.RowPtr, A.RowPtr) {
		p, err := linsolve.Prepare(A, so)
		if err != nil {
			return linsolve.Result{}, err
		}
		s.prepared, s.preparedOpts = p, so
		s.prepares++
	}
	return s.prepared.Solve(b, x)
}

// DirectResidualTol is the largest relative residual ‖b − Ax‖/‖b‖ a
// direct solve may leave: far above the round-off of a well-conditioned
// factorisation (1e-14 or so), far below what a singular or nearly
// singular matrix gives. Common practice, no source.
const DirectResidualTol = 1e-8

// ResidualError is a linear solve whose own final residual, recomputed
// from A, b and x, is above the tolerance: the result is not a solution.
type ResidualError struct {
	Solver   string
	Residual float64
	Tol      float64
}

func (e *ResidualError) Error() string {
	return fmt.Sprintf("problem: the %s solve left a relative residual %.3g, above the tolerance %.3g: the matrix is singular or nearly so "+
		"(an unknown fixed only up to a constant needs a value condition or a mean condition)", e.Solver, e.Residual, e.Tol)
}

// checkResidual checks a linear solve's explicit residual against its
// tolerance: the relative tolerance of an iterative method (with a factor
// 10 for the difference between the recurrence it stopped on and the
// explicit residual), DirectResidualTol for the direct solver.
func checkResidual(res linsolve.Result, so linsolve.Options) error {
	tol := DirectResidualTol
	if so.Method != linsolve.MethodDirect {
		tol = so.RelTol
		if tol == 0 {
			tol = linsolve.DefaultRelTol
		}
		tol *= 10
	}
	if !(res.Residual <= tol) {
		return &ResidualError{Solver: res.Solver, Residual: res.Residual, Tol: tol}
	}
	return nil
}

// sameOptions compares the options that shape a prepared solver.
func sameOptions(a, b linsolve.Options) bool {
	return a.Method == b.Method && a.Precond == b.Precond && a.ILUShift == b.ILUShift && a.Workers == b.Workers &&
		a.RelTol == b.RelTol && a.AbsTol == b.AbsTol && a.MaxIter == b.MaxIter && a.Restart == b.Restart && a.Unscaled == b.Unscaled &&
		a.Layout == b.Layout && a.Schur == b.Schur && sameAMG(a.AMG, b.AMG)
}

// sameAMG compares the AMG options that shape a hierarchy (the function
// and slice fields aside).
func sameAMG(a, b linsolve.AMGOptions) bool {
	return a.Strength == b.Strength && a.Smoother == b.Smoother && a.PreSweeps == b.PreSweeps && a.PostSweeps == b.PostSweeps &&
		a.ILUShift == b.ILUShift && a.Unsmoothed == b.Unsmoothed && a.MaxCoarse == b.MaxCoarse && a.MaxLevels == b.MaxLevels &&
		a.Symmetric == b.Symmetric && len(a.NearNull) == 0 && len(b.NearNull) == 0
}

// solve assembles and solves at opts.Time, iterating Picard when the form
// reads its previous iterate (unless opts.PreviousFixed).
func (s *system) solve(opts Options) (*Solution, error) {
	if s.form.Newton {
		return s.newton(opts)
	}
	form, m, dm := s.form, s.m, s.dm
	sum := s.setup
	sum.Phases = slices.Clone(s.setup.Phases)
	clock := time.Now()
	fixed, values, err := dirichlet(form, m, dm, opts.Time)
	if err != nil {
		return nil, err
	}
	for _, mf := range s.means {
		fixed[mf.pin], values[mf.pin] = true, 0
	}
	sum.Phases = append(sum.Phases, Phase{"dirichlet-data", time.Since(clock)})

	A, b := s.A, s.b
	maxIt, tol := opts.MaxPicard, opts.PicardTol
	if maxIt <= 0 {
		maxIt = 50
	}
	if tol <= 0 {
		tol = 1e-8
	}
	if !s.needPrev {
		maxIt = 1
	}
	x := make([]float64, dm.NumDofs)
	var prev []float64
	if s.needPrev {
		prev = make([]float64, dm.NumDofs)
		if opts.Initial != nil {
			if len(opts.Initial) != dm.NumDofs {
				return nil, fmt.Errorf("problem: initial iterate has %d values for %d dofs", len(opts.Initial), dm.NumDofs)
			}
			copy(prev, opts.Initial)
		}
		if !opts.PreviousFixed {
			for i, f := range fixed {
				if f {
					prev[i] = values[i]
				}
			}
		}
		copy(x, prev)
	}
	var Asys *sparse.CSR
	var bsys []float64
	var tAsm, tSolve time.Duration
	for it := 1; it <= maxIt; it++ {
		t0 := time.Now()
		opts.report("assembly", it, dm.NumDofs)
		in := assemble.Input{Time: opts.Time, Step: opts.Step, Previous: prev}
		if err := s.assemble(in); err != nil {
			return nil, err
		}
		if !systemFinite(A, b) {
			return nil, s.nonFinite(opts)
		}
		Asys = A.Clone()
		bsys = append(bsys[:0], b...)
		sum.Symmetric = assemble.Constrain(Asys, bsys, fixed, values)
		t1 := time.Now()
		tAsm += t1.Sub(t0)
		so, why := chooseSolver(opts, Asys, s.layout)
		sum.Solver, sum.SolverReason = solverName(so), why
		opts.report("solve", it, dm.NumDofs)
		res, err := s.linearSolve(Asys, bsys, x, so)
		tSolve += time.Since(t1)
		if err != nil {
			return nil, err
		}
		if err := checkResidual(res, so); err != nil {
			return nil, err
		}
		sum.BytesPerUnknown = s.prepared.Memory().PerUnknown()
		sum.Iterations, sum.Residual, sum.NonlinearIters = res.Iterations, res.Residual, it
		sum.MeanResidual = 0
		for i := range s.means {
			sum.MeanResidual = math.Max(sum.MeanResidual, s.means[i].replacedResidual(A, b, x))
			s.means[i].shift(x)
		}
		if !s.needPrev || opts.PreviousFixed {
			break
		}
		dn, xn := 0.0, 0.0
		for i := range x {
			dn += (x[i] - prev[i]) * (x[i] - prev[i])
			xn += x[i] * x[i]
		}
		change := math.Sqrt(dn) / math.Max(math.Sqrt(xn), math.SmallestNonzeroFloat64)
		if w := opts.PicardRelax; w > 0 && w < 1 {
			// Under-relaxation: the next iterate is prev + ω (x − prev).
			for i := range x {
				x[i] = prev[i] + w*(x[i]-prev[i])
			}
		}
		copy(prev, x)
		if change <= tol {
			break
		}
		if it == maxIt {
			return nil, &PicardError{Iter: it, Change: change, Tol: tol}
		}
	}
	if s.needPrev && !opts.PreviousFixed {
		sum.Nonlinear = "picard"
	}
	sum.Prepared = s.prepares
	sum.Phases = append(sum.Phases, Phase{"assembly+dirichlet", tAsm}, Phase{"solve", tSolve})
	return s.solution(x, sum, opts.Time), nil
}

// solverName describes the linear solver for the summary.
func solverName(so linsolve.Options) string {
	name := so.Method.String()
	if so.Method != linsolve.MethodDirect {
		name += "+" + so.Precond.String()
		if (so.Precond == linsolve.PrecondILU0 || so.AMG.Smoother == linsolve.SmoothILU0) && so.ILUShift != 0 {
			name += fmt.Sprintf(" (shift %g)", so.ILUShift)
		}
	}
	return name
}

// solution packs the dof vector x into a Solution at time t, with the
// field values and their ranges.
func (s *system) solution(x []float64, sum Summary, t float64) *Solution {
	form, m, dm, A, b := s.form, s.m, s.dm, s.A, s.b
	clock := time.Now()
	sol := &Solution{Form: form, Mesh: m, Dofs: dm, X: x, Time: t, Matrix: A, RHS: b}
	for k, f := range dm.Fields {
		fv := FieldValues{Name: f.Name, Components: f.Components}
		for c := 0; c < f.Components; c++ {
			v := make([]float64, f.NumNodes)
			lo, hi := math.Inf(1), math.Inf(-1)
			for n := range v {
				v[n] = x[dm.Global(k, c, n)]
				lo, hi = math.Min(lo, v[n]), math.Max(hi, v[n])
			}
			fv.Values = append(fv.Values, v)
			sum.Ranges = append(sum.Ranges, FieldRange{Field: f.Name, Comp: c, Min: lo, Max: hi})
		}
		sol.Fields = append(sol.Fields, fv)
	}
	sum.Phases = append(sum.Phases, Phase{"output", time.Since(clock)})
	sol.Summary = sum
	return sol
}

// assemble assembles the form into s.A and s.b (recovering the gradient of
// the previous iterate first when the form reads recovered derivatives),
// with the old time level M uⁿ of a Picard-iterated time step added to the right-hand side.
func (s *system) assemble(in assemble.Input) error {
	if s.needRec && in.Previous != nil {
		if err := s.recov.Recover(in.Previous, s.rec); err != nil {
			return err
		}
		in.Recovered = s.rec
	}
	if err := s.asm.Assemble(s.cellK, s.facetK, s.A, s.b, in); err != nil {
		return err
	}
	if l := s.mass; l != nil {
		if err := s.asm.Assemble(l.k, nil, l.M, l.b, in); err != nil {
			return err
		}
		l.M.MulVec(l.b, l.old)
		for i, v := range l.b {
			s.b[i] += v
		}
	}
	return nil
}

// Assembled is one assembly of a form on a mesh: the global matrix and
// right-hand side as the kernels produce them, the value conditions
// (Fixed, Values), and the system with those conditions imposed by row
// elimination (assemble.Constrain), which is what Solve hands to the
// linear solver. Rows and columns are dofs numbered by Dofs.
type Assembled struct {
	Dofs           *dof.Numbering
	Matrix         *sparse.CSR
	RHS            []float64
	Fixed          []bool
	Values         []float64
	Constrained    *sparse.CSR
	ConstrainedRHS []float64
	// Kernels says which kernels assembled it: "compiled" or
	// "interpreted".
	Kernels string
}

// Assemble assembles the form on the mesh once, at opts.Time, with
// opts.Initial as the previous iterate of a form that reads one (zero
// otherwise), and imposes the value conditions. It is the first half of
// Solve, for library users who want the discrete system itself.
func Assemble(form *ir.LoweredForm, m *mesh.Mesh, opts Options) (*Assembled, error) {
	s, err := newSystem(form, m, opts)
	if err != nil {
		return nil, err
	}
	fixed, values, err := dirichlet(form, s.m, s.dm, opts.Time)
	if err != nil {
		return nil, err
	}
	in := assemble.Input{Time: opts.Time, Step: opts.Step}
	if s.needPrev {
		in.Previous = make([]float64, s.dm.NumDofs)
		if opts.Initial != nil {
			if len(opts.Initial) != s.dm.NumDofs {
				return nil, fmt.Errorf("problem: initial iterate has %d values for %d dofs", len(opts.Initial), s.dm.NumDofs)
			}
			copy(in.Previous, opts.Initial)
		}
	}
	if err := s.assemble(in); err != nil {
		return nil, err
	}
	if !systemFinite(s.A, s.b) {
		return nil, s.nonFinite(opts)
	}
	a := &Assembled{Dofs: s.dm, Matrix: s.A, RHS: s.b, Fixed: fixed, Values: values,
		Constrained: s.A.Clone(), ConstrainedRHS: append([]float64(nil), s.b...), Kernels: s.setup.KernelPath}
	assemble.Constrain(a.Constrained, a.ConstrainedRHS, fixed, values)
	return a, nil
}

// chooseSolver returns the linear solver of a solve: opts.Solver when
// set, otherwise linsolve.Recommend's choice for the constrained matrix A,
// tuned by the Auto options; and why.
func chooseSolver(opts Options, A *sparse.CSR, layout *linsolve.Layout) (linsolve.Options, string) {
	var so linsolve.Options
	why := "as asked"
	if opts.Solver != nil {
		so = *opts.Solver
		if so.Layout == nil {
			so.Layout = layout
		}
	} else {
		rec := linsolve.Recommend(A, layout)
		so, why = rec.Options, rec.Reason
		if opts.AutoTol > 0 {
			so.RelTol = opts.AutoTol
		}
		if opts.AutoMaxIter > 0 {
			so.MaxIter = opts.AutoMaxIter
		}
		if opts.AutoRestart > 0 {
			so.Restart = opts.AutoRestart
		}
	}
	if so.Workers == 0 {
		so.Workers = opts.Workers
	}
	if so.Progress == nil {
		so.Progress = opts.Iterations
	}
	if so.OnPhase == nil && opts.Progress != nil {
		so.OnPhase = func(r linsolve.PhaseReport) {
			opts.Progress(Event{Phase: r.Phase, Step: r.Step, Of: r.Steps, Detail: r.Detail})
		}
	}
	return so, why
}

// layoutOf describes the fields of a dof numbering to the linear solvers:
// offsets, nodes and components, and which fields are constraints (ir.LoweredUnknown.Constraint).
func layoutOf(form *ir.LoweredForm, dm *dof.Numbering) *linsolve.Layout {
	l := &linsolve.Layout{}
	for k, f := range dm.Fields {
		l.Fields = append(l.Fields, linsolve.FieldBlock{Name: f.Name, Offset: f.Offset, Nodes: f.NumNodes,
			Components: f.Components, Dim: dm.Dim, Constraint: form.Unknowns[k].Constraint})
	}
	return l
}

// ErrNoSide is wrapped by the error for a condition or integral on a side
// the mesh does not have.
var ErrNoSide = errors.New("side not in the mesh")

// dirichlet evaluates the value conditions at the boundary nodes.
func dirichlet(form *ir.LoweredForm, m *mesh.Mesh, dm *dof.Numbering, t float64) ([]bool, []float64, error) {
	fixed := make([]bool, dm.NumDofs)
	values := make([]float64, dm.NumDofs)
	if len(form.Dirichlet) == 0 {
		return fixed, values, nil
	}
	if partsMissing(form, m) {
		var err error
		if m, _, err = ResolveParts(form, m); err != nil {
			return nil, nil, err
		}
	}
	for _, dc := range form.Dirichlet {
		if dc.Unknown < 0 || dc.Unknown >= len(dm.Fields) {
			return nil, nil, fmt.Errorf("problem: Dirichlet condition on unknown %d of %d", dc.Unknown, len(dm.Fields))
		}
		f := dm.Fields[dc.Unknown]
		if dc.Comp < 0 || dc.Comp >= f.Components {
			return nil, nil, fmt.Errorf("problem: Dirichlet condition on component %d of %q (%d components)", dc.Comp, f.Name, f.Components)
		}
		refs, ok := m.Boundaries[dc.Side]
		if !ok {
			return nil, nil, fmt.Errorf("problem: value condition on %q: %w (sides: %v)", dc.Side, ErrNoSide, m.BoundaryNames())
		}
		if tape.ExprDeps(dc.Value)&(tape.DepCell) != 0 {
			return nil, nil, fmt.Errorf("problem: boundary value of %q on %q uses a cell quantity", f.Name, dc.Side)
		}
		slots := &tape.Slots{}
		p, err := tape.Compile([]ir.Expr{dc.Value}, slots)
		if err != nil {
			return nil, nil, fmt.Errorf("problem: boundary value of %q on %q: %w", f.Name, dc.Side, err)
		}
		if len(slots.Previous()) > 0 {
			return nil, nil, fmt.Errorf("problem: boundary value of %q on %q depends on an unknown", f.Name, dc.Side)
		}
		env := make([]float64, slots.Len())
		env[tape.SlotT] = t
		out := make([]float64, 1)
		stack := make([]float64, p.StackSize())
		facets := make([]dof.Facet, len(refs))
		for i, r := range refs {
			facets[i] = dof.Facet{Cell: int(r.Cell), Local: int(r.Facet)}
		}
		xs := dm.NodeCoords(dc.Unknown)
		d := dm.Dim
		for _, n := range dm.BoundaryNodes(dc.Unknown, facets) {
			copy(env[tape.SlotX:tape.SlotX+d], xs[int(n)*d:int(n+1)*d])
			p.Eval(env, out, stack)
			g := dm.Global(dc.Unknown, dc.Comp, int(n))
			fixed[g] = true
			values[g] = out[0]
		}
	}
	return fixed, values, nil
}

// quadratureText describes the quadrature rules of a form on cells c:
// their degree (degree, or the form's own when 0) and points per cell and
// per facet.
func quadratureText(form *ir.LoweredForm, c cell.Type, degree int) string {
	if degree <= 0 {
		degree = form.QuadratureDegree()
	}
	n, points := quadrature.For(c, degree).NumPoints(), "points"
	if n == 1 {
		points = "point"
	}
	out := fmt.Sprintf("degree %d, %d %s per cell", degree, n, points)
	if len(form.Sides()) > 0 {
		n := 1
		if c.Dim() > 1 {
			n = quadrature.For(c.FacetType(), degree).NumPoints()
		}
		out += fmt.Sprintf(", %d per facet", n)
	}
	if form.Degree > 0 && degree == form.Degree {
		out += " (set by the model)"
	}
	return out
}
