package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"math/big"
	"path/filepath"
	"strings"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/plot"
	"github.com/formwright/formwright/runtime/problem"
	"github.com/formwright/formwright/runtime/study"
)

// convergenceError is a failed order check: exit status 1.
type convergenceError struct{ msgs []string }

func (e *convergenceError) Error() string {
	return "convergence check failed:\n  " + strings.Join(e.msgs, "\n  ")
}

// cmdVerify runs a manufactured-solution convergence study.
func cmdVerify(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("verify", "MODEL [flags]", "Apply MODEL's operator to a manufactured solution symbolically to get the\nsource and boundary data, solve on successively refined meshes, and check the\nobserved L² and H¹ orders against the expected ones.")
	exactFlag := fs.String("exact", "", "manufactured solution, one expression per unknown separated by ';' (default: a smooth non-polynomial function, printed)")
	sourceFlag := fs.String("source", "", "use this source instead of the derived one (to check a hand-derived source)")
	levels := fs.Int("levels", 4, "number of meshes, each twice as fine as the last (2 to 8)")
	base := fs.Int("base", 0, "cells per unit length on the coarsest mesh (default 8 in 1D, 4 in 2D, 2 in 3D)")
	method := fs.String("method", "", "methods to verify: galerkin, supg, gls, vms, a comma list, or all (default: the model's)")
	pattern := fs.String("pattern", "", "cell pattern: tri, tri-flip, quartered, quad (2D), tet, hex (3D) (default: by element)")
	meshFlag := fs.String("mesh", "", "coarsest mesh: a mesh spec of any extent or a .vtu file; each level refines the last uniformly (default: the unit interval, square or cube with --base cells per unit length)")
	tol := fs.Float64("tol", 0.2, "allowed shortfall of the observed order on the finest pair")
	asJSON := fs.Bool("json", false, "print the report as JSON")
	plotPath := fs.String("plot", "", "write a log-log convergence plot (PNG)")
	sweep := fs.String("sweep-pe", "", "also sweep the element Péclet number 0.01…1000 by setting this constant diffusivity coefficient")
	speed := fs.Float64("speed", 1, "advection speed |a| used to turn Péclet numbers into diffusivities in --sweep-pe")
	quiet := fs.Bool("quiet", false, "no progress on standard error")
	quadrature := fs.Int("quadrature", 0, "quadrature degree of every integral (default: the model's quadrature statement, else chosen from the form's degrees)")
	engine := addEngineFlags(fs)
	check := fs.Bool("check", true, "fail (exit 1) when an order falls short; --check=false only reports")
	until := fs.Float64("until", 0, "transient models: compare with the exact solution at this time")
	nl := addNonlinearFlags(fs, false) // nonlinear models (cmd_nonlinear.go)
	steps0 := fs.Int("steps", 4, "transient models: backward Euler steps on the coarsest mesh; each refinement multiplies them by 2^(k+1), so that Δt ∝ h^(k+1)")
	pos, err := parseArgs(fs, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("verify takes one model")
	}
	switch {
	case *levels < 2 || *levels > 8:
		return usagef("--levels must be between 2 and 8")
	case *quadrature < 0 || *quadrature > compiler.MaxQuadrature:
		return usagef("--quadrature %d: give a degree from 1 to %d (0: automatic)", *quadrature, compiler.MaxQuadrature)
	case *base < 0 || *base > 1024:
		return usagef("--base %d: give a number of cells per unit length from 1 to 1024 (0: the default)", *base)
	case !(*tol >= 0) || math.IsInf(*tol, 0):
		return usagef("--tol %g: the allowed shortfall of an order is a number ≥ 0", *tol)
	case !(*speed > 0) || math.IsInf(*speed, 0):
		return usagef("--speed %g: give a positive, finite advection speed", *speed)
	case math.IsNaN(*until) || math.IsInf(*until, 0) || *until < 0:
		return usagef("--until %g: give a positive, finite time", *until)
	case *steps0 < 1 || *steps0 > maxSteps:
		return usagef("--steps %d: give a number from 1 to %d", *steps0, maxSteps)
	}
	if *plotPath != "" && filepath.Ext(*plotPath) != ".png" {
		return usagef("--plot: plots are PNG files: name it FILE.png")
	}
	if err := checkOutputs([]string{pos[0]}, outputTarget{"--plot", *plotPath}); err != nil {
		return err
	}
	engineSolve, err := engine.verifySolveFunc(*quiet, stderr)
	if err != nil {
		return err
	}
	if engineSolve != nil {
		// The PETSc engine's kernels are the C ones, which cannot read
		// recovered second derivatives (gen --lang c).
		*nl.recover = false
	}
	m, err := loadModel(pos[0])
	if err != nil {
		return err
	}
	methods, err := methodsOf(m, *method)
	if err != nil {
		return err
	}
	exact, err := parseExact(m, *exactFlag)
	if err != nil {
		return err
	}
	var sources []ir.Expr
	if *sourceFlag != "" {
		if len(m.Equations) != 1 {
			return usagef("--source applies to single-equation models")
		}
		e, errs := m.ParseExpr("--source", *sourceFlag)
		if len(errs) > 0 {
			return &inputError{errs, map[string][]byte{"--source": []byte(*sourceFlag)}}
		}
		sources = []ir.Expr{e}
	}
	mf, err := compiler.Manufacture(m, exact, sources)
	if err != nil {
		return &usageError{err.Error()}
	}
	tensor := m.Unknowns[0].Element.Family == ir.TensorProduct
	if *pattern == "" {
		*pattern = map[bool]map[int]string{false: {2: "tri", 3: "tet"}, true: {2: "quad", 3: "hex"}}[tensor][m.Dim]
	}
	n0 := *base
	if n0 == 0 {
		n0 = map[int]int{1: 8, 2: 4, 3: 2}[m.Dim]
	}
	meshOf := func(l int) (study.Level, error) { return studyMesh(m.Dim, *pattern, n0<<l) }
	if *meshFlag != "" {
		if *pattern != "" && *pattern != map[bool]map[int]string{false: {2: "tri", 3: "tet"}, true: {2: "quad", 3: "hex"}}[tensor][m.Dim] {
			return usagef("--pattern applies to the built-in unit meshes; --mesh gives the cells itself")
		}
		if meshOf, err = refinedLevels(m, *meshFlag, *levels); err != nil {
			return err
		}
	}
	cfg := study.Config{Model: m.Name, Dim: m.Dim, Levels: *levels, Tol: *tol, Mesh: meshOf, SolveFunc: engineSolve}
	prog := newProgress(stderr, *quiet)
	defer prog.done()
	cfg.Progress = func(meth string, level, cells int) {
		prog.say(fmt.Sprint("level", meth, level), "%s: level %d of %d, %d cells", meth, level, *levels, cells)
	}
	cfg.Solve.Iterations = prog.iterations
	cfg.Solve.Degree = *quadrature
	if err := nl.check(fs); err != nil { // cmd_nonlinear.go
		return err
	}
	nl.apply(&cfg.Solve, stderr, true, prog.done) // nonlinear iteration limits and tolerances
	kmax := 1
	for i, u := range m.Unknowns {
		l2, h1, checkH1 := m.ExpectedOrders(i)
		cfg.Fields = append(cfg.Fields, study.Field{Name: u.Name, Element: u.Element, Exact: compiler.LowerExpr(m, exact[i]),
			ExpectedL2: l2, ExpectedH1: h1, CheckH1: checkH1, UpToConstant: m.HasMean(i)})
		kmax = max(kmax, u.Element.Degree)
	}
	for _, meth := range methods {
		lf, _, err := nl.lower(mf.Model, meth) // Newton step, Picard or linear form (cmd_nonlinear.go)
		if err != nil {
			return err
		}
		sm := study.Method{Name: meth.String(), Form: lf}
		if lf.IsTransient() {
			if engineSolve != nil {
				return usagef("--engine petsc solves steady models; %s is transient", m.Name)
			}
			if !(*until > 0) {
				return usagef("model %s is transient: give the comparison time with --until T", m.Name)
			}
			// Δt ∝ h^(k+1) keeps the first-order time error below the
			// spatial L² error O(h^(k+1)).
			if last := *steps0 << (uint(kmax+1) * uint(*levels-1)); last > 100000 {
				return usagef("the finest level would need %d time steps: use fewer --levels or a smaller --steps", last)
			}
			if sm.Stepped, err = compiler.BackwardEuler(lf); err != nil {
				return &usageError{err.Error()}
			}
			sm.Form = nil
			cfg.Until = *until
			cfg.Steps = func(l int) int { return *steps0 << (uint(kmax+1) * uint(l)) }
		}
		cfg.Methods = append(cfg.Methods, sm)
	}
	// The coarsest mesh carries every form (cells, sides and parts),
	// or the error points into the model (cmd_solve.go: meshFitError).
	if lv, err := meshOf(0); err == nil && lv.Mesh != nil {
		for _, sm := range cfg.Methods {
			form := sm.Form
			if form == nil && sm.Stepped != nil {
				form = sm.Stepped.Step
			}
			if form == nil {
				continue
			}
			if err := problem.CheckMesh(form, lv.Mesh); err != nil {
				return meshFitError(m, err)
			}
		}
	}
	if !*asJSON {
		fmt.Fprintf(stdout, "verify %s with the manufactured solution\n", m.Name)
		for i, u := range m.Unknowns {
			fmt.Fprintf(stdout, "  %s = %s\n  source f = %s\n", u.Name, syntaxOf(compiler.Simplify(exact[i], m.Dim)), syntaxOf(mf.Sources[i]))
		}
	}
	rep, err := study.Run(cfg)
	if err != nil {
		var se *study.SolveError
		if errors.As(err, &se) {
			return fmt.Errorf("%s, level %d (%d cells): %w", se.Method, se.Level, se.Cells, solveError(se.Err))
		}
		return err
	}
	for i := range exact {
		rep.Exact = append(rep.Exact, syntaxOf(compiler.Simplify(exact[i], m.Dim)))
		rep.Sources = append(rep.Sources, syntaxOf(mf.Sources[i]))
	}
	if !*asJSON {
		rep.WriteTables(stdout)
	}
	if *sweep != "" {
		lv, err := meshOf(*levels - 1)
		if err != nil {
			return err
		}
		var names []string
		for _, meth := range methods {
			names = append(names, meth.String())
		}
		if !*asJSON {
			fmt.Fprintf(stdout, "\nelement Péclet sweep on the %d-per-unit mesh (h = %.4g), %s = |a| h/(2 Pe) with |a| = %g\n", lv.N, lv.H, *sweep, *speed)
		}
		rep.Sweep, err = study.Sweep(study.SweepConfig{Dim: m.Dim, Methods: names, Level: lv, Speed: *speed, SolveFunc: engineSolve,
			FormAt: func(meth string, kappa float64) (*ir.LoweredForm, []ir.Expr, error) {
				return sweepForm(m, mf, *sweep, meth, kappa, nl.options())
			}})
		if err != nil {
			return solveError(err)
		}
		if !*asJSON {
			study.WriteSweep(stdout, rep.Sweep, *sweep)
		}
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(rep); err != nil {
			return err
		}
	}
	if len(rep.Failed) > 0 && *check {
		// A failed study writes no plot: nothing is half-done.
		return &convergenceError{rep.Failed}
	}
	if *plotPath != "" {
		k := float64(m.Unknowns[0].Element.Degree)
		if err := plot.Convergence(*plotPath, rep.Curves(), plot.ConvOptions{Title: "convergence: " + m.Name, Orders: []float64{k, k + 1}, Rates: true}); err != nil {
			return ioError(fmt.Errorf("plot: %w", err))
		}
	}
	if !*asJSON {
		if len(rep.Failed) > 0 {
			fmt.Fprintf(stdout, "not checked (--check=false); shortfalls:\n  %s\n", strings.Join(rep.Failed, "\n  "))
		} else {
			fmt.Fprintf(stdout, "all observed orders within %.2f of the expected ones\n", *tol)
		}
	}
	return nil
}

// parseExact reads --exact (or the default manufactured solution): one
// expression per unknown, of the unknown's rank.
func parseExact(m *compiler.Model, flag string) ([]ir.Expr, error) {
	src := compiler.DefaultExact(m)
	if flag != "" {
		src = strings.Split(flag, ";")
	}
	if len(src) != len(m.Unknowns) {
		return nil, usagef("--exact gives %d expressions for %d unknowns (separate them with ';')", len(src), len(m.Unknowns))
	}
	var exact []ir.Expr
	for i, s := range src {
		s = strings.TrimSpace(s)
		e, errs := m.ParseExpr("--exact", s)
		if len(errs) > 0 {
			return nil, &inputError{errs, map[string][]byte{"--exact": []byte(s)}}
		}
		if e.Rank() != m.Unknowns[i].Rank {
			return nil, usagef("--exact: the solution for %s must be a %s", m.Unknowns[i].Name, map[int]string{0: "scalar", 1: "vector"}[m.Unknowns[i].Rank])
		}
		exact = append(exact, e)
	}
	return exact, nil
}

// studyMesh is a level of a study on the unit interval, square or cube: n
// cells per unit length.
func studyMesh(dim int, pattern string, n int) (study.Level, error) {
	var spec string
	switch dim {
	case 1:
		spec = fmt.Sprintf("span:0,1:%d", n)
	case 2:
		spec = fmt.Sprintf("span:0,1,0,1:%dx%d:%s", n, n, pattern)
	default:
		spec = fmt.Sprintf("span:0,1,0,1,0,1:%dx%dx%d:%s", n, n, n, pattern)
	}
	msh, err := mesh.Load(spec)
	if err != nil {
		return study.Level{}, &usageError{err.Error()}
	}
	return study.Level{Mesh: msh, N: n, H: 1 / float64(n)}, nil
}

// refinedLevels returns the meshes of a study on any mesh: the mesh of
// spec (a spec of any extent, or a .vtu file), refined uniformly once per
// level (mesh.Refine keeps the boundary parts). Each level's h is its
// largest cell diameter and N the number of cells (there is no "per unit
// length" on a general domain).
func refinedLevels(m *compiler.Model, spec string, levels int) (func(int) (study.Level, error), error) {
	base, _, err := buildMesh(m, spec)
	if err != nil {
		return nil, err
	}
	if cells := float64(base.NumCells()) * math.Pow(float64(int(1)<<base.Dim), float64(levels-1)); cells > float64(mesh.CellLimit()) {
		return nil, usagef("--mesh with --levels %d would reach %g cells, more than this machine can solve (%d)", levels, cells, mesh.CellLimit())
	}
	meshes := []*mesh.Mesh{base}
	return func(l int) (study.Level, error) {
		for len(meshes) <= l {
			meshes = append(meshes, mesh.Refine(meshes[len(meshes)-1]))
		}
		msh := meshes[l]
		h := 0.0
		var buf []float64
		for c := 0; c < msh.NumCells(); c++ {
			buf = msh.CellCoords(c, buf)
			h = math.Max(h, element.Diameter(msh.Cell, buf))
		}
		return study.Level{Mesh: msh, N: msh.NumCells(), H: h}, nil
	}, nil
}

// sweepForm is the manufactured problem of method meth with the swept
// coefficient set to kappa, and the exact solution at that value (it may
// involve the coefficient).
func sweepForm(m *compiler.Model, mf *compiler.Manufactured, coef, meth string, kappa float64, opts compiler.DeriveOptions) (*ir.LoweredForm, []ir.Expr, error) {
	mm, err := compiler.OverrideCoef(m, coef, ir.NewNum(source.Pos{}, new(big.Rat).SetFloat64(kappa)))
	if err != nil {
		return nil, nil, usagef("--sweep-pe: %v", err)
	}
	// The manufactured data depend on the coefficient: redo them.
	mf2, err := compiler.Manufacture(mm, mf.Exact, nil)
	if err != nil {
		return nil, nil, &usageError{err.Error()}
	}
	me, _ := compiler.MethodByName(meth)
	lf, _, err := deriveAndLowerWith(mf2.Model, me, opts)
	if err != nil {
		return nil, nil, err
	}
	return lf, compiler.LowerExpr(mm, mf.Exact[0]), nil
}
