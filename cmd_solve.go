package main

import (
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/runtime/linsolve"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/output"
	"github.com/formwright/formwright/runtime/plot"
	"github.com/formwright/formwright/runtime/problem"
)

// solveFlags are the options of solve (and of verify, which solves too).
type solveFlags struct {
	mesh       *string
	solver     *string
	tol        *float64
	maxIter    *int
	restart    *int
	shift      *float64
	workers    *int
	time       *float64
	quiet      *bool
	relax      *float64
	quadrature *int
}

func addSolveFlags(fs *cmdFlags) *solveFlags {
	return &solveFlags{
		mesh:       fs.String("mesh", "", "mesh: span:X0,X1[,Y0,Y1[,Z0,Z1]]:N[xN[xN]][:PATTERN] (e.g. span:0,1,0,1:64x64; 2D patterns tri, tri-flip, quartered, quad; 3D tet, hex; 1D graded=R) or a .vtu mesh file (default: by dimension and element)"),
		solver:     fs.String("solver", "auto", "auto, direct, cg, gmres or bicgstab, optionally +none, +jacobi, +ilu0, +amg or +amg-block (e.g. cg+amg; amg-block for saddle-point systems)"),
		tol:        fs.Float64("tol", 0, "relative residual tolerance of iterative solvers, in (0, 1) (default 1e-10)"),
		maxIter:    fs.Int("max-iter", 0, "iteration limit of iterative solvers (default 10000)"),
		restart:    fs.Int("restart", 0, "GMRES restart length (default 50)"),
		shift:      fs.Float64("ilu-shift", 0, "factorise A + s·diag(A) in ILU(0) (shifted ILU; 0.1 stabilises it on advection-dominated problems)"),
		workers:    fs.Int("workers", 0, "worker goroutines for assembly and mat-vec (default: GOMAXPROCS)"),
		time:       fs.Float64("time", 0, "value of t in coefficients and boundary data (the start time of a transient model)"),
		quiet:      fs.Bool("quiet", false, "no progress on standard error"),
		quadrature: fs.Int("quadrature", 0, "quadrature degree of every integral (default: the model's quadrature statement, else chosen from the form's degrees)"),
		relax:      fs.Float64("relax", 0, "Picard under-relaxation ω in (0, 1]: the next iterate is u_prev + ω(u − u_prev) (default: none)"),
	}
}

// options turns the solve flags into problem options, checking each;
// progress goes to prog. The solver flags are read only when they are the
// go engine's (ownSolver; the PETSc engine reads them itself,
// cmd_engine.go).
func (sf *solveFlags) options(prog *progress, ownSolver bool) (problem.Options, error) {
	opts := problem.Options{Time: *sf.time, Workers: *sf.workers, PicardRelax: *sf.relax}
	if r := *sf.relax; !(r >= 0 && r <= 1) {
		return opts, usagef("--relax %g: the under-relaxation factor must be in (0, 1] (0: none)", r)
	}
	if math.IsNaN(*sf.time) || math.IsInf(*sf.time, 0) {
		return opts, usagef("--time %g: give a finite time", *sf.time)
	}
	if q := *sf.quadrature; q < 0 || q > compiler.MaxQuadrature {
		return opts, usagef("--quadrature %d: give a degree from 1 to %d (0: automatic)", q, compiler.MaxQuadrature)
	}
	opts.Degree = *sf.quadrature
	if *sf.workers < 0 || *sf.workers > 1024 {
		return opts, usagef("--workers %d: give a number from 1 to 1024 (0: GOMAXPROCS)", *sf.workers)
	}
	opts.Progress, opts.Iterations = prog.solveEvents(""), prog.iterations
	if !ownSolver {
		return opts, nil
	}
	so, err := parseSolver(sf, prog.iterations)
	opts.Solver = so
	if so == nil {
		opts.AutoTol, opts.AutoMaxIter, opts.AutoRestart = *sf.tol, *sf.maxIter, *sf.restart
	}
	return opts, err
}

// Limits on what a command line may ask for (README, "Limits").
const (
	maxRestart = 1000      // GMRES restart length: restart+1 vectors of the system's size
	maxSteps   = 1_000_000 // time steps of one run
)

// parseSolver reads --solver and its tuning flags; nil means the automatic
// choice of runtime/problem.
func parseSolver(sf *solveFlags, progress func(int, float64)) (*linsolve.Options, error) {
	switch s := *sf.shift; {
	case !(s >= 0) || math.IsInf(s, 0):
		return nil, usagef("--ilu-shift %g: give a finite shift ≥ 0", s)
	case *sf.tol != 0 && !(*sf.tol > 0 && *sf.tol < 1):
		return nil, usagef("--tol %g: the relative tolerance must be in (0, 1)", *sf.tol)
	case *sf.maxIter < 0:
		return nil, usagef("--max-iter %d: give a positive number", *sf.maxIter)
	case *sf.restart < 0 || *sf.restart > maxRestart:
		return nil, usagef("--restart %d: give a number from 1 to %d (GMRES keeps restart+1 vectors)", *sf.restart, maxRestart)
	}
	if *sf.solver == "auto" {
		if *sf.shift != 0 {
			return nil, usagef("--ilu-shift applies to an explicit ilu0 preconditioner: give --solver gmres+ilu0")
		}
		return nil, nil // the automatic choice, tuned by --tol, --max-iter and --restart
	}
	so := &linsolve.Options{RelTol: *sf.tol, MaxIter: *sf.maxIter, Restart: *sf.restart, ILUShift: *sf.shift, Progress: progress, Workers: *sf.workers}
	name := *sf.solver
	meth, pre, _ := strings.Cut(name, "+")
	var err error
	if so.Method, err = linsolve.ParseMethod(meth); err != nil {
		return nil, usagef("--solver: %v", err)
	}
	if pre != "" {
		if so.Precond, err = linsolve.ParsePrecond(pre); err != nil {
			return nil, usagef("--solver: %v", err)
		}
	} else if so.Method != linsolve.MethodDirect {
		so.Precond = linsolve.PrecondILU0
	}
	return so, nil
}

// buildMesh reads --mesh (or the default mesh of the model's dimension and
// element family).
func buildMesh(m *compiler.Model, spec string) (*mesh.Mesh, string, error) {
	if spec == "" {
		spec = mesh.DefaultSpec(m.Dim, m.Unknowns[0].Element.Family == ir.TensorProduct)
	}
	msh, err := mesh.Load(spec)
	if err != nil {
		var se *mesh.SpecError
		if errors.As(err, &se) {
			return nil, spec, usagef("--mesh: %s", se.Detail())
		}
		return nil, spec, usagef("--mesh: %v", err)
	}
	return msh, spec, nil
}

// cmdSolve assembles and solves a model's discrete problem.
func cmdSolve(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("solve", "MODEL [flags]", "Derive and lower MODEL with one method, assemble it on a mesh and solve it.\nThe summary says which kernels, solver and mesh were used.")
	method := fs.String("method", "", "galerkin, supg, gls, vms, or all (default: the model's first stabilised method, else galerkin)")
	sf := addSolveFlags(fs)
	nl := addNonlinearFlags(fs, true) // nonlinear models (cmd_nonlinear.go)
	ef := addEngineFlags(fs)
	dt := fs.Float64("dt", 0, "time step of a transient model (backward Euler; default: the model's coefficient step, if it has one)")
	steps := fs.Int("steps", 0, "number of time steps of a transient model")
	until := fs.Float64("until", 0, "end time of a transient model (instead of --steps)")
	out := fs.String("out", "", "write the solution: FILE.vtu (VTK XML, binary appended), FILE.csv")
	ascii := fs.Bool("vtu-ascii", false, "write .vtu in ASCII instead of binary appended")
	asJSON := fs.Bool("json", false, "print the summary and nodal values as JSON")
	plotPath := fs.String("plot", "", "draw the solution as a PNG (1D line plot, 2D colour map with contours)")
	every := fs.Int("every", 1, "transient models with --out: write a frame after every N-th time step (and after the last)")
	pos, err := parseArgs(fs, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("solve takes one model")
	}
	engineSolve, err := ef.solveFunc(sf, stderr)
	if err != nil {
		return err
	}
	if engineSolve != nil {
		// The PETSc engine's kernels are the C ones, which cannot read
		// recovered second derivatives (gen --lang c).
		*nl.recover = false
	}
	prog := newProgress(stderr, *sf.quiet)
	defer prog.done()
	opts, err := sf.options(prog, engineSolve == nil)
	if err != nil {
		return err
	}
	// Nonlinear models: the iteration's options (cmd_nonlinear.go).
	if err := nl.check(fs); err != nil {
		return err
	}
	nl.apply(&opts, stderr, *sf.quiet, prog.done)
	switch {
	case math.IsNaN(*dt) || math.IsInf(*dt, 0) || *dt < 0:
		return usagef("--dt %g: give a positive, finite time step", *dt)
	case *steps < 0 || *steps > maxSteps:
		return usagef("--steps %d: give a number from 1 to %d", *steps, maxSteps)
	case math.IsNaN(*until) || math.IsInf(*until, 0):
		return usagef("--until %g: give a finite end time", *until)
	case *until != 0 && *steps != 0:
		return usagef("give --steps or --until, not both")
	case *until != 0 && !(*until > *sf.time):
		return usagef("--until %g is not after the start time %g", *until, *sf.time)
	case *every < 1:
		return usagef("--every %d: give a positive number of steps", *every)
	}
	if *out != "" {
		if ext := filepath.Ext(*out); ext != ".vtu" && ext != ".csv" {
			return usagef("--out: unknown file type %q (use .vtu or .csv)", ext)
		}
	}
	if *plotPath != "" && filepath.Ext(*plotPath) != ".png" {
		return usagef("--plot: plots are PNG files: name it FILE.png")
	}
	m, err := loadModel(pos[0])
	if err != nil {
		return err
	}
	var methods []compiler.Method
	if *method == "all" {
		methods = m.DefaultMethods()
		if *out != "" || *asJSON {
			return usagef("--method all cannot be combined with --out or --json: choose one method")
		}
	} else {
		meth := m.DefaultMethod()
		if *method != "" {
			ms, err := compiler.ParseMethods(*method)
			if err != nil || len(ms) != 1 {
				return usagef("unknown method %q (use galerkin, supg, gls, vms or all)", *method)
			}
			meth = ms[0]
		}
		if err := m.CheckMethod(meth); err != nil {
			return &usageError{err.Error()}
		}
		methods = []compiler.Method{meth}
	}
	if *plotPath != "" && m.Dim == 3 {
		return usagef("--plot draws 1D and 2D solutions only; write a 3D solution with --out FILE.vtu")
	}
	var tr transientRun
	if m.IsTransient() {
		if tr, err = planTransient(m, *dt, *steps, *until, *sf.time); err != nil {
			return err
		}
		tr.every = *every
	}
	targets := []outputTarget{{"--out", *out}}
	if *out != "" && tr.steps > 0 {
		// A transient run writes a time series instead of one file.
		ext := filepath.Ext(*out)
		tr.frames = &series{base: strings.TrimSuffix(*out, ext), ext: ext, ascii: *ascii}
		targets = targets[:0]
		for _, p := range tr.frames.paths(tr) {
			targets = append(targets, outputTarget{"--out", p})
		}
	}
	for _, p := range plotPaths(*plotPath, m.Dim, methods) {
		targets = append(targets, outputTarget{"--plot", p})
	}
	if err := checkOutputs([]string{pos[0], *sf.mesh}, targets...); err != nil {
		return err
	}
	prog.say("mesh", "building the mesh")
	msh, spec, err := buildMesh(m, *sf.mesh)
	if err != nil {
		return err
	}
	for _, name := range m.FreeConstants() {
		fmt.Fprintf(stderr, "formwright: warning: %s is fixed only up to a constant (no value, Robin or mean condition holds it): the discrete problem is singular\n", name)
	}
	var sols []*problem.Solution
	var cellData [][]output.Array
	for k, meth := range methods {
		lf, deriv, err := nl.lower(m, meth) // Newton step, Picard or linear form (cmd_nonlinear.go)
		if err != nil {
			return err
		}
		if err := problem.CheckMesh(lf, msh); err != nil {
			return meshFitError(m, err)
		}
		start := time.Now()
		var sol *problem.Solution
		switch {
		case lf.IsTransient() && engineSolve != nil:
			return usagef("--engine petsc solves steady models; %s is transient", m.Name)
		case lf.IsTransient():
			sol, err = solveTransient(m, lf, msh, tr, opts, prog)
		case engineSolve != nil && (*nl.ramp != "" || *nl.picard > 0):
			return usagef("--ramp and --picard-steps run on the go engine only")
		case engineSolve != nil:
			sol, err = engineSolve(lf, msh, opts)
		default:
			// Picard start and continuation for nonlinear models (cmd_nonlinear.go).
			sol, err = nl.solve(m, meth, lf, msh, opts, stderr, *sf.quiet)
		}
		if err != nil {
			return nonlinearFailure(err) // cmd_nonlinear.go
		}
		wall := time.Since(start)
		prog.done()
		if err := checkFinite(sol); err != nil {
			return err
		}
		step := opts.Step
		if tr.steps > 0 {
			step = tr.dt // τ of a transient model reads the time step of the run
		}
		cells, err := indicators(deriv, meth, sol, step)
		if err != nil {
			return err
		}
		sols = append(sols, sol)
		cellData = append(cellData, cells)
		if *asJSON {
			if err := writeOutputs(*out, tr, sol, cells, *ascii); err != nil {
				return err
			}
			return writeSummaryJSON(stdout, m, meth, spec, sol, cells, wall)
		}
		if k > 0 {
			fmt.Fprintln(stdout)
		}
		writeSummaryText(stdout, m, meth, spec, sol, cells, wall)
		for _, line := range exactErrors(m, sol, sol.Time) {
			fmt.Fprintln(stdout, line)
		}
	}
	if err := writeOutputs(*out, tr, sols[0], cellData[0], *ascii); err != nil {
		return err
	}
	if *plotPath != "" {
		if err := plotSolutions(*plotPath, sols, m, methods); err != nil {
			return err
		}
	}
	return nil
}

// transientRun is how solve steps a transient model: the time step, the
// number of steps from the start time, and the time series to write.
type transientRun struct {
	dt    float64
	steps int
	start float64
	// frames, when not nil, writes a frame after every every-th step
	// and after the last.
	frames *series
	every  int
}

// planTransient resolves the time step (--dt, or the model's constant
// coefficient step) and the number of steps (--steps, or from --until).
func planTransient(m *compiler.Model, dt float64, steps int, until, start float64) (transientRun, error) {
	if dt == 0 {
		dt, _ = m.StepValue()
	}
	if !(dt > 0) || math.IsInf(dt, 0) {
		return transientRun{}, usagef("model %s is transient: give the time step with --dt (or a constant coefficient step)", m.Name)
	}
	if steps == 0 && until > start {
		n := math.Round((until - start) / dt)
		if !(n <= maxSteps) {
			return transientRun{}, usagef("--until %g with --dt %g would take %g steps; at most %d are allowed", until, dt, n, maxSteps)
		}
		steps = int(n)
	}
	if steps < 1 {
		return transientRun{}, usagef("model %s is transient: give --steps N or --until T", m.Name)
	}
	return transientRun{dt: dt, steps: steps, start: start}, nil
}

// series is the time series of a transient run: one file per frame,
// FILE_NNNN.vtu (or .csv) with the frame's time, and an index
// FILE_times.csv of frame, step, time and file. It is staged and appears
// only when the run succeeds.
type series struct {
	base, ext string
	ascii     bool
	staged    output.Staged
	index     [][]string
}

func (s *series) frame(step int) string { return fmt.Sprintf("%s_%04d%s", s.base, step, s.ext) }
func (s *series) indexPath() string     { return s.base + "_times.csv" }

// paths lists every file of the series, for the checks before the run.
func (s *series) paths(tr transientRun) []string {
	var out []string
	for n := 1; n <= tr.steps; n++ {
		if n%tr.every == 0 || n == tr.steps {
			out = append(out, s.frame(n))
		}
	}
	return append(out, s.indexPath())
}

func (s *series) write(step int, t float64, sol *problem.Solution) error {
	g := sol.Grid()
	g.Time, g.Timed = t, true
	path := s.frame(step)
	s.index = append(s.index, []string{strconv.Itoa(len(s.index)), strconv.Itoa(step), strconv.FormatFloat(t, 'g', -1, 64), filepath.Base(path)})
	if s.ext == ".csv" {
		return s.staged.Write(path, func(w io.Writer) error { return output.WriteCSV(w, g, sol.Mesh.Dim) })
	}
	opts := output.VTUOptions{Encoding: output.Binary}
	if s.ascii {
		opts.Encoding = output.ASCII
	}
	return s.staged.Write(path, func(w io.Writer) error { return output.WriteVTU(w, g, opts) })
}

// commit writes the index and puts every file of the series in place.
func (s *series) commit() error {
	err := s.staged.Write(s.indexPath(), func(w io.Writer) error {
		fmt.Fprintf(w, "# %s: a time series\n", output.Signature)
		cw := csv.NewWriter(w)
		cw.Write([]string{"frame", "step", "time", "file"})
		cw.WriteAll(s.index)
		return cw.Error()
	})
	if err != nil {
		s.staged.Abort()
		return ioError(err)
	}
	return ioError(s.staged.Commit())
}

// solveTransient steps a transient model by backward Euler from the start
// time, with the model's initial values (coefficients initial_<unknown>;
// zero where a model has none), writing the frames of tr.frames.
func solveTransient(m *compiler.Model, lf *ir.LoweredForm, msh *mesh.Mesh, tr transientRun, opts problem.Options, prog *progress) (*problem.Solution, error) {
	var init []problem.Exact
	for i := range m.Unknowns {
		comps, err := m.Initial(i)
		if err != nil {
			return nil, &usageError{err.Error()}
		}
		if comps == nil {
			init = append(init, nil)
			continue
		}
		fn, err := problem.ExactFromExprs(m.Dim, comps)
		if err != nil {
			return nil, usagef("initial_%s: %v", m.Unknowns[i].Name, err)
		}
		init = append(init, fn)
	}
	sf, err := compiler.BackwardEuler(lf)
	if err != nil {
		return nil, &usageError{err.Error()}
	}
	var frameErr error
	observe := func(n int, t float64, sol *problem.Solution) {
		prog.say("step", "time step %d of %d, t = %g", n, tr.steps, t)
		if tr.frames != nil && frameErr == nil && (n%tr.every == 0 || n == tr.steps) {
			frameErr = tr.frames.write(n, t, sol)
		}
	}
	opts.Progress = nil // the steps are the progress
	sol, err := problem.SolveTransient(sf, msh, problem.TransientOptions{Options: opts, Step: tr.dt, Steps: tr.steps, Start: tr.start, Initial: init, Observe: observe})
	if err == nil && frameErr != nil {
		err = ioError(frameErr)
	}
	if err != nil {
		if tr.frames != nil {
			tr.frames.staged.Abort()
		}
		return nil, err
	}
	sol.Summary.Method += fmt.Sprintf(", backward Euler, %d steps of %g to t = %g", tr.steps, tr.dt, tr.start+float64(tr.steps)*tr.dt)
	return sol, nil
}

// solveError sorts a runtime error into input errors (status 2) and
// numerical failures (status 1).
func solveError(err error) error {
	if e := engineError(err); e != nil {
		return e
	}
	var nc *linsolve.NotConvergedError
	var bd *linsolve.BreakdownError
	var nf *linsolve.NonFiniteError
	var sg *linsolve.SingularError
	var pe *problem.PicardError
	var tl *linsolve.TooLargeError
	var me *problem.MeshError
	var re *problem.ResidualError
	var pn *problem.NonFiniteError
	var ue *usageError
	switch {
	case errors.As(err, &ue):
		return err
	case errors.As(err, &sg):
		return fmt.Errorf("numerical failure, no result written: %w: the discrete problem has more than one solution. "+
			"A field that the equations fix only up to a constant needs a mean condition (mean p = 0); "+
			"an equal-order Galerkin discretisation of a saddle-point problem has spurious pressure modes (it violates the inf–sup condition), which the stabilised methods remove", err)
	case errors.As(err, &nc), errors.As(err, &bd), errors.As(err, &nf), errors.As(err, &pe), errors.As(err, &tl), errors.As(err, &re), errors.As(err, &pn):
		return fmt.Errorf("numerical failure, no result written: %w", err)
	case errors.As(err, &me), errors.Is(err, problem.ErrNoSide), errors.As(err, new(*problem.PartError)):
		return &usageError{err.Error()}
	}
	return fmt.Errorf("solve failed, no result written: %w", err)
}

// meshFitError reports a mesh that does not carry the model: a boundary
// part the mesh lacks or a facet two conditions claim is an input error at
// its place in the model; anything else is about --mesh.
func meshFitError(m *compiler.Model, err error) error {
	var pe *problem.PartError
	if errors.As(err, &pe) && pe.Pos.IsValid() {
		var errs source.ErrorList
		errs.Append(pe.Pos, source.Pos{}, pe.Msg, pe.Hint)
		return &inputError{errs, m.Sources}
	}
	return usagef("--mesh: %v", err)
}

func checkFinite(sol *problem.Solution) error {
	for _, v := range sol.X {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("numerical failure, no result written: the solution has non-finite values")
		}
	}
	return nil
}

func syntaxOf(e ir.Expr) string { return notation.Expr(e, notation.Syntax, notation.Names{}) }

// exactErrors reports, for every unknown whose exact solution the model
// states (coefficient exact_<unknown>, scalar or vector), the largest
// nodal error over its components.
func exactErrors(m *compiler.Model, sol *problem.Solution, t float64) []string {
	var out []string
	for i, u := range m.Unknowns {
		comps := m.StatedExact(i)
		if comps == nil {
			continue
		}
		ex, err := problem.ExactFromExprs(m.Dim, comps)
		if err != nil {
			out = append(out, fmt.Sprintf("exact      exact_%s cannot be evaluated: %v", u.Name, err))
			continue
		}
		coords := sol.Dofs.NodeCoords(i)
		d := m.Dim
		f := sol.Fields[i]
		worst := 0.0
		uv, g := make([]float64, f.Components), make([]float64, f.Components*d)
		for n := 0; n < len(coords)/d; n++ {
			ex(coords[n*d:(n+1)*d], t, uv, g)
			for c := range uv {
				worst = math.Max(worst, math.Abs(f.Values[c][n]-uv[c]))
			}
		}
		out = append(out, fmt.Sprintf("exact      largest nodal error against exact_%s: %.3e", u.Name, worst))
	}
	return out
}

func writeSummaryText(w io.Writer, m *compiler.Model, meth compiler.Method, spec string, sol *problem.Solution, cells []output.Array, wall time.Duration) {
	s := sol.Summary
	fmt.Fprintf(w, "model      %s (%s)\n", m.Name, m.File)
	fmt.Fprintf(w, "method     %s\n", s.Method)
	fmt.Fprintf(w, "mesh       %s: %d cells, %d vertices\n", spec, s.Cells, s.Vertices)
	if s.Natural != "" {
		fmt.Fprintf(w, "boundary   %s\n", s.Natural)
	}
	var us []string
	for i, u := range m.Unknowns {
		us = append(us, fmt.Sprintf("%s (%s, %d nodes)", u.Name, u.Element, s.Nodes[i]))
	}
	fmt.Fprintf(w, "unknowns   %s; %d dofs\n", strings.Join(us, ", "), s.Dofs)
	for _, u := range m.Unknowns {
		if meth != compiler.Galerkin && m.Tau[u.Index] != nil {
			fmt.Fprintf(w, "tau        tau_%s = %s\n", u.Name, syntaxOf(compiler.Simplify(m.Tau[u.Index], m.Dim)))
		}
	}
	fmt.Fprintf(w, "kernels    %s; quadrature %s\n", s.KernelPath, s.Quadrature)
	if s.Engine != "" {
		fmt.Fprintf(w, "engine     %s, %d ranks\n", s.Engine, s.Ranks)
	}
	setups := ""
	if s.Prepared > 1 {
		setups = fmt.Sprintf(", %d set-ups", s.Prepared)
	}
	if s.Solver == "direct" || strings.HasPrefix(s.Solver, "direct ") {
		if s.Prepared > 1 {
			setups = fmt.Sprintf(", %d factorisations", s.Prepared)
		}
		name := "direct sparse LU"
		if s.Solver != "direct" {
			name = s.Solver // the PETSc engine's, e.g. "direct LU (mumps)"
		}
		fmt.Fprintf(w, "solver     %s%s, relative residual %.2e, %.0f bytes per unknown\n", name, setups, s.Residual, s.BytesPerUnknown)
	} else {
		fmt.Fprintf(w, "solver     %s%s, %d iterations, relative residual %.2e, %.0f bytes per unknown\n", s.Solver, setups, s.Iterations, s.Residual, s.BytesPerUnknown)
	}
	if s.SolverReason != "" && s.SolverReason != "as asked" {
		fmt.Fprintf(w, "           (%s)\n", s.SolverReason)
	}
	if s.Nonlinear != "" { // newton or picard
		if len(s.StepIterations) > 1 {
			fmt.Fprintf(w, "%-10s %d iterations (%s over the continuation steps)\n", s.Nonlinear, s.NonlinearIters, joinInts(s.StepIterations, " + "))
		} else {
			fmt.Fprintf(w, "%-10s %d iterations\n", s.Nonlinear, s.NonlinearIters)
		}
	}
	if sol.Form != nil && sol.Form.ReadsRecovered() {
		what := "the Newton iteration holds them fixed in the Jacobian"
		if !sol.Form.Newton {
			what = "the iterations above let them settle"
		}
		fmt.Fprintf(w, "recovery   the residual reads second derivatives recovered from the projected gradient of the iterate; %s (--recover=false: off)\n", what)
	}
	for _, mc := range m.Means {
		fmt.Fprintf(w, "mean       %s shifted to its prescribed mean; the equation replaced by fixing one node holds to %.1e (relative)\n", m.Unknowns[mc.Unknown].Name, s.MeanResidual)
	}
	fmt.Fprintf(w, "wall time  %.3f s (", wall.Seconds())
	for i, p := range s.Phases {
		if i > 0 {
			fmt.Fprint(w, ", ")
		}
		fmt.Fprintf(w, "%s %.3f", p.Name, p.Wall.Seconds())
	}
	if s.Ranks > 0 {
		fmt.Fprintf(w, ") on %d MPI ranks\n", s.Ranks)
	} else {
		fmt.Fprintf(w, ") on %d workers\n", s.Workers)
	}
	for _, r := range s.Ranges {
		name := r.Field
		if fieldComponents(sol, r.Field) > 1 {
			name = fmt.Sprintf("%s[%d]", r.Field, r.Comp+1)
		}
		fmt.Fprintf(w, "range      %s in [%.6g, %.6g]\n", name, r.Min, r.Max)
	}
	for _, a := range cells {
		lo, hi := valueRange(a.Values)
		fmt.Fprintf(w, "per cell   %s in [%.4g, %.4g]\n", a.Name, lo, hi)
	}
}

// indicators evaluates τ (for a stabilised method) and the element Péclet
// number of each advective–diffusive equation on every cell of the
// solution's mesh, as cell arrays for the VTU file and the summary; step
// is the value of the time step Δt a τ may read.
func indicators(d *compiler.Derivation, meth compiler.Method, sol *problem.Solution, step float64) ([]output.Array, error) {
	var names []string
	var exprs []ir.Expr
	for _, in := range d.Indicators() {
		if meth == compiler.Galerkin && strings.HasPrefix(in.Name, "tau_") {
			continue
		}
		names = append(names, in.Name)
		exprs = append(exprs, in.Expr)
	}
	if len(exprs) == 0 {
		return nil, nil
	}
	vals, err := sol.CellValues(exprs, step)
	if err != nil {
		return nil, nil // an indicator the evaluator cannot read is left out
	}
	out := make([]output.Array, len(names))
	for k := range names {
		out[k] = output.Array{Name: names[k], Components: 1, Values: vals[k]}
	}
	return out, nil
}

func valueRange(v []float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, x := range v {
		lo, hi = math.Min(lo, x), math.Max(hi, x)
	}
	return lo, hi
}

func fieldComponents(sol *problem.Solution, name string) int {
	for _, f := range sol.Fields {
		if f.Name == name {
			return f.Components
		}
	}
	return 1
}

// jsonSolve is the --json output of solve (documented in the README).
type jsonSolve struct {
	Schema     string `json:"schema"`
	Model      string `json:"model"`
	File       string `json:"file"`
	Method     string `json:"method"`
	Mesh       string `json:"mesh"`
	Cells      int    `json:"cells"`
	Vertices   int    `json:"vertices"`
	Natural    string `json:"natural_condition,omitempty"`
	Dofs       int    `json:"dofs"`
	Kernels    string `json:"kernels"`
	Quadrature string `json:"quadrature"`
	Solver     string `json:"solver"`
	// SolverReason says why the automatic choice picked the solver;
	// BytesPerUnknown is the memory of matrix, preconditioner and Krylov
	// vectors per unknown.
	SolverReason    string  `json:"solver_reason"`
	BytesPerUnknown float64 `json:"bytes_per_unknown"`
	Iterations      int     `json:"iterations"`
	Residual        float64 `json:"residual"`
	NonlinearIters  int     `json:"nonlinear_iterations"` // Picard or Newton iterations (1 for a linear model)
	// Nonlinear is the iteration of a nonlinear solve, newton or picard,
	// and Newton its history (cmd_nonlinear.go).
	Nonlinear string               `json:"nonlinear,omitempty"`
	Newton    []problem.NewtonStep `json:"newton,omitempty"`
	// StepIterations: the iterations of each --ramp step.
	StepIterations []int `json:"continuation_iterations,omitempty"`
	Setups         int   `json:"solver_setups"` // factorisations or preconditioner builds
	// Engine and Ranks: --engine petsc only.
	Engine string `json:"engine,omitempty"`
	Ranks  int    `json:"ranks,omitempty"`
	// MeanResidual: models with mean conditions; see problem.Summary.
	MeanResidual float64           `json:"mean_residual,omitempty"`
	WallTime     float64           `json:"wall_time_s"`
	Tau          map[string]string `json:"tau"`
	// PerCell gives the range over the cells of τ and of the element
	// Péclet number (see indicators): name → [min, max].
	PerCell map[string][2]float64 `json:"per_cell"`
	Fields  []jsonField           `json:"fields"`
}

type jsonField struct {
	Name       string      `json:"name"`
	Element    string      `json:"element"`
	Components int         `json:"components"`
	Min        []float64   `json:"min"`
	Max        []float64   `json:"max"`
	Nodes      [][]float64 `json:"nodes"`  // coordinates of the field's nodes
	Values     [][]float64 `json:"values"` // values[comp][node]
}

func writeSummaryJSON(w io.Writer, m *compiler.Model, meth compiler.Method, spec string, sol *problem.Solution, cells []output.Array, wall time.Duration) error {
	s := sol.Summary
	out := jsonSolve{Schema: "formwright.solve/2", Model: m.Name, File: m.File, Method: meth.String(), Mesh: spec, Cells: s.Cells, Vertices: s.Vertices,
		Dofs: s.Dofs, Kernels: s.KernelPath, Quadrature: s.Quadrature, Solver: s.Solver, SolverReason: s.SolverReason, BytesPerUnknown: s.BytesPerUnknown, Iterations: s.Iterations, Residual: s.Residual, NonlinearIters: s.NonlinearIters, Setups: s.Prepared,
		MeanResidual: s.MeanResidual, WallTime: wall.Seconds(), Tau: map[string]string{}, PerCell: map[string][2]float64{},
		Nonlinear: s.Nonlinear, Newton: s.History, StepIterations: s.StepIterations, Engine: s.Engine, Ranks: s.Ranks, Natural: s.Natural}
	for _, a := range cells {
		lo, hi := valueRange(a.Values)
		out.PerCell[a.Name] = [2]float64{lo, hi}
	}
	for _, u := range m.Unknowns {
		if meth != compiler.Galerkin && m.Tau[u.Index] != nil {
			out.Tau[u.Name] = syntaxOf(compiler.Simplify(m.Tau[u.Index], m.Dim))
		}
	}
	for k, f := range sol.Fields {
		jf := jsonField{Name: f.Name, Element: m.Unknowns[k].Element.String(), Components: f.Components, Values: f.Values}
		coords := sol.Dofs.NodeCoords(k)
		d := m.Dim
		for n := 0; n < len(coords)/d; n++ {
			jf.Nodes = append(jf.Nodes, coords[n*d:(n+1)*d])
		}
		for _, r := range s.Ranges {
			if r.Field == f.Name {
				jf.Min = append(jf.Min, r.Min)
				jf.Max = append(jf.Max, r.Max)
			}
		}
		out.Fields = append(out.Fields, jf)
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", " ")
	return enc.Encode(out)
}

func writeSolution(path string, sol *problem.Solution, cells []output.Array, ascii bool) error {
	g := sol.Grid()
	g.CellData = append(g.CellData, cells...)
	if filepath.Ext(path) == ".csv" {
		return ioError(output.WriteCSVFile(path, g, sol.Mesh.Dim))
	}
	opts := output.VTUOptions{Encoding: output.Binary}
	if ascii {
		opts.Encoding = output.ASCII
	}
	return ioError(output.WriteVTUFile(path, g, opts))
}

// writeOutputs writes --out: the time series of a transient run, or the
// solution with its cell data.
func writeOutputs(out string, tr transientRun, sol *problem.Solution, cells []output.Array, ascii bool) error {
	switch {
	case out == "":
		return nil
	case tr.frames != nil:
		return tr.frames.commit()
	}
	return writeSolution(out, sol, cells, ascii)
}

// plotPaths are the files --plot writes: FILE.png, or FILE_<method>.png
// for each of several methods in 2D.
func plotPaths(path string, dim int, methods []compiler.Method) []string {
	if path == "" {
		return nil
	}
	if len(methods) == 1 || dim == 1 {
		return []string{path}
	}
	var out []string
	ext := filepath.Ext(path)
	for _, meth := range methods {
		out = append(out, strings.TrimSuffix(path, ext)+"_"+meth.String()+ext)
	}
	return out
}

// plotSolutions draws the first field: in 1D one line per method (and the
// model's exact solution, if it states one); in 2D a colour map with
// contours per method (FILE.png, or FILE_<method>.png for several).
func plotSolutions(path string, sols []*problem.Solution, m *compiler.Model, methods []compiler.Method) error {
	name := sols[0].Fields[0].Name
	switch sols[0].Mesh.Dim {
	case 1:
		// One plot with a line per method.
		var series []plot.Series
		for k, sol := range sols {
			series = append(series, plot.NodeSeries(methods[k].String(), sol.Dofs.NodeCoords(0), sol.Fields[0].Values[0]))
		}
		opts := plot.LineOptions{Title: fmt.Sprintf("%s: %s", m.Name, name), YLabel: name, Legend: plot.TopLeft}
		if comps := m.StatedExact(0); len(comps) == 1 {
			if ex, err := problem.ExactFromExprs(1, comps); err == nil {
				u, g := make([]float64, 1), make([]float64, 1)
				opts.Exact = func(x float64) float64 { ex([]float64{x}, 0, u, g); return u[0] }
			}
		}
		return plot.Line(path, series, opts)
	case 2:
		paths := plotPaths(path, 2, methods)
		for k, sol := range sols {
			p := paths[k]
			nv := sol.Mesh.NumVertices()
			title := fmt.Sprintf("%s: %s, %s", m.Name, name, methods[k])
			if err := plot.ColourMap(p, plot.MeshTriangulation(sol.Mesh), sol.Fields[0].Values[0][:nv], plot.MapOptions{Title: title, ValueLabel: name}); err != nil {
				return err
			}
		}
		return nil
	}
	return usagef("--plot draws 1D and 2D solutions only")
}
