package main

import (
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/linsolve"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/output"
	"github.com/formwright/formwright/runtime/problem"
)

// solveFlags are the options of solve (and of verify, which solves too).
type solveFlags struct {
	method  *string
	mesh    *string
	solver  *string
	tol     *float64
	maxIter *int
	restart *int
	shift   *float64
	workers *int
	time    *float64
	quiet   *bool
	dt      *float64
	steps   *int
	until   *float64
	relax   *float64
}

func addSolveFlags(fs *flag.FlagSet) *solveFlags {
	return &solveFlags{
		method:  fs.String("method", "", "galerkin, supg, gls or vms (default: the model's first stabilised method, else galerkin)"),
		mesh:    fs.String("mesh", "", "mesh spec (interval:0,1:64, rect:0,1,0,1:64x64:tri|tri-flip|crossed|quad, box:0,1,0,1,0,1:8x8x8:tet|hex) or a mesh file (default: by dimension and element)"),
		solver:  fs.String("solver", "auto", "auto, direct, cg, gmres or bicgstab, optionally +none, +jacobi or +ilu0 (e.g. gmres+ilu0)"),
		tol:     fs.Float64("tol", 0, "relative residual tolerance of iterative solvers (default 1e-10)"),
		maxIter: fs.Int("max-iter", 0, "iteration limit of iterative solvers (default 10000)"),
		restart: fs.Int("restart", 0, "GMRES restart length (default 50)"),
		shift:   fs.Float64("ilu-shift", 0, "factorise A + s·diag(A) in ILU(0) (shifted ILU; 0.1 stabilises it on advection-dominated problems)"),
		workers: fs.Int("workers", 0, "worker goroutines for assembly and mat-vec (default: GOMAXPROCS)"),
		time:    fs.Float64("time", 0, "value of t in coefficients and boundary data"),
		quiet:   fs.Bool("quiet", false, "no progress on standard error"),
		dt:      fs.Float64("dt", 0, "time step of a transient model (backward Euler; default: the model's coefficient step, if it has one)"),
		steps:   fs.Int("steps", 0, "number of time steps of a transient model"),
		until:   fs.Float64("until", 0, "end time of a transient model (instead of --steps)"),
		relax:   fs.Float64("relax", 0, "Picard under-relaxation ω in (0, 1): the next iterate is u_prev + ω(u − u_prev) (default: none)"),
	}
}

// defaultMesh picks the built-in mesh for a model: the unit interval,
// square or cube, cut into cells of the family the unknowns use.
func defaultMesh(m *compiler.Model) string {
	quad := m.Unknowns[0].Element.Family == ir.TensorProduct
	switch m.Dim {
	case 1:
		return "interval:0,1:64"
	case 2:
		if quad {
			return "rect:0,1,0,1:48x48:quad"
		}
		return "rect:0,1,0,1:64x64:tri"
	}
	if quad {
		return "box:0,1,0,1,0,1:10x10x10:hex"
	}
	return "box:0,1,0,1,0,1:10x10x10:tet"
}

// pickMethod resolves --method against the model.
func pickMethod(m *compiler.Model, s string) (compiler.Method, error) {
	if s == "" {
		for _, meth := range m.Methods {
			if meth != compiler.Galerkin {
				return meth, nil
			}
		}
		return compiler.Galerkin, nil
	}
	meth, ok := compiler.MethodByName(s)
	if !ok {
		return 0, &usageError{fmt.Sprintf("unknown method %q (use galerkin, supg, gls or vms)", s)}
	}
	if meth != compiler.Galerkin {
		for _, u := range m.Unknowns {
			if m.Tau[u.Index] == nil {
				return 0, &usageError{fmt.Sprintf("%s needs a tau for %s: add \"tau for %s = ...\" to the model", meth, u.Name, u.Name)}
			}
		}
	}
	return meth, nil
}

// parseSolver reads --solver.
func parseSolver(sf *solveFlags, progress func(int, float64)) (*linsolve.Options, error) {
	if *sf.shift < 0 {
		return nil, &usageError{"--ilu-shift must not be negative"}
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
		return nil, &usageError{fmt.Sprintf("--solver: %v", err)}
	}
	if pre != "" {
		if so.Precond, err = linsolve.ParsePrecond(pre); err != nil {
			return nil, &usageError{fmt.Sprintf("--solver: %v", err)}
		}
	} else if so.Method != linsolve.MethodDirect {
		so.Precond = linsolve.PrecondILU0
	}
	return so, nil
}

// lowerModel derives and lowers one method of a model.
func lowerModel(m *compiler.Model, meth compiler.Method) (*ir.LoweredForm, error) {
	d, err := compiler.Derive(m, []compiler.Method{meth})
	if err != nil {
		return nil, &usageError{err.Error()}
	}
	lf, err := d.Lower(meth)
	if err != nil {
		return nil, &usageError{err.Error()}
	}
	return lf, nil
}

// solveTransient steps a transient model by backward Euler from t = --time
// with the initial values of the coefficients initial_<unknown> (zero where
// a model has none).
func solveTransient(m *compiler.Model, lf *ir.LoweredForm, msh *mesh.Mesh, sf *solveFlags, opts problem.Options, stderr io.Writer) (*problem.Solution, error) {
	dt := *sf.dt
	if dt == 0 {
		if c := m.Coef("step"); c != nil && c.Def.Rank() == 0 && !ir.HasField(c.Def) {
			if v, ok := constValue(m, c); ok {
				dt = v
			}
		}
	}
	if !(dt > 0) {
		return nil, &usageError{fmt.Sprintf("model %s is transient: give the time step with --dt (or a constant coefficient step)", m.Name)}
	}
	steps := *sf.steps
	if steps == 0 && *sf.until > *sf.time {
		steps = int(math.Round((*sf.until - *sf.time) / dt))
	}
	if steps < 1 {
		return nil, &usageError{fmt.Sprintf("model %s is transient: give --steps N or --until T", m.Name)}
	}
	var init []problem.Exact
	for _, u := range m.Unknowns {
		c := m.Coef("initial_" + u.Name)
		if c == nil {
			init = append(init, nil)
			continue
		}
		if c.Def.Rank() != u.Rank {
			return nil, &usageError{fmt.Sprintf("initial_%s must have the rank of %s", u.Name, u.Name)}
		}
		fn, err := problem.ExactFromExprs(m.Dim, compiler.LowerExpr(m, c.Sym))
		if err != nil {
			return nil, &usageError{fmt.Sprintf("initial_%s: %v", u.Name, err)}
		}
		init = append(init, fn)
	}
	observe := func(n int, t float64, _ *problem.Solution) {
		if !*sf.quiet && (n%10 == 0 || n == steps) {
			fmt.Fprintf(stderr, "  step %d of %d, t = %g\n", n, steps, t)
		}
	}
	sol, err := problem.SolveTransient(lf, msh, problem.TransientOptions{Options: opts, Step: dt, Steps: steps, Start: *sf.time, Initial: init, Observe: observe})
	if err != nil {
		return nil, solveError(err)
	}
	sol.Summary.Method += fmt.Sprintf(", backward Euler, %d steps of %g to t = %g", steps, dt, *sf.time+float64(steps)*dt)
	return sol, nil
}

// constValue evaluates a coefficient that depends on nothing.
func constValue(m *compiler.Model, c *compiler.Coef) (float64, bool) {
	low := compiler.LowerExpr(m, c.Sym)[0]
	if ir.Contains(low, func(e ir.Expr) bool {
		switch e.(type) {
		case *ir.Coord, *ir.Time, *ir.CellQ, *ir.FieldD:
			return true
		}
		return false
	}) {
		return 0, false
	}
	return ir.Eval(low, pointEnv{0, 0, 0}), true
}

// buildMesh reads --mesh (or the default) and checks it against the model.
func buildMesh(m *compiler.Model, spec string) (*mesh.Mesh, string, error) {
	if spec == "" {
		spec = defaultMesh(m)
	}
	msh, err := mesh.Load(spec)
	if err != nil {
		var se *mesh.SpecError
		if errors.As(err, &se) {
			return nil, spec, &usageError{"--mesh: " + se.Detail()}
		}
		return nil, spec, &usageError{"--mesh: " + err.Error()}
	}
	if msh.Dim != m.Dim {
		return nil, spec, &usageError{fmt.Sprintf("--mesh: a %d-dimensional mesh for a %d-dimensional model", msh.Dim, m.Dim)}
	}
	for _, u := range m.Unknowns {
		if m.Dim > 1 && (u.Element.Family == ir.Simplicial) != msh.Cell.IsSimplex() {
			return nil, spec, &usageError{fmt.Sprintf("--mesh: unknown %s uses %v elements, which need %s cells, but the mesh has %v cells",
				u.Name, u.Element, u.Element.CellNoun(m.Dim), msh.Cell)}
		}
	}
	for _, side := range m.Sides {
		if _, ok := msh.Boundaries[side]; !ok {
			for _, bc := range m.BCs {
				if slices.Contains(bc.Sides, side) {
					return nil, spec, &usageError{fmt.Sprintf("--mesh: the model sets a condition on side %q, which the mesh does not have (it has %s)", side, strings.Join(msh.BoundaryNames(), ", "))}
				}
			}
		}
	}
	return msh, spec, nil
}

// cmdSolve assembles and solves a model's discrete problem.
func cmdSolve(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("solve", flag.ContinueOnError)
	sf := addSolveFlags(fs)
	out := fs.String("out", "", "write the solution: FILE.vtu (VTK XML, binary appended), FILE.csv")
	ascii := fs.Bool("vtu-ascii", false, "write .vtu in ASCII instead of binary appended")
	asJSON := fs.Bool("json", false, "print the summary and nodal values as JSON")
	plotPath := fs.String("plot", "", "draw the solution as a PNG (1D line plot, 2D colour map with contours)")
	pos, err := parseArgs(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return &usageError{"solve takes one model"}
	}
	if r := *sf.relax; !(r >= 0 && r <= 1) {
		return &usageError{fmt.Sprintf("--relax %g: the under-relaxation factor must be in (0, 1] (0: none)", r)}
	}
	if *out != "" {
		if ext := filepath.Ext(*out); ext != ".vtu" && ext != ".csv" {
			return &usageError{fmt.Sprintf("--out: unknown file type %q (use .vtu or .csv)", ext)}
		}
		if err := output.CheckNotInput(*out, pos[0]); err != nil {
			return &usageError{err.Error()}
		}
	}
	if *plotPath != "" {
		if err := output.CheckNotInput(*plotPath, pos[0]); err != nil {
			return &usageError{err.Error()}
		}
	}
	m, err := loadModel(pos[0])
	if err != nil {
		return err
	}
	var methods []compiler.Method
	if *sf.method == "all" {
		methods = m.Methods
		if len(methods) == 0 {
			methods = []compiler.Method{compiler.Galerkin}
		}
		if *out != "" || *asJSON {
			return &usageError{"--method all cannot be combined with --out or --json: choose one method"}
		}
	} else {
		meth, err := pickMethod(m, *sf.method)
		if err != nil {
			return err
		}
		methods = []compiler.Method{meth}
	}
	for _, meth := range methods {
		if _, err := pickMethod(m, meth.String()); err != nil {
			return err
		}
	}
	progress := func(it int, r float64) {
		if !*sf.quiet && it%25 == 0 {
			fmt.Fprintf(stderr, "  iteration %d, relative residual %.3e\n", it, r)
		}
	}
	so, err := parseSolver(sf, progress)
	if err != nil {
		return err
	}
	msh, spec, err := buildMesh(m, *sf.mesh)
	if err != nil {
		return err
	}
	var sols []*problem.Solution
	for k, meth := range methods {
		lf, err := lowerModel(m, meth)
		if err != nil {
			return err
		}
		start := time.Now()
		opts := problem.Options{Time: *sf.time, Workers: *sf.workers, Solver: so, PicardRelax: *sf.relax}
		var sol *problem.Solution
		path := "interpreted"
		if problem.IsTransient(lf) {
			// Compiled kernels implement the stepped form.
			if stepped, serr := problem.BackwardEuler(lf); serr == nil {
				path = kernelPath(stepped, msh, &opts)
			}
			sol, err = solveTransient(m, lf, msh, sf, opts, stderr)
		} else {
			path = kernelPath(lf, msh, &opts)
			if sol, err = problem.Solve(lf, msh, opts); err != nil {
				err = solveError(err)
			}
		}
		if err != nil {
			return err
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
			return writeSummaryJSON(stdout, m, meth, spec, path, sol, wall)
		}
		if k > 0 {
			fmt.Fprintln(stdout)
		}
		writeSummaryText(stdout, m, meth, spec, path, sol, wall)
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

// solveError sorts a runtime error into input errors (status 2) and
// numerical failures (status 1).
func solveError(err error) error {
	var nc *linsolve.NotConvergedError
	var bd *linsolve.BreakdownError
	var nf *linsolve.NonFiniteError
	var sg *linsolve.SingularError
	var pe *problem.PicardError
	var tl *linsolve.TooLargeError
	switch {
	case errors.As(err, &sg):
		return fmt.Errorf("numerical failure, no result written: %w: the discrete problem has more than one solution. "+
			"A field that the equations fix only up to a constant needs a mean condition (mean p = 0); "+
			"an equal-order Galerkin discretisation of a saddle-point problem has spurious pressure modes (it violates the inf–sup condition), which the stabilised methods remove", err)
	case errors.As(err, &nc), errors.As(err, &bd), errors.As(err, &nf), errors.As(err, &pe), errors.As(err, &tl):
		return fmt.Errorf("numerical failure, no result written: %w", err)
	case errors.Is(err, problem.ErrNoSide):
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

func writeSummaryText(w io.Writer, m *compiler.Model, meth compiler.Method, spec, path string, sol *problem.Solution, wall time.Duration) {
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
	fmt.Fprintf(w, "kernels    %s\n", path)
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
	if s.Picard > 1 {
		fmt.Fprintf(w, "picard     %d iterations\n", s.Picard)
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
		if len(sol.Fields) > 0 && fieldComponents(sol, r.Field) > 1 {
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
	Setups     int     `json:"solver_setups"` // factorisations or preconditioner builds
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

func writeSummaryJSON(w io.Writer, m *compiler.Model, meth compiler.Method, spec, path string, sol *problem.Solution, wall time.Duration) error {
	s := sol.Summary
	out := jsonSolve{Schema: "formwright.solve/1", Model: m.Name, File: m.File, Method: meth.String(), Mesh: spec, Cells: s.Cells, Vertices: s.Vertices,
		Dofs: s.Dofs, Kernels: path, Solver: s.Solver, Iterations: s.Iterations, Residual: s.Residual, Picard: s.Picard, Setups: s.Prepared, MeanResidual: s.MeanResidual, WallTime: wall.Seconds(), Tau: map[string]string{}}
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

// gridOf builds the output grid on the nodes of the highest-degree field:
// linear VTK cells for P1/Q1, quadratic ones (VTK_QUADRATIC_TRIANGLE,
// VTK_BIQUADRATIC_QUAD, ...) for P2/Q2, so edge and interior nodes are
// written too. Fields of lower degree are evaluated at those nodes with
// their own basis (exact, since their space is contained in the higher
// one's).
func gridOf(sol *problem.Solution) *output.Grid {
	dm := sol.Dofs
	msh := sol.Mesh
	d := msh.Dim
	top := 0
	for k, f := range dm.Fields {
		if f.Element.Degree > dm.Fields[top].Element.Degree {
			top = k
		}
	}
	hi := dm.Fields[top].Element
	coords := dm.NodeCoords(top)
	np := len(coords) / d
	g := &output.Grid{Points: make([]float64, 3*np)}
	for n := 0; n < np; n++ {
		copy(g.Points[3*n:3*n+d], coords[n*d:(n+1)*d])
	}
	order := cell.VTKOrder(msh.Cell, hi.Degree)
	code := uint8(cell.VTKType(msh.Cell, hi.Degree))
	for c := 0; c < msh.NumCells(); c++ {
		nodes := dm.CellNodes(top, c)
		for _, i := range order {
			g.Connectivity = append(g.Connectivity, int64(nodes[i]))
		}
		g.Offsets = append(g.Offsets, int64(len(g.Connectivity)))
		g.Types = append(g.Types, code)
	}
	ref := hi.RefNodes()
	for k, f := range sol.Fields {
		arr := output.Array{Name: f.Name, Components: f.Components}
		if f.Components > 1 {
			arr.Components = 3 // VTK vectors have three components
		}
		arr.Values = make([]float64, np*arr.Components)
		lo := dm.Fields[k].Element
		if lo == hi {
			for n := 0; n < np; n++ {
				for c := 0; c < f.Components; c++ {
					arr.Values[n*arr.Components+c] = f.Values[c][n]
				}
			}
		} else {
			phi := make([]float64, lo.NumNodes())
			for c := 0; c < msh.NumCells(); c++ {
				hn, ln := dm.CellNodes(top, c), dm.CellNodes(k, c)
				for a := 0; a < hi.NumNodes(); a++ {
					lo.Eval(ref[a*d:(a+1)*d], phi)
					for comp := 0; comp < f.Components; comp++ {
						v := 0.0
						for b, nb := range ln {
							v += phi[b] * f.Values[comp][nb]
						}
						arr.Values[int(hn[a])*arr.Components+comp] = v
					}
				}
			}
		}
		g.PointData = append(g.PointData, arr)
	}
	return g
}

func writeSolution(path string, sol *problem.Solution, ascii bool) error {
	g := gridOf(sol)
	if filepath.Ext(path) == ".csv" {
		return output.WriteCSVFile(path, g, sol.Mesh.Dim)
	}
	opts := output.VTUOptions{Encoding: output.Binary}
	if ascii {
		opts.Encoding = output.ASCII
	}
	return output.WriteVTUFile(path, g, opts)
}
