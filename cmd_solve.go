package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strings"
	"time"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
	"github.com/formwright/formwright/runtime/linsolve"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/output"
	"github.com/formwright/formwright/runtime/plot"
	"github.com/formwright/formwright/runtime/problem"
)

// solveFlags are the options of solve (and of verify, which solves too).
type solveFlags struct {
	mesh    *string
	solver  *string
	tol     *float64
	maxIter *int
	restart *int
	shift   *float64
	workers *int
	time    *float64
	quiet   *bool
	relax   *float64
}

func addSolveFlags(fs *cmdFlags) *solveFlags {
	return &solveFlags{
		mesh:    fs.String("mesh", "", "mesh spec (interval:0,1:64, rect:0,1,0,1:64x64:tri|tri-flip|crossed|quad, box:0,1,0,1,0,1:8x8x8:tet|hex) or a .vtu mesh file (default: by dimension and element)"),
		solver:  fs.String("solver", "auto", "auto, direct, cg, gmres or bicgstab, optionally +none, +jacobi or +ilu0 (e.g. gmres+ilu0)"),
		tol:     fs.Float64("tol", 0, "relative residual tolerance of iterative solvers, in (0, 1) (default 1e-10)"),
		maxIter: fs.Int("max-iter", 0, "iteration limit of iterative solvers (default 10000)"),
		restart: fs.Int("restart", 0, "GMRES restart length (default 50)"),
		shift:   fs.Float64("ilu-shift", 0, "factorise A + s·diag(A) in ILU(0) (shifted ILU; 0.1 stabilises it on advection-dominated problems)"),
		workers: fs.Int("workers", 0, "worker goroutines for assembly and mat-vec (default: GOMAXPROCS)"),
		time:    fs.Float64("time", 0, "value of t in coefficients and boundary data (the start time of a transient model)"),
		quiet:   fs.Bool("quiet", false, "no progress on standard error"),
		relax:   fs.Float64("relax", 0, "Picard under-relaxation ω in (0, 1]: the next iterate is u_prev + ω(u − u_prev) (default: none)"),
	}
}

// options turns the solve flags into problem options, checking each.
func (sf *solveFlags) options(stderr io.Writer) (problem.Options, error) {
	opts := problem.Options{Time: *sf.time, Workers: *sf.workers, PicardRelax: *sf.relax}
	if r := *sf.relax; !(r >= 0 && r <= 1) {
		return opts, usagef("--relax %g: the under-relaxation factor must be in (0, 1] (0: none)", r)
	}
	if math.IsNaN(*sf.time) || math.IsInf(*sf.time, 0) {
		return opts, usagef("--time %g: give a finite time", *sf.time)
	}
	if *sf.workers < 0 {
		return opts, usagef("--workers %d: give a positive number (0: GOMAXPROCS)", *sf.workers)
	}
	so, err := parseSolver(sf, func(it int, r float64) {
		if !*sf.quiet && it%25 == 0 {
			fmt.Fprintf(stderr, "  iteration %d, relative residual %.3e\n", it, r)
		}
	})
	opts.Solver = so
	return opts, err
}

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
	case *sf.restart < 0:
		return nil, usagef("--restart %d: give a positive number", *sf.restart)
	}
	if *sf.solver == "auto" && *sf.tol == 0 && *sf.maxIter == 0 && *sf.restart == 0 && *sf.shift == 0 {
		return nil, nil
	}
	so := &linsolve.Options{RelTol: *sf.tol, MaxIter: *sf.maxIter, Restart: *sf.restart, ILUShift: *sf.shift, Progress: progress, Workers: *sf.workers}
	name := *sf.solver
	if name == "auto" {
		name = "gmres+ilu0"
		if so.ILUShift == 0 {
			so.ILUShift = problem.AutoILUShift
		}
		if so.Restart == 0 {
			so.Restart = 100
		}
	}
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
	dt := fs.Float64("dt", 0, "time step of a transient model (backward Euler; default: the model's coefficient step, if it has one)")
	steps := fs.Int("steps", 0, "number of time steps of a transient model")
	until := fs.Float64("until", 0, "end time of a transient model (instead of --steps)")
	out := fs.String("out", "", "write the solution: FILE.vtu (VTK XML, binary appended), FILE.csv")
	ascii := fs.Bool("vtu-ascii", false, "write .vtu in ASCII instead of binary appended")
	asJSON := fs.Bool("json", false, "print the summary and nodal values as JSON")
	plotPath := fs.String("plot", "", "draw the solution as a PNG (1D line plot, 2D colour map with contours)")
	pos, err := parseArgs(fs, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("solve takes one model")
	}
	opts, err := sf.options(stderr)
	if err != nil {
		return err
	}
	// Nonlinear models: the iteration's options (cmd_nonlinear.go).
	if err := nl.check(fs); err != nil {
		return err
	}
	nl.apply(&opts, stderr, *sf.quiet)
	if *out != "" {
		if ext := filepath.Ext(*out); ext != ".vtu" && ext != ".csv" {
			return usagef("--out: unknown file type %q (use .vtu or .csv)", ext)
		}
		if err := output.CheckNotInput(*out, pos[0], *sf.mesh); err != nil {
			return &usageError{err.Error()}
		}
	}
	if *plotPath != "" {
		if err := output.CheckNotInput(*plotPath, pos[0], *sf.mesh); err != nil {
			return &usageError{err.Error()}
		}
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
	msh, spec, err := buildMesh(m, *sf.mesh)
	if err != nil {
		return err
	}
	var sols []*problem.Solution
	for k, meth := range methods {
		lf, err := nl.lower(m, meth) // Newton step, Picard or linear form (cmd_nonlinear.go)
		if err != nil {
			return err
		}
		if err := problem.CheckMesh(lf, msh); err != nil {
			return usagef("--mesh: %v", err)
		}
		start := time.Now()
		var sol *problem.Solution
		if lf.IsTransient() {
			sol, err = solveTransient(m, lf, msh, transientRun{*dt, *steps, *until, *sf.time, *sf.quiet}, opts, stderr)
		} else {
			// Picard start and continuation for nonlinear models (cmd_nonlinear.go).
			sol, err = nl.solve(m, meth, lf, msh, opts, stderr, *sf.quiet)
		}
		if err != nil {
			return nonlinearFailure(err) // cmd_nonlinear.go
		}
		wall := time.Since(start)
		if err := checkFinite(sol); err != nil {
			return err
		}
		sols = append(sols, sol)
		if *asJSON {
			if *out != "" {
				if err := writeSolution(*out, sol, *ascii); err != nil {
					return err
				}
			}
			return writeSummaryJSON(stdout, m, meth, spec, sol, wall)
		}
		if k > 0 {
			fmt.Fprintln(stdout)
		}
		writeSummaryText(stdout, m, meth, spec, sol, wall)
		if e := exactError(m, sol); e != "" {
			fmt.Fprintln(stdout, e)
		}
	}
	if *out != "" {
		if err := writeSolution(*out, sols[0], *ascii); err != nil {
			return err
		}
	}
	if *plotPath != "" {
		if err := plotSolutions(*plotPath, sols, m, methods); err != nil {
			return err
		}
	}
	return nil
}

// transientRun is how solve steps a transient model: Δt, and the number
// of steps or the end time, from the start time.
type transientRun struct {
	dt           float64
	steps        int
	until, start float64
	quiet        bool
}

// solveTransient steps a transient model by backward Euler from the start
// time, with the model's initial values (coefficients initial_<unknown>;
// zero where a model has none).
func solveTransient(m *compiler.Model, lf *ir.LoweredForm, msh *mesh.Mesh, tr transientRun, opts problem.Options, stderr io.Writer) (*problem.Solution, error) {
	dt := tr.dt
	if dt == 0 {
		dt, _ = m.StepValue()
	}
	if !(dt > 0) || math.IsInf(dt, 0) {
		return nil, usagef("model %s is transient: give the time step with --dt (or a constant coefficient step)", m.Name)
	}
	steps := tr.steps
	if steps == 0 && tr.until > tr.start {
		steps = int(math.Round((tr.until - tr.start) / dt))
	}
	if steps < 1 {
		return nil, usagef("model %s is transient: give --steps N or --until T", m.Name)
	}
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
	observe := func(n int, t float64, _ *problem.Solution) {
		if !tr.quiet && (n%10 == 0 || n == steps) {
			fmt.Fprintf(stderr, "  step %d of %d, t = %g\n", n, steps, t)
		}
	}
	sol, err := problem.SolveTransient(sf, msh, problem.TransientOptions{Options: opts, Step: dt, Steps: steps, Start: tr.start, Initial: init, Observe: observe})
	if err != nil {
		return nil, err
	}
	sol.Summary.Method += fmt.Sprintf(", backward Euler, %d steps of %g to t = %g", steps, dt, tr.start+float64(steps)*dt)
	return sol, nil
}

// solveError sorts a runtime error into input errors (status 2) and
// numerical failures (status 1).
func solveError(err error) error {
	var nc *linsolve.NotConvergedError
	var bd *linsolve.BreakdownError
	var nf *linsolve.NonFiniteError
	var sg *linsolve.SingularError
	var pe *problem.PicardError
	var tl *linsolve.TooLargeError
	var me *problem.MeshError
	var ue *usageError
	switch {
	case errors.As(err, &ue):
		return err
	case errors.As(err, &sg):
		return fmt.Errorf("numerical failure, no result written: %w: the discrete problem has more than one solution. "+
			"A field that the equations fix only up to a constant needs a mean condition (mean p = 0); "+
			"an equal-order Galerkin discretisation of a saddle-point problem has spurious pressure modes (it violates the inf–sup condition), which the stabilised methods remove", err)
	case errors.As(err, &nc), errors.As(err, &bd), errors.As(err, &nf), errors.As(err, &pe), errors.As(err, &tl):
		return fmt.Errorf("numerical failure, no result written: %w", err)
	case errors.As(err, &me), errors.Is(err, problem.ErrNoSide):
		return &usageError{err.Error()}
	}
	return fmt.Errorf("solve failed, no result written: %w", err)
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

// exactError reports the largest nodal error against the model's stated
// exact solution of its first unknown, if it states one.
func exactError(m *compiler.Model, sol *problem.Solution) string {
	comps := m.StatedExact(0)
	if comps == nil || len(comps) != 1 {
		return ""
	}
	ex, err := problem.ExactFromExprs(m.Dim, comps)
	if err != nil {
		return ""
	}
	coords := sol.Dofs.NodeCoords(0)
	d := m.Dim
	worst := 0.0
	u, g := make([]float64, 1), make([]float64, d)
	for n := 0; n < len(coords)/d; n++ {
		ex(coords[n*d:(n+1)*d], 0, u, g)
		worst = math.Max(worst, math.Abs(sol.Fields[0].Values[0][n]-u[0]))
	}
	return fmt.Sprintf("exact      largest nodal error against exact_%s: %.3e", m.Unknowns[0].Name, worst)
}

func writeSummaryText(w io.Writer, m *compiler.Model, meth compiler.Method, spec string, sol *problem.Solution, wall time.Duration) {
	s := sol.Summary
	fmt.Fprintf(w, "model      %s (%s)\n", m.Name, m.File)
	fmt.Fprintf(w, "method     %s\n", s.Method)
	fmt.Fprintf(w, "mesh       %s: %d cells, %d vertices\n", spec, s.Cells, s.Vertices)
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
	fmt.Fprintf(w, "kernels    %s\n", s.KernelPath)
	setups := ""
	if s.Prepared > 1 {
		setups = fmt.Sprintf(", %d set-ups", s.Prepared)
	}
	if s.Solver == "direct" {
		if s.Prepared > 1 {
			setups = fmt.Sprintf(", %d factorisations", s.Prepared)
		}
		fmt.Fprintf(w, "solver     direct sparse LU%s, relative residual %.2e\n", setups, s.Residual)
	} else {
		fmt.Fprintf(w, "solver     %s%s, %d iterations, relative residual %.2e\n", s.Solver, setups, s.Iterations, s.Residual)
	}
	if s.Nonlinear != "" { // newton or picard
		fmt.Fprintf(w, "%-10s %d iterations\n", s.Nonlinear, s.Picard)
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
	fmt.Fprintf(w, ") on %d workers\n", s.Workers)
	for _, r := range s.Ranges {
		name := r.Field
		if fieldComponents(sol, r.Field) > 1 {
			name = fmt.Sprintf("%s[%d]", r.Field, r.Comp+1)
		}
		fmt.Fprintf(w, "range      %s in [%.6g, %.6g]\n", name, r.Min, r.Max)
	}
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
	Schema     string  `json:"schema"`
	Model      string  `json:"model"`
	File       string  `json:"file"`
	Method     string  `json:"method"`
	Mesh       string  `json:"mesh"`
	Cells      int     `json:"cells"`
	Vertices   int     `json:"vertices"`
	Dofs       int     `json:"dofs"`
	Kernels    string  `json:"kernels"`
	Solver     string  `json:"solver"`
	Iterations int     `json:"iterations"`
	Residual   float64 `json:"residual"`
	Picard     int     `json:"picard_iterations"`
	// Nonlinear is the iteration of a nonlinear solve, newton or picard,
	// and Newton its history (cmd_nonlinear.go).
	Nonlinear string               `json:"nonlinear,omitempty"`
	Newton    []problem.NewtonStep `json:"newton,omitempty"`
	Setups    int                  `json:"solver_setups"` // factorisations or preconditioner builds
	// MeanResidual: models with mean conditions; see problem.Summary.
	MeanResidual float64           `json:"mean_residual,omitempty"`
	WallTime     float64           `json:"wall_time_s"`
	Tau          map[string]string `json:"tau"`
	Fields       []jsonField       `json:"fields"`
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

func writeSummaryJSON(w io.Writer, m *compiler.Model, meth compiler.Method, spec string, sol *problem.Solution, wall time.Duration) error {
	s := sol.Summary
	out := jsonSolve{Schema: "formwright.solve/1", Model: m.Name, File: m.File, Method: meth.String(), Mesh: spec, Cells: s.Cells, Vertices: s.Vertices,
		Dofs: s.Dofs, Kernels: s.KernelPath, Solver: s.Solver, Iterations: s.Iterations, Residual: s.Residual, Picard: s.Picard, Setups: s.Prepared,
		MeanResidual: s.MeanResidual, WallTime: wall.Seconds(), Tau: map[string]string{}, Nonlinear: s.Nonlinear, Newton: s.History}
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

func writeSolution(path string, sol *problem.Solution, ascii bool) error {
	g := sol.Grid()
	if filepath.Ext(path) == ".csv" {
		return output.WriteCSVFile(path, g, sol.Mesh.Dim)
	}
	opts := output.VTUOptions{Encoding: output.Binary}
	if ascii {
		opts.Encoding = output.ASCII
	}
	return output.WriteVTUFile(path, g, opts)
}

// plotSolutions draws the first field: in 1D one line per method (and the
// model's exact solution, if it states one); in 2D a colour map with
// contours per method (FILE.png, or FILE_<method>.png for several).
func plotSolutions(path string, sols []*problem.Solution, m *compiler.Model, methods []compiler.Method) error {
	name := sols[0].Fields[0].Name
	switch sols[0].Mesh.Dim {
	case 1:
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
		for k, sol := range sols {
			p := path
			if len(sols) > 1 {
				ext := filepath.Ext(path)
				p = strings.TrimSuffix(path, ext) + "_" + methods[k].String() + ext
			}
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
