package distributed

import (
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"sync"
	"time"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/linsolve"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"
)

// Options control Solve.
type Options struct {
	// Ranks is the number of MPI processes (0: 1).
	Ranks int
	// Solver is formwright's choice of solver; PETScOptions, passed to
	// PETSc after it (e.g. "-ksp_type", "gmres", "-pc_type", "hypre"),
	// override it.
	Solver       Solver
	PETScOptions []string
	// Time is t in coefficients and boundary data.
	Time float64
	// Picard iteration of forms that read the previous iterate, as in
	// problem.Options: at most MaxPicard steps (0: 50) until the relative
	// change is at most PicardTol (0: 1e-8), under-relaxed by PicardRelax
	// in (0, 1) (0 or 1: none), from Initial (nil: zero with the value
	// conditions).
	MaxPicard   int
	PicardTol   float64
	PicardRelax float64
	Initial     []float64
	// Newton controls Newton's method for a Newton step form
	// (ir.LoweredForm.Newton), as in problem.Options; Progress is called
	// with the history after the run.
	Newton problem.NewtonOptions
	// Log receives the driver's output: PETSc's own reports when asked
	// for through PETScOptions (-ksp_monitor, -log_view) and its
	// messages (nil: discarded).
	Log io.Writer
	// CacheDir keeps built drivers ("": DefaultCacheDir; a directory that
	// cannot be written means building every time).
	CacheDir string
}

// Report is what a run did, beyond the solution's summary.
type Report struct {
	Result
	Ranks int
	MPI   string
	// Cached says that the driver came from the cache.
	Cached bool
	// Phases are formwright's own (dofs, partition, write, build, run,
	// read) with the wall time of each; the driver's are in Times.
	Phases []problem.Phase
	// PartDofs are the dofs each rank owns, PartCells the cells it
	// assembles.
	PartDofs, PartCells []int
}

// symmetryTol is the relative tolerance of the driver's symmetry test,
// runtime/assemble.SymmetryTol.
const symmetryTol = 1e-12

// Solve assembles and solves form on m with PETSc on opts.Ranks MPI
// processes, with the generated C kernels k of the form: it numbers the
// dofs and evaluates the value and mean conditions as runtime/problem
// does, partitions the mesh (NewPartition), writes each rank's part, builds
// (or takes from the cache) the driver with the kernels, runs it with
// mpiexec, and returns the solution in the runtime/dof numbering with a
// summary like problem.Solve's.
//
// Errors: *SetupError (no MPI or PETSc), *BuildError, *RunError,
// *OptionsError (more ranks than cells, ...), *UnsupportedError
// (transient forms) are set-up failures;
// *DivergedError, *problem.ResidualError (the explicit residual is above
// the tolerance), *problem.PicardError and *DegenerateError are numerical
// failures. The run directory is removed in every case.
func Solve(form *ir.LoweredForm, m *mesh.Mesh, k Kernels, opts Options) (*problem.Solution, *Report, error) {
	if form.IsTransient() {
		return nil, nil, &UnsupportedError{What: "transient forms"}
	}
	if form.ReadsRecovered() {
		// The driver has no gradient recovery (runtime/problem.RecoverGradient).
		return nil, nil, &UnsupportedError{What: "forms that read recovered second derivatives (derive them with the recovery off: --recover=false)"}
	}
	tc, err := findToolchain()
	if err != nil {
		return nil, nil, err
	}
	ranks := opts.Ranks
	if ranks == 0 {
		ranks = 1
	}
	rep := &Report{Ranks: ranks, MPI: tc.mpi}
	clock := time.Now()
	phase := func(name string) {
		now := time.Now()
		rep.Phases = append(rep.Phases, problem.Phase{Name: name, Wall: now.Sub(clock)})
		clock = now
	}
	// The boundary parts the model defines, computed on the mesh as the
	// Go engine computes them; the partition reads their facets.
	m, natural, err := problem.ResolveParts(form, m)
	if err != nil {
		return nil, nil, err
	}
	dm, err := problem.DofMap(form, m)
	if err != nil {
		return nil, nil, err
	}
	fixed, values, err := problem.ValueConditions(form, m, dm, opts.Time)
	if err != nil {
		return nil, nil, err
	}
	means, err := problem.MeanConditions(form, m, dm)
	if err != nil {
		return nil, nil, err
	}
	for _, mc := range means {
		fixed[mc.Pin], values[mc.Pin] = true, 0
	}
	if opts.Initial != nil && len(opts.Initial) != dm.NumDofs {
		return nil, nil, fmt.Errorf("distributed: initial iterate has %d values for %d dofs", len(opts.Initial), dm.NumDofs)
	}
	phase("dofs")
	part, err := NewPartition(m, dm, ranks)
	if err != nil {
		return nil, nil, err
	}
	phase("partition")

	dir, err := os.MkdirTemp("", "formwright-petsc-")
	if err != nil {
		return nil, nil, err
	}
	pending.addDir(dir)
	defer func() {
		os.RemoveAll(dir)
		pending.removeDir(dir)
	}()
	h, err := newHeader(form, m, dm, ranks, opts)
	if err != nil {
		return nil, nil, err
	}
	if err := writeParts(dir, h, form, m, dm, part, fixed, values, means, opts.Initial); err != nil {
		return nil, nil, err
	}
	for r := 0; r < ranks; r++ {
		rep.PartDofs = append(rep.PartDofs, part.Start[r+1]-part.Start[r])
	}
	rep.PartCells = make([]int, ranks)
	for _, r := range part.CellRank {
		rep.PartCells[r]++
	}
	phase("write")

	cache := opts.CacheDir
	if cache == "" {
		cache = DefaultCacheDir()
	}
	exe, cached, err := tc.build(k, cache, dir)
	if err != nil {
		return nil, nil, err
	}
	rep.Cached = cached
	phase("build")
	stderr, err := tc.launch(exe, dir, ranks, opts.PETScOptions, opts.Log)
	if err != nil {
		return nil, nil, err
	}
	phase("mpiexec")
	res, err := readResult(filepath.Join(dir, "result"))
	if err != nil {
		return nil, nil, &RunError{Ranks: ranks, Stderr: stderr, Err: err}
	}
	rep.Result = *res
	xNew := make([]float64, dm.NumDofs)
	for r := 0; r < ranks; r++ {
		if err := readX(filepath.Join(dir, "x."+strconv.Itoa(r)), xNew); err != nil {
			return nil, nil, &RunError{Ranks: ranks, Stderr: stderr, Err: err}
		}
	}
	x := make([]float64, dm.NumDofs)
	for i, j := range part.New {
		x[i] = xNew[j]
	}
	phase("read")

	solverName := res.KSP + "+" + res.PC
	if res.Factor != "" {
		solverName += " (" + res.Factor + ")"
	}
	if !res.Converged {
		de := &DivergedError{Solver: solverName, Reason: res.Reason, Iterations: res.Iterations, Residual: res.Residual, Stderr: stderr}
		if form.Newton {
			return nil, rep, &problem.NewtonError{Reason: res.NewtonReason, History: res.Newton, Err: de}
		}
		return nil, rep, de
	}
	// Every result is checked by its explicit residual, as runtime/problem
	// checks its own solves.
	tol := problem.DirectResidualTol
	if !res.Direct {
		tol = h.rtol * 10
	}
	if !form.Newton && !(res.Residual <= tol) {
		return nil, rep, &problem.ResidualError{Solver: "PETSc " + solverName, Residual: res.Residual, Tol: tol}
	}
	if res.PicardFailed {
		return nil, rep, &problem.PicardError{Iter: res.Picard, Change: res.PicardChange, Tol: h.picardTol}
	}
	if form.Newton {
		if res.Direct {
			for k := range res.Newton {
				res.Newton[k].LinearIters = 0 // as runtime/problem reports a direct solve
			}
			rep.Newton = res.Newton
		}
		if p := opts.Newton.Progress; p != nil {
			for _, st := range res.Newton {
				p(st)
			}
		}
		// Every linear solve of the iteration is checked by its
		// explicit residual, as runtime/problem checks them.
		for k, lin := range res.NewtonLinearRes {
			if it := res.Newton[k].Iter; it > 0 && !(lin <= tol) {
				return nil, rep, &problem.NewtonError{Reason: fmt.Sprintf("the linear system of iteration %d could not be solved", it), History: res.Newton,
					Err: &problem.ResidualError{Solver: "PETSc " + solverName, Residual: lin, Tol: tol}}
			}
		}
		if res.NewtonFailed {
			return nil, rep, &problem.NewtonError{Reason: res.NewtonReason, History: res.Newton}
		}
	}

	sum := problem.Summary{
		Natural:        problem.NaturalText(natural),
		Mesh:           fmt.Sprintf("%v mesh, %d dimensions, sides %v", m.Cell, m.Dim, m.BoundaryNames()),
		Cells:          m.NumCells(),
		Vertices:       m.NumVertices(),
		Dofs:           dm.NumDofs,
		Method:         form.Method,
		KernelPath:     "generated C",
		Symmetric:      res.Symmetric,
		Solver:         solverName,
		Iterations:     res.Iterations,
		Residual:       res.Residual,
		NonlinearIters: res.Picard,
		Prepared:       res.Picard,
		MeanResidual:   res.MeanResidual,
		Workers:        ranks,
		Engine:         "PETSc " + res.PETSc + ", " + tc.mpi,
		Ranks:          ranks,
		SolverReason:   res.Choice,
	}
	switch {
	case form.Newton:
		sum.Nonlinear, sum.History, sum.NonlinearIters = "newton", res.Newton, len(res.Newton)-1
	case form.ReadsPrevious():
		sum.Nonlinear = "picard"
	}
	// Memory: what the ranks' resident sets grew by from the start of
	// the driver (MPI and PETSc loaded) to their peak, per unknown.
	grown := int64(0)
	for r := range res.MaxRSS {
		if r < len(res.BaseRSS) {
			grown += res.MaxRSS[r] - res.BaseRSS[r]
		}
	}
	sum.BytesPerUnknown = float64(grown) / float64(dm.NumDofs)
	if res.Direct {
		sum.Solver = "direct LU"
		if res.Factor != "" {
			sum.Solver += " (" + res.Factor + ")"
		}
	}
	for _, f := range dm.Fields {
		sum.Nodes = append(sum.Nodes, f.NumNodes)
	}
	sum.Phases = append(sum.Phases, rep.Phases...)
	for _, name := range []string{"assembly", "solve"} {
		sum.Phases = append(sum.Phases, problem.Phase{Name: "petsc-" + name, Wall: time.Duration(res.Times[name] * float64(time.Second))})
	}
	sum.Phases = append(sum.Phases, problem.Phase{Name: "petsc-setup", Wall: time.Duration(res.Times["pc_setup"] * float64(time.Second))})
	sol, err := problem.NewSolution(form, m, dm, x, sum)
	return sol, rep, err
}

// newHeader is the part header of a run.
func newHeader(form *ir.LoweredForm, m *mesh.Mesh, dm *dof.Numbering, ranks int, opts Options) (*header, error) {
	s := opts.Solver
	method, precond := s.codes()
	h := &header{
		dim: int64(m.Dim), verts: int64(m.Cell.NumVertices()), dofs: int64(dm.NumLocal), global: int64(dm.NumDofs),
		ranks: int64(ranks), method: method, precond: precond,
		maxIter: int64(s.MaxIter), restart: int64(s.Restart), direct: linsolve.DirectBelow2D,
		maxPicard: int64(opts.MaxPicard), rtol: s.RelTol, time: opts.Time, symTol: symmetryTol,
		picardTol: opts.PicardTol, relax: opts.PicardRelax, sides: form.Sides(),
	}
	if form.Newton {
		no := opts.Newton
		h.newton, h.newtonMaxIter = 1, int64(no.MaxIter)
		if no.NoLineSearch {
			h.newtonNoSearch = 1
		}
		h.newtonOpts = [5]float64{no.RelTol, no.AbsTol, no.StepTol, no.Damping, no.MinStep}
	}
	for _, u := range form.Unknowns {
		h.constraint = append(h.constraint, u.Constraint)
	}
	if len(h.constraint) > 16 {
		return nil, &OptionsError{fmt.Sprintf("%d unknowns (the driver takes at most 16)", len(h.constraint))}
	}
	if m.Dim == 3 {
		h.direct = linsolve.DirectBelow3D
	}
	if h.rtol == 0 {
		h.rtol = linsolve.DefaultRelTol
	}
	if !(h.rtol > 0 && h.rtol < 1) {
		return nil, &OptionsError{fmt.Sprintf("relative tolerance %g is not in (0, 1)", h.rtol)}
	}
	if h.maxIter == 0 {
		h.maxIter = linsolve.DefaultMaxIter
	}
	if h.restart == 0 {
		h.restart = 100
	}
	if h.picardTol == 0 {
		h.picardTol = 1e-8
	}
	for _, side := range h.sides {
		if _, ok := m.Boundaries[side]; !ok {
			return nil, fmt.Errorf("distributed: boundary integral on %q: %w (sides: %v)", side, problem.ErrNoSide, m.BoundaryNames())
		}
	}
	if dm.NumDofs > math.MaxInt32 {
		return nil, &OptionsError{fmt.Sprintf("%d dofs: the part files number dofs with 32 bits", dm.NumDofs)}
	}
	return h, nil
}

// writeParts writes part.<rank> for every rank, two at a time.
func writeParts(dir string, h *header, form *ir.LoweredForm, m *mesh.Mesh, dm *dof.Numbering, p *Partition,
	fixed []bool, values []float64, means []problem.MeanCondition, initial []float64) error {
	// The cells of each rank, in mesh order, and each cell's place there.
	cellsOf := make([][]int32, p.Ranks)
	local := make([]int32, m.NumCells())
	for c, r := range p.CellRank {
		local[c] = int32(len(cellsOf[r]))
		cellsOf[r] = append(cellsOf[r], int32(c))
	}
	var wg sync.WaitGroup
	errs := make([]error, p.Ranks)
	sem := make(chan struct{}, 2)
	for r := 0; r < p.Ranks; r++ {
		wg.Add(1)
		sem <- struct{}{}
		go func(r int) {
			defer func() { <-sem; wg.Done() }()
			pt := buildPart(r, h, form, m, dm, p, cellsOf[r], local, fixed, values, means, initial)
			errs[r] = writePart(filepath.Join(dir, "part."+strconv.Itoa(r)), h, pt)
		}(r)
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}

// buildPart gathers what rank r reads.
func buildPart(r int, h *header, form *ir.LoweredForm, m *mesh.Mesh, dm *dof.Numbering, p *Partition, cells []int32, local []int32,
	fixed []bool, values []float64, means []problem.MeanCondition, initial []float64) *part {
	lo, hi := p.Start[r], p.Start[r+1]
	pt := &part{lo: int64(lo), hi: int64(hi)}
	d, nv := m.Dim, m.Cell.NumVertices()
	// The rank's vertices, numbered in the order its cells meet them.
	vmap := make([]int32, m.NumVertices())
	for i := range vmap {
		vmap[i] = -1
	}
	nLocal := int32(0)
	pt.cells = make([]int32, 0, len(cells)*nv)
	for _, c := range cells {
		for _, v := range m.CellVertices(int(c)) {
			if vmap[v] < 0 {
				vmap[v] = nLocal
				nLocal++
				pt.coords = append(pt.coords, m.Coords[int(v)*d:int(v+1)*d]...)
			}
			pt.cells = append(pt.cells, vmap[v])
		}
	}
	pt.dofs = make([]int32, 0, len(cells)*dm.NumLocal)
	for _, c := range cells {
		for _, g := range dm.CellDofs(int(c)) {
			pt.dofs = append(pt.dofs, p.New[g])
		}
	}
	for s, side := range h.sides {
		for _, f := range m.Boundaries[side] {
			if int(p.CellRank[f.Cell]) == r {
				pt.facets = append(pt.facets, local[f.Cell], f.Facet, int32(s))
			}
		}
	}
	pt.dnnz, pt.onnz = p.Diag[lo:hi], p.Off[lo:hi]
	// The rank's dofs are in runtime/dof order, field by field.
	pt.owned = make([]int64, len(dm.Fields))
	for j := lo; j < hi; j++ {
		i := int(p.Old[j])
		for k := len(dm.Fields) - 1; k >= 0; k-- {
			if i >= dm.Fields[k].Offset {
				pt.owned[k]++
				break
			}
		}
	}
	pt.initial = make([]float64, hi-lo)
	for j := lo; j < hi; j++ {
		i := p.Old[j]
		if fixed[i] {
			pt.fixed = append(pt.fixed, int32(j))
			pt.values = append(pt.values, values[i])
		}
		switch {
		case fixed[i]:
			pt.initial[j-lo] = values[i]
		case initial != nil:
			pt.initial[j-lo] = initial[i]
		}
	}
	for _, mc := range means {
		pm := partMean{pin: int64(p.New[mc.Pin]), target: mc.Target}
		for k, g := range mc.Dofs {
			if j := int(p.New[g]); j >= lo && j < hi {
				pm.dofs = append(pm.dofs, int32(j))
				pm.w = append(pm.w, mc.Weights[k])
			}
		}
		pt.means = append(pt.means, pm)
	}
	return pt
}
