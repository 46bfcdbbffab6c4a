package main

import (
	"errors"
	"fmt"
	"io"
	"strings"

	"github.com/formwright/formwright/compiler/gogen"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/distributed"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"
	"github.com/formwright/formwright/runtime/study"
)

// engineFlags choose the engine that assembles and solves: formwright's
// own (go) or PETSc with MPI (runtime/distributed).
type engineFlags struct {
	engine       *string
	ranks        *int
	petscOptions *string
}

func addEngineFlags(fs *cmdFlags) *engineFlags {
	return &engineFlags{
		engine:       fs.String("engine", "go", "go (formwright's own solvers) or petsc (PETSc with MPI, the generated C kernels, --ranks processes)"),
		ranks:        fs.Int("ranks", 1, "MPI processes of --engine petsc"),
		petscOptions: fs.String("petsc-options", "", "options passed on to PETSc, which override formwright's solver choice (e.g. \"-ksp_type gmres -pc_type gamg -ksp_monitor\")"),
	}
}

// solveFunc returns the steady solve of the chosen engine: nil for go
// (problem.Solve), else a function that generates the form's C kernels
// and solves on PETSc. It checks the flags and, for petsc, that MPI and
// PETSc are installed.
func (ef *engineFlags) solveFunc(sf *solveFlags, stderr io.Writer) (study.SolveFunc, error) {
	switch *ef.engine {
	case "go":
		if *ef.ranks != 1 || *ef.petscOptions != "" {
			return nil, usagef("--ranks and --petsc-options belong to --engine petsc")
		}
		return nil, nil
	case "petsc":
	default:
		return nil, usagef("--engine %q: the engines are go and petsc", *ef.engine)
	}
	if *ef.ranks < 1 {
		return nil, usagef("--ranks %d: give at least 1", *ef.ranks)
	}
	switch {
	case *sf.tol != 0 && !(*sf.tol > 0 && *sf.tol < 1):
		return nil, usagef("--tol %g: the relative tolerance must be in (0, 1)", *sf.tol)
	case *sf.maxIter < 0:
		return nil, usagef("--max-iter %d: give a positive number", *sf.maxIter)
	case *sf.restart < 0:
		return nil, usagef("--restart %d: give a positive number", *sf.restart)
	}
	if *sf.shift != 0 {
		return nil, usagef("--ilu-shift is a setting of the go engine's ILU(0); pass PETSc's own options with --petsc-options")
	}
	if err := distributed.Available(); err != nil {
		return nil, usagef("--engine petsc: %v", err)
	}
	solver := distributed.Solver{RelTol: *sf.tol, MaxIter: *sf.maxIter, Restart: *sf.restart}
	if *sf.solver != "auto" {
		s, err := distributed.ParseSolver(*sf.solver)
		if err != nil {
			return nil, usagef("--solver: %v", err)
		}
		solver.Method, solver.Precond = s.Method, s.Precond
	}
	var log io.Writer = stderr
	if *sf.quiet {
		log = nil
	}
	ranks, petscOpts := *ef.ranks, strings.Fields(*ef.petscOptions)
	return func(lf *ir.LoweredForm, m *mesh.Mesh, opts problem.Options) (*problem.Solution, error) {
		if opts.Degree > 0 && opts.Degree != lf.QuadratureDegree() {
			// --quadrature: the kernels are generated with that rule.
			c := *lf
			c.Degree = opts.Degree
			lf = &c
		}
		h, c, err := gogen.GenerateC([]*ir.LoweredForm{lf}, gogen.COptions{Name: "kernels", Prefix: "fwk"})
		if err != nil {
			return nil, fmt.Errorf("generating the C kernels: %w", err)
		}
		sol, _, err := distributed.Solve(lf, m, distributed.Kernels{Name: "kernels", Header: h, Source: c}, distributed.Options{
			Ranks: ranks, Solver: solver, PETScOptions: petscOpts, Time: opts.Time,
			MaxPicard: opts.MaxPicard, PicardTol: opts.PicardTol, PicardRelax: opts.PicardRelax, Initial: opts.Initial, Newton: opts.Newton, Log: log})
		return sol, err
	}, nil
}

// engineError sorts the PETSc engine's errors: set-up, build and run
// failures are bad set-up (status 2), divergence and degenerate cells
// numerical failures (status 1); nil for other errors.
func engineError(err error) error {
	var se *distributed.SetupError
	var be *distributed.BuildError
	var re *distributed.RunError
	var ue *distributed.UnsupportedError
	var oe *distributed.OptionsError
	var de *distributed.DivergedError
	var ge *distributed.DegenerateError
	switch {
	case errors.As(err, &se), errors.As(err, &be), errors.As(err, &re), errors.As(err, &ue), errors.As(err, &oe):
		return &usageError{err.Error()}
	case errors.As(err, &de), errors.As(err, &ge):
		return fmt.Errorf("numerical failure, no result written: %w", err)
	}
	return nil
}

// verifySolveFunc is solveFunc for verify, which solves with the
// engine's automatic choice (PETSc's options may override it).
func (ef *engineFlags) verifySolveFunc(quiet bool, stderr io.Writer) (study.SolveFunc, error) {
	zero, zeroInt, auto := 0.0, 0, "auto"
	sf := &solveFlags{solver: &auto, tol: &zero, maxIter: &zeroInt, restart: &zeroInt, shift: &zero, quiet: &quiet}
	return ef.solveFunc(sf, stderr)
}
