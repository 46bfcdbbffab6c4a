package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"math/big"
	"strings"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"
)

// nonlinearFlags are the options of solve and verify for nonlinear
// models: the iteration (Newton or the derived Picard linearisation),
// the Jacobian's approximations, limits and tolerances, and for solve a
// Picard start and a natural-parameter ramp.
type nonlinearFlags struct {
	method    *string
	freeze    *string
	maxIter   *int
	tol       *float64
	noSearch  *bool
	picard    *int
	ramp      *string
	rampSteps *int
	rampScale *string
	recover   *bool
	jacobian  compiler.JacobianOptions
	// fixedRecovery: --freeze recovery (problem.NewtonOptions.FixedRecovery).
	fixedRecovery bool
	methodSet     bool
	picardSet     bool
	forSolving    bool
}

func addNonlinearFlags(fs *cmdFlags, solve bool) *nonlinearFlags {
	nl := &nonlinearFlags{
		method:     fs.String("nonlinear", "newton", "iteration for a nonlinear model: newton (the derived Jacobian, with a line search) or picard (the derived Picard linearisation)"),
		freeze:     fs.String("freeze", "", "approximate Newton's Jacobian: tau, test (the stabilisation's test operator) or tau,test frozen at the iterate; recovery: take the step of the Jacobian that holds the recovered second derivatives fixed, uncorrected (default: the exact Jacobian)"),
		maxIter:    fs.Int("max-nonlinear", 0, "nonlinear iteration limit (default 30 for newton, 80 where the residual reads recovered second derivatives, 50 for picard)"),
		tol:        fs.Float64("nonlinear-tol", 0, "newton: relative residual ‖F‖/‖F₀‖ to reach (default 1e-10); picard: relative change between iterates (default 1e-8)"),
		noSearch:   fs.Bool("no-line-search", false, "newton: take the (damped, --relax) step without the backtracking line search"),
		recover:    fs.Bool("recover", true, "stabilised methods on P1: rebuild the second derivatives the strong residual loses from the recovered gradient of the solution (a steady linear model then iterates until the recovery settles); --recover=false keeps the plain P1 residual"),
		forSolving: solve,
	}
	if solve {
		nl.picard = fs.Int("picard-steps", 0, "newton: take this many steps of the derived Picard linearisation first (from zero, one step of Navier–Stokes is the Stokes solution; default 1 for a model with a capture statement, else 0)")
		nl.ramp = fs.String("ramp", "", "natural-parameter continuation: COEF=TARGET ramps the constant coefficient COEF from the model's value to TARGET, each step starting from the last solution")
		nl.rampSteps = fs.Int("ramp-steps", 5, "number of continuation steps of --ramp")
		nl.rampScale = fs.String("ramp-scale", "linear", "spacing of the --ramp values: linear or log")
	}
	return nl
}

// options are the derivation options the flags ask for: the Jacobian's
// approximations and whether the P1 residual's second derivatives are
// recovered.
func (nl *nonlinearFlags) options() compiler.DeriveOptions {
	o := compiler.DeriveOptions{Jacobian: nl.jacobian}
	if nl.recover != nil && !*nl.recover {
		o.Recovery = compiler.RecoverOff
	}
	return o
}

// check validates the flags and records whether --nonlinear was given.
func (nl *nonlinearFlags) check(fs *cmdFlags) error {
	fs.Visit(func(f *flag.Flag) {
		if f.Name == "nonlinear" {
			nl.methodSet = true
		}
		if f.Name == "picard-steps" {
			nl.picardSet = true
		}
	})
	switch *nl.method {
	case "newton", "picard":
	default:
		return usagef("--nonlinear %q: use newton or picard", *nl.method)
	}
	var rest []string
	for _, f := range strings.Split(*nl.freeze, ",") {
		if strings.TrimSpace(f) == "recovery" {
			nl.fixedRecovery = true
		} else {
			rest = append(rest, f)
		}
	}
	jac, err := parseFreeze(strings.Join(rest, ","))
	if err != nil {
		return usagef("--freeze %q: use tau, test, recovery or a list of them such as tau,test", *nl.freeze)
	}
	nl.jacobian = jac
	if *nl.maxIter < 0 {
		return usagef("--max-nonlinear %d: give a positive number", *nl.maxIter)
	}
	if t := *nl.tol; t != 0 && !(t > 0 && t < 1) {
		return usagef("--nonlinear-tol %g: the tolerance must be in (0, 1)", t)
	}
	if nl.forSolving {
		if *nl.picard < 0 {
			return usagef("--picard-steps %d: give a number ≥ 0", *nl.picard)
		}
		if *nl.rampSteps < 1 {
			return usagef("--ramp-steps %d: give a positive number", *nl.rampSteps)
		}
		if s := *nl.rampScale; s != "linear" && s != "log" {
			return usagef("--ramp-scale %q: use linear or log", s)
		}
	}
	return nil
}

// apply sets the iteration options: limits, tolerances, the line search
// and a progress line per Newton iteration on stderr.
func (nl *nonlinearFlags) apply(opts *problem.Options, stderr io.Writer, quiet bool, clearLine func()) {
	if *nl.method == "picard" {
		opts.MaxPicard, opts.PicardTol = *nl.maxIter, *nl.tol
	} else {
		opts.Newton.MaxIter, opts.Newton.RelTol = *nl.maxIter, *nl.tol
	}
	opts.Newton.NoLineSearch = *nl.noSearch
	opts.Newton.FixedRecovery = nl.fixedRecovery
	opts.Newton.Damping = opts.PicardRelax
	if !quiet {
		opts.Newton.Progress = func(s problem.NewtonStep) {
			clearLine()
			fmt.Fprintf(stderr, "  %v\n", s)
		}
	}
}

// lower derives and lowers one method of a model for the chosen
// iteration, with the derivation it came from: a nonlinear model gives
// the Newton step (compiler.Derivation.Lower, with the Jacobian options)
// or, with --nonlinear picard, the form of its derived Picard
// linearisation; a linear model its own form.
func (nl *nonlinearFlags) lower(m *compiler.Model, meth compiler.Method) (*ir.LoweredForm, *compiler.Derivation, error) {
	if !m.Nonlinear() {
		if nl.methodSet && *nl.method == "newton" {
			return nil, nil, usagef("model %s is linear in its unknowns (a lag written with previous(...) is the model's own choice): it is solved by Picard iteration where it reads previous(...); write the operator without previous(...) for Newton's method", m.Name)
		}
		return deriveAndLowerWith(m, meth, nl.options())
	}
	if *nl.method == "picard" {
		pm, err := compiler.PicardModel(m)
		if err != nil {
			return nil, nil, &usageError{err.Error()}
		}
		return deriveAndLowerWith(pm, meth, nl.options())
	}
	d, err := compiler.DeriveWith(m, []compiler.Method{meth}, nl.options())
	if err != nil {
		return nil, nil, &usageError{err.Error()}
	}
	lf, err := d.Lower(meth)
	if err != nil {
		return nil, nil, &usageError{err.Error()}
	}
	return lf, d, nil
}

// solve solves a steady form of model m: with --picard-steps first some
// steps of the Picard linearisation, with --ramp by continuation in a
// coefficient, otherwise directly.
func (nl *nonlinearFlags) solve(m *compiler.Model, meth compiler.Method, lf *ir.LoweredForm, msh *mesh.Mesh, opts problem.Options, stderr io.Writer, quiet bool) (*problem.Solution, error) {
	steps := *nl.picard
	if !nl.picardSet && m.HasCapture() {
		// Newton's method on a discontinuity-capturing term can stall
		// from the zero state on fine meshes (the line search finds no
		// descent on 256² in skew_front); one step with the capture
		// diffusivity lagged gives it a start from which it converges
		// (examples/skew_front/README.md).
		steps = 1
	}
	start := func(mm *compiler.Model, form *ir.LoweredForm, o problem.Options) (problem.Options, error) {
		if !form.Newton || steps == 0 {
			return o, nil
		}
		pm, err := compiler.PicardModel(mm)
		if err != nil {
			return o, &usageError{err.Error()}
		}
		pf, _, err := deriveAndLowerWith(pm, meth, nl.options())
		if err != nil {
			return o, err
		}
		po := o
		po.PreviousFixed = true
		for k := 1; k <= steps; k++ {
			sol, err := problem.Solve(pf, msh, po)
			if err != nil {
				return o, err
			}
			po.Initial = sol.X
			if !quiet {
				fmt.Fprintf(stderr, "  picard start %d of %d\n", k, steps)
			}
		}
		o.Initial = po.Initial
		return o, nil
	}
	if *nl.ramp == "" {
		o, err := start(m, lf, opts)
		if err != nil {
			return nil, err
		}
		return problem.Solve(lf, msh, o)
	}
	name, target, err := parseRamp(*nl.ramp)
	if err != nil {
		return nil, err
	}
	c := m.Coef(name)
	if c == nil {
		return nil, usagef("--ramp: the model has no coefficient %q", name)
	}
	low := compiler.LowerExpr(m, c.Sym)
	v0, ok := 0.0, false
	if n, isNum := low[0].(*ir.Num); isNum && len(low) == 1 {
		v0, _ = n.Val.Float64()
		ok = true
	}
	if !ok {
		return nil, usagef("--ramp: coefficient %q is not a constant number", name)
	}
	values, err := problem.Ramp(v0, target, *nl.rampSteps, *nl.rampScale == "log")
	if err != nil {
		return nil, usagef("--ramp: %v", err)
	}
	formAt := func(v float64) (*ir.LoweredForm, error) {
		mm, err := compiler.OverrideCoef(m, name, ir.NewNum(source.Pos{}, new(big.Rat).SetFloat64(v)))
		if err != nil {
			return nil, usagef("--ramp: %v", err)
		}
		lf, _, err := nl.lower(mm, meth)
		return lf, err
	}
	// The first step may start from Picard steps at the first value.
	first, err := formAt(values[0])
	if err != nil {
		return nil, err
	}
	mm0, _ := compiler.OverrideCoef(m, name, ir.NewNum(source.Pos{}, new(big.Rat).SetFloat64(values[0])))
	if opts, err = start(mm0, first, opts); err != nil {
		return nil, err
	}
	each := func(step int, v float64, s *problem.Solution) {
		if !quiet {
			fmt.Fprintf(stderr, "  ramp step %d of %d: %s = %g, %d %s iterations\n", step, len(values), name, v, s.Summary.NonlinearIters, s.Summary.Nonlinear)
		}
	}
	sol, err := problem.Continue(values, formAt, msh, opts, each)
	if err != nil {
		return nil, err
	}
	sol.Summary.Method += fmt.Sprintf(", %s ramped from %g to %g in %d steps", name, v0, target, len(values))
	return sol, nil
}

// parseFreeze reads --freeze: tau, test or tau,test.
func parseFreeze(s string) (compiler.JacobianOptions, error) {
	var o compiler.JacobianOptions
	for _, f := range strings.Split(s, ",") {
		switch strings.TrimSpace(f) {
		case "":
		case "tau":
			o.FreezeTau = true
		case "test":
			o.FreezeTest = true
		default:
			return o, usagef("--freeze %q: use tau, test or tau,test", s)
		}
	}
	return o, nil
}

// parseRamp reads COEF=TARGET.
func parseRamp(s string) (string, float64, error) {
	name, val, ok := strings.Cut(s, "=")
	name = strings.TrimSpace(name)
	if !ok || name == "" {
		return "", 0, usagef("--ramp %q: write COEF=TARGET, e.g. --ramp lambda=3.5", s)
	}
	r, ok := new(big.Rat).SetString(strings.TrimSpace(val))
	if !ok {
		return "", 0, usagef("--ramp %q: the target %q is not a number", s, val)
	}
	v, _ := r.Float64()
	return name, v, nil
}

// nonlinearFailure reports a failed solve: a Newton iteration or a
// continuation step that did not converge, with the iteration history,
// or any other failure as solveError sorts it.
func nonlinearFailure(err error) error {
	var ne *problem.NewtonError
	var ce *problem.ContinuationError
	switch {
	case errors.As(err, &ne) && ne.Err != nil:
		// The linear solver stopped it: its own diagnosis (a singular
		// matrix and why) with the iteration history.
		return solveError(err)
	case errors.As(err, &ce) && errors.As(err, &ne):
		return fmt.Errorf("numerical failure, no result written: the continuation failed at its step %d (%g): %w", ce.Step, ce.Value, ne)
	case errors.As(err, &ne):
		return fmt.Errorf("numerical failure, no result written: %w", ne)
	case errors.As(err, &ce):
		return solveError(ce.Err)
	}
	return solveError(err)
}

// cmdJacobian runs the Taylor test of a nonlinear model's Jacobian.
func cmdJacobian(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("jacobian", "MODEL [flags]", "Check the derived Jacobian of a nonlinear MODEL against its residual form: at a\nrandom state u and direction δ, the Taylor remainder ‖F(u + εδ) − F(u) − εJδ‖\nmust fall as ε² (as ε where the Jacobian is approximated with --freeze), and\nJδ must match the central difference of F. Exit status 1 when the exact\nJacobian's remainder falls at an order below 1.8.")
	method := fs.String("method", "", "galerkin, supg, gls, vms, a comma list, or all (default: the model's methods)")
	meshSpec := fs.String("mesh", "", "mesh spec or .vtu file (default: a small mesh of the model's dimension: 16 intervals, 4×4 cells, 2×2×2 cells)")
	freeze := fs.String("freeze", "", "check the Jacobian with tau, test or tau,test frozen")
	seed := fs.Uint64("seed", 1, "seed of the random state and direction")
	scale := fs.Float64("scale", 1, "the random state's dof values are uniform in [−scale, scale]")
	pos, err := parseArgs(fs, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("jacobian takes one model")
	}
	if !(*scale > 0) || math.IsInf(*scale, 0) {
		return usagef("--scale %g: give a positive number", *scale)
	}
	m, err := loadModel(pos[0])
	if err != nil {
		return err
	}
	if !m.Nonlinear() {
		return usagef("model %s is linear in its unknowns: it has no Jacobian to check (its matrix is the operator itself)", m.Name)
	}
	methods, err := methodsOf(m, *method)
	if err != nil {
		return err
	}
	// The check is of the derived Jacobian: the recovered second
	// derivatives of P1 residuals, which J holds fixed by design (a listed
	// approximation), are left out, so the exact Jacobian's remainder
	// falls at order 2.
	noRecover := false
	nl := &nonlinearFlags{method: new(string), freeze: freeze, recover: &noRecover}
	*nl.method = "newton"
	nl.maxIter, nl.tol = new(int), new(float64)
	if err := nl.check(fs); err != nil {
		return err
	}
	spec := *meshSpec
	if spec == "" {
		tensor := m.Unknowns[0].Element.Family == ir.TensorProduct
		spec = map[int]string{1: "span:0,1:16", 2: "span:0,1,0,1:4x4:" + map[bool]string{false: "tri", true: "quad"}[tensor],
			3: "span:0,1,0,1,0,1:2x2x2:" + map[bool]string{false: "tet", true: "hex"}[tensor]}[m.Dim]
	}
	msh, spec, err := buildMesh(m, spec)
	if err != nil {
		return err
	}
	failed := false
	for k, meth := range methods {
		lf, _, err := nl.lower(m, meth)
		if err != nil {
			return err
		}
		if err := problem.CheckMesh(lf, msh); err != nil {
			return meshFitError(m, err)
		}
		jc, err := problem.CheckJacobian(lf, msh, problem.JacobianCheckOptions{Seed: *seed, Scale: *scale})
		if err != nil {
			return fmt.Errorf("jacobian check failed: %w", err)
		}
		if k > 0 {
			fmt.Fprintln(stdout)
		}
		d, _ := compiler.DeriveWith(m, []compiler.Method{meth}, nl.options())
		approx := d.Forms[0].Jacobian.Approximations
		fmt.Fprintf(stdout, "jacobian of %s, method %s, on %s (%d dofs): random state and direction, seed %d\n", m.Name, meth, spec, jc.Dofs, jc.Seed)
		fmt.Fprintf(stdout, "  %-10s  %-24s  %s\n", "ε", "‖F(u+εδ) − F(u) − εJδ‖", "order")
		for i, r := range jc.Rows {
			order := ""
			if i > 0 {
				order = fmt.Sprintf("%.2f", r.Order)
			}
			note := ""
			if r.Remainder <= 100*r.Floor {
				note = "  (round-off)"
			}
			fmt.Fprintf(stdout, "  %-10.3e  %-24.3e  %s%s\n", r.Eps, r.Remainder, order, note)
		}
		fmt.Fprintf(stdout, "  central difference: ‖(F(u+εδ) − F(u−εδ))/2ε − Jδ‖/‖Jδ‖ = %.2e at ε = %.3e\n", jc.CentralDiff, jc.Rows[len(jc.Rows)-1].Eps)
		switch {
		case len(approx) > 0:
			fmt.Fprintf(stdout, "  remainder order %.2f: the Jacobian is approximated (%d approximation(s); order 1 expected)\n", jc.Order, len(approx))
		case math.IsInf(jc.Order, 1):
			fmt.Fprintf(stdout, "  the remainder is round-off at every ε: F is linear along δ and J reproduces it\n")
		case jc.Order >= 1.8:
			fmt.Fprintf(stdout, "  remainder order %.2f: J is the derivative of F\n", jc.Order)
		default:
			fmt.Fprintf(stdout, "  remainder order %.2f: J is NOT the derivative of F\n", jc.Order)
			failed = true
		}
	}
	if failed {
		return fmt.Errorf("jacobian check failed: the Taylor remainder does not fall at order 2")
	}
	return nil
}
