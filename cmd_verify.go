package main

import (
	"encoding/json"
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
	"github.com/formwright/formwright/runtime/output"
	"github.com/formwright/formwright/runtime/plot"
	"github.com/formwright/formwright/runtime/problem"
)

// verifyLevel is one mesh of a convergence study.
type verifyLevel struct {
	N    int     `json:"n"`
	H    float64 `json:"h"`
	Dofs int     `json:"dofs"`
	L2   float64 `json:"l2_error"`
	H1   float64 `json:"h1_error"`
	// Orders against the previous level (0 on the first).
	OrderL2 float64 `json:"l2_order"`
	OrderH1 float64 `json:"h1_order"`
}

type verifyMethod struct {
	Method     string        `json:"method"`
	Field      string        `json:"field"`
	Element    string        `json:"element"`
	ExpectedL2 float64       `json:"expected_l2_order"`
	ExpectedH1 float64       `json:"expected_h1_order"`
	CheckH1    bool          `json:"h1_checked"`
	Levels     []verifyLevel `json:"levels"`
	Pass       bool          `json:"pass"`
}

type sweepRow struct {
	Peclet float64 `json:"peclet"`
	Value  float64 `json:"coefficient"`
	L2     float64 `json:"l2_error"`
	H1     float64 `json:"h1_error"`
}

type sweepMethod struct {
	Method string     `json:"method"`
	Rows   []sweepRow `json:"rows"`
}

type verifyReport struct {
	Schema  string         `json:"schema"`
	Model   string         `json:"model"`
	Exact   []string       `json:"exact"`
	Sources []string       `json:"sources"`
	Tol     float64        `json:"tol"`
	Methods []verifyMethod `json:"methods"`
	Sweep   []sweepMethod  `json:"sweep,omitempty"`
	Failed  []string       `json:"failed"`
}

// convergenceError is a failed order check: exit status 1.
type convergenceError struct{ msgs []string }

func (e *convergenceError) Error() string {
	return "convergence check failed:\n  " + strings.Join(e.msgs, "\n  ")
}

// studyMesh is the mesh of level l: n cells per unit length.
func studyMesh(m *compiler.Model, pattern string, n int) (*mesh.Mesh, error) {
	var spec string
	switch m.Dim {
	case 1:
		spec = fmt.Sprintf("interval:0,1:%d", n)
	case 2:
		spec = fmt.Sprintf("rect:0,1,0,1:%dx%d:%s", n, n, pattern)
	default:
		spec = fmt.Sprintf("box:0,1,0,1,0,1:%dx%dx%d:%s", n, n, n, pattern)
	}
	return mesh.Load(spec)
}

// cmdVerify runs a manufactured-solution convergence study.
func cmdVerify(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("verify", flag.ContinueOnError)
	exactFlag := fs.String("exact", "", "manufactured solution, one expression per unknown separated by ';' (default: a smooth non-polynomial function, printed)")
	sourceFlag := fs.String("source", "", "use this source instead of the derived one (to check a hand-derived source)")
	levels := fs.Int("levels", 4, "number of meshes, each twice as fine as the last")
	base := fs.Int("base", 0, "cells per unit length on the coarsest mesh (default 8 in 1D, 4 in 2D, 2 in 3D)")
	method := fs.String("method", "", "methods to verify: galerkin, supg, gls, vms, a comma list, or all (default: the model's)")
	pattern := fs.String("pattern", "", "cell pattern: tri, tri-flip, crossed, quad (2D), tet, hex (3D) (default: by element)")
	tol := fs.Float64("tol", 0.2, "allowed shortfall of the observed order on the finest pair")
	asJSON := fs.Bool("json", false, "print the report as JSON")
	plotPath := fs.String("plot", "", "write a log-log convergence plot (PNG)")
	sweep := fs.String("sweep-pe", "", "also sweep the element Péclet number 0.01…1000 by setting this constant diffusivity coefficient")
	speed := fs.Float64("speed", 1, "advection speed |a| used to turn Péclet numbers into diffusivities in --sweep-pe")
	quiet := fs.Bool("quiet", false, "no progress on standard error")
	check := fs.Bool("check", true, "fail (exit 1) when an order falls short; --check=false only reports")
	until := fs.Float64("until", 0, "transient models: compare with the exact solution at this time")
	steps0 := fs.Int("steps", 4, "transient models: backward Euler steps on the coarsest mesh; each refinement multiplies them by 2^(k+1), so that Δt ∝ h^(k+1)")
	pos, err := parseArgs(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return &usageError{"verify takes one model"}
	}
	if *levels < 2 || *levels > 8 {
		return &usageError{"--levels must be between 2 and 8"}
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
	methods, err := parseMethods(*method)
	if err != nil {
		return err
	}
	if methods == nil {
		methods = m.Methods
	}
	if len(methods) == 0 {
		methods = []compiler.Method{compiler.Galerkin}
	}
	for _, meth := range methods {
		if _, err := pickMethod(m, meth.String()); err != nil {
			return err
		}
	}
	exactSrc := compiler.DefaultExact(m)
	if *exactFlag != "" {
		exactSrc = strings.Split(*exactFlag, ";")
	}
	if len(exactSrc) != len(m.Unknowns) {
		return &usageError{fmt.Sprintf("--exact gives %d expressions for %d unknowns (separate them with ';')", len(exactSrc), len(m.Unknowns))}
	}
	var exact []ir.Expr
	for i, s := range exactSrc {
		e, errs := m.ParseExpr("--exact", strings.TrimSpace(s))
		if len(errs) > 0 {
			return &inputError{errs, map[string][]byte{"--exact": []byte(strings.TrimSpace(s))}}
		}
		if e.Rank() != m.Unknowns[i].Rank {
			return &usageError{fmt.Sprintf("--exact: the solution for %s must be a %s", m.Unknowns[i].Name, map[int]string{0: "scalar", 1: "vector"}[m.Unknowns[i].Rank])}
		}
		exact = append(exact, e)
	}
	var sources []ir.Expr
	if *sourceFlag != "" {
		if len(m.Equations) != 1 {
			return &usageError{"--source applies to single-equation models"}
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
	rep := verifyReport{Schema: "formwright.verify/1", Model: m.Name, Tol: *tol, Failed: []string{}}
	for i := range exact {
		rep.Exact = append(rep.Exact, syntaxOf(compiler.Simplify(exact[i], m.Dim)))
		rep.Sources = append(rep.Sources, syntaxOf(mf.Sources[i]))
	}
	if *pattern == "" {
		switch {
		case m.Dim == 2 && m.Unknowns[0].Element.Family == ir.TensorProduct:
			*pattern = "quad"
		case m.Dim == 2:
			*pattern = "tri"
		case m.Unknowns[0].Element.Family == ir.TensorProduct:
			*pattern = "hex"
		default:
			*pattern = "tet"
		}
	}
	n0 := *base
	if n0 == 0 {
		n0 = map[int]int{1: 8, 2: 4, 3: 2}[m.Dim]
	}
	// Exact solution of the first unknown as a function, for the norms.
	exactFns := make([]problem.Exact, len(exact))
	for i := range exact {
		fn, err := problem.ExactFromExprs(m.Dim, compiler.LowerExpr(m, exact[i]))
		if err != nil {
			return &usageError{fmt.Sprintf("--exact: %v", err)}
		}
		exactFns[i] = fn
	}
	if !*asJSON {
		fmt.Fprintf(stdout, "verify %s with the manufactured solution\n", m.Name)
		for i, u := range m.Unknowns {
			fmt.Fprintf(stdout, "  %s = %s\n  source f = %s\n", u.Name, rep.Exact[i], rep.Sources[i])
		}
	}
	var curves []plot.Curve
	split := compiler.SplitOperator(m)
	for _, meth := range methods {
		lf, err := lowerModel(mf.Model, meth)
		if err != nil {
			return err
		}
		transient := problem.IsTransient(lf)
		if transient && !(*until > 0) {
			return &usageError{fmt.Sprintf("model %s is transient: give the comparison time with --until T", m.Name)}
		}
		if transient && *steps0 < 1 {
			return &usageError{"--steps must be at least 1"}
		}
		kmax := 1
		for _, u := range m.Unknowns {
			kmax = max(kmax, u.Element.Degree)
		}
		vms := make([]verifyMethod, len(m.Unknowns))
		finestNorm := make([]float64, len(m.Unknowns)) // ‖u*‖ on the latest mesh
		for i, u := range m.Unknowns {
			l2, h1, checkH1 := expectedOrders(m, split, i)
			vms[i] = verifyMethod{Method: meth.String(), Field: u.Name, Element: u.Element.String(), ExpectedL2: l2, ExpectedH1: h1, CheckH1: checkH1, Pass: true}
		}
		for l := 0; l < *levels; l++ {
			n := n0 << l
			msh, err := studyMesh(m, *pattern, n)
			if err != nil {
				return &usageError{err.Error()}
			}
			if !*quiet {
				fmt.Fprintf(stderr, "  %s: level %d, %d cells\n", meth, l+1, msh.NumCells())
			}
			var sol *problem.Solution
			tEnd := 0.0
			if transient {
				// Δt ∝ h^(k+1) keeps the first-order time error below the
				// spatial L² error O(h^(k+1)).
				steps := *steps0 << (uint(kmax+1) * uint(l))
				if steps > 100000 {
					return &usageError{fmt.Sprintf("level %d would need %d time steps: use fewer --levels or a smaller --steps", l+1, steps)}
				}
				tEnd = *until
				sol, err = problem.SolveTransient(lf, msh, problem.TransientOptions{Step: tEnd / float64(steps), Steps: steps, Initial: exactFns})
			} else {
				opts := problem.Options{}
				kernelPath(lf, msh, &opts)
				sol, err = problem.Solve(lf, msh, opts)
			}
			if err != nil {
				var ue *usageError
				if se := solveError(err); !errors.As(se, &ue) {
					return fmt.Errorf("%s, level %d (%d cells): %w", meth, l+1, msh.NumCells(), se)
				}
				return solveError(err)
			}
			zero := *sol
			zero.X = make([]float64, len(sol.X))
			for i := range vms {
				vm := &vms[i]
				// An unknown with a mean condition is defined up to a
				// constant: its errors are measured modulo constants.
				norms := (*problem.Solution).ErrorNorms
				for _, mc := range lf.Means {
					if mc.Unknown == i {
						norms = (*problem.Solution).ErrorNormsUpToConstant
					}
				}
				finestNorm[i], _ = norms(&zero, i, exactFns[i], tEnd, 0)
				l2, h1 := norms(sol, i, exactFns[i], tEnd, 0)
				lv := verifyLevel{N: n, H: 1 / float64(n), Dofs: sol.Summary.Dofs, L2: l2, H1: h1}
				if l > 0 {
					prev := vm.Levels[l-1]
					lv.OrderL2 = math.Log(prev.L2/l2) / math.Log(prev.H/lv.H)
					lv.OrderH1 = math.Log(prev.H1/h1) / math.Log(prev.H/lv.H)
				}
				vm.Levels = append(vm.Levels, lv)
			}
		}
		for i := range vms {
			vm := &vms[i]
			last := vm.Levels[len(vm.Levels)-1]
			// An order is meaningless if the error is as large as the
			// solution: e.g. the spurious pressure modes of an unstable
			// pair, which shrink at the right rate from a huge size
			// (common practice, no source).
			if last.L2 >= finestNorm[i] {
				vm.Pass = false
				rep.Failed = append(rep.Failed, fmt.Sprintf("%s: %s L2 error %.3g on the finest mesh is not smaller than the solution itself (%.3g)", meth, vm.Field, last.L2, finestNorm[i]))
			}
			if last.OrderL2 < vm.ExpectedL2-*tol || math.IsNaN(last.OrderL2) {
				vm.Pass = false
				rep.Failed = append(rep.Failed, fmt.Sprintf("%s: %s L2 order %.2f on the finest pair, expected %.0f (tolerance %.2f)", meth, vm.Field, last.OrderL2, vm.ExpectedL2, *tol))
			}
			if vm.CheckH1 && (last.OrderH1 < vm.ExpectedH1-*tol || math.IsNaN(last.OrderH1)) {
				vm.Pass = false
				rep.Failed = append(rep.Failed, fmt.Sprintf("%s: %s H1 order %.2f on the finest pair, expected %.0f (tolerance %.2f)", meth, vm.Field, last.OrderH1, vm.ExpectedH1, *tol))
			}
			rep.Methods = append(rep.Methods, *vm)
			if !*asJSON {
				printTable(stdout, *vm)
			}
			var hs, e2, e1 []float64
			for _, lv := range vm.Levels {
				hs, e2, e1 = append(hs, lv.H), append(e2, lv.L2), append(e1, lv.H1)
			}
			label := meth.String()
			if len(vms) > 1 {
				label += " " + vm.Field
			}
			curves = append(curves, plot.Curve{Method: label, Norm: "L2", H: hs, Err: e2})
			if vm.CheckH1 {
				curves = append(curves, plot.Curve{Method: label, Norm: "H1", H: hs, Err: e1})
			}
		}
	}
	if *sweep != "" {
		sw, err := peSweep(m, mf, methods, *sweep, *speed, *pattern, n0<<(*levels-1), stdout, *asJSON)
		if err != nil {
			return err
		}
		rep.Sweep = sw
	}
	if *plotPath != "" {
		k := float64(m.Unknowns[0].Element.Degree)
		if err := plot.Convergence(*plotPath, curves, plot.ConvOptions{Title: "convergence: " + m.Name, Orders: []float64{k, k + 1}, Rates: true}); err != nil {
			return fmt.Errorf("plot: %w", err)
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
		return &convergenceError{rep.Failed}
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

// expectedOrders gives the orders verify expects for unknown i with
// elements of degree k: L² k+1 and H¹ k when its own equation has a
// second-order part (Ciarlet 1978); L² k and no H¹ check when it has none,
// as for the pressure of an equal-order stabilised flow pair (Hughes,
// Franca & Balestra 1986) — REFERENCES.md.
func expectedOrders(m *compiler.Model, split []compiler.Split, i int) (l2, h1 float64, checkH1 bool) {
	k := float64(m.Unknowns[i].Element.Degree)
	for _, s := range split {
		if s.For == i && s.Parts[compiler.Diffusive] != nil {
			return k + 1, k, true
		}
	}
	return k, 0, false
}

func printTable(w io.Writer, vm verifyMethod) {
	status := "ok"
	if !vm.Pass {
		status = "FAILED"
	}
	h1 := fmt.Sprintf("H1 %.0f", vm.ExpectedH1)
	if !vm.CheckH1 {
		h1 = "H1 not checked"
	}
	fmt.Fprintf(w, "\n%s, %s %s (expected orders: L2 %.0f, %s) %s\n", vm.Method, vm.Field, vm.Element, vm.ExpectedL2, h1, status)
	fmt.Fprintf(w, "  %10s %8s %12s %6s %12s %6s\n", "h", "dofs", "L2 error", "order", "H1 error", "order")
	for i, lv := range vm.Levels {
		o2, o1 := "", ""
		if i > 0 {
			o2, o1 = fmt.Sprintf("%.2f", lv.OrderL2), fmt.Sprintf("%.2f", lv.OrderH1)
		}
		fmt.Fprintf(w, "  %10.4g %8d %12.4e %6s %12.4e %6s\n", lv.H, lv.Dofs, lv.L2, o2, lv.H1, o1)
	}
}

// peSweep solves on one mesh for element Péclet numbers 0.01…1000, setting
// the named diffusivity to κ = |a| h / (2 Pe).
func peSweep(m *compiler.Model, mf *compiler.Manufactured, methods []compiler.Method, coef string, speed float64, pattern string, n int, w io.Writer, quiet bool) ([]sweepMethod, error) {
	msh, err := studyMesh(m, pattern, n)
	if err != nil {
		return nil, &usageError{err.Error()}
	}
	h := 1 / float64(n)
	if !quiet {
		fmt.Fprintf(w, "\nelement Péclet sweep on the %d-per-unit mesh (h = %.4g), %s = |a| h/(2 Pe) with |a| = %g\n", n, h, coef, speed)
	}
	var out []sweepMethod
	for _, meth := range methods {
		sm := sweepMethod{Method: meth.String()}
		for e := -2.0; e <= 3.0; e += 0.5 {
			pe := math.Pow(10, e)
			kv := speed * h / (2 * pe)
			val := ir.NewNum(source.Pos{}, new(big.Rat).SetFloat64(kv))
			mm, err := compiler.OverrideCoef(m, coef, val)
			if err != nil {
				return nil, &usageError{"--sweep-pe: " + err.Error()}
			}
			// The manufactured data depend on the coefficient: redo them.
			mf2, err := compiler.Manufacture(mm, mf.Exact, nil)
			if err != nil {
				return nil, &usageError{err.Error()}
			}
			lf, err := lowerModel(mf2.Model, meth)
			if err != nil {
				return nil, err
			}
			opts := problem.Options{}
			kernelPath(lf, msh, &opts)
			sol, err := problem.Solve(lf, msh, opts)
			if err != nil {
				return nil, solveError(err)
			}
			// The exact solution may involve the swept coefficient.
			ex, err := problem.ExactFromExprs(m.Dim, compiler.LowerExpr(mm, mf.Exact[0]))
			if err != nil {
				return nil, &usageError{err.Error()}
			}
			l2, h1 := sol.ErrorNorms(0, ex, 0, 0)
			sm.Rows = append(sm.Rows, sweepRow{Peclet: pe, Value: kv, L2: l2, H1: h1})
		}
		if !quiet {
			fmt.Fprintf(w, "%s\n  %10s %12s %12s %12s\n", meth, "Pe_h", coef, "L2 error", "H1 error")
			for _, r := range sm.Rows {
				fmt.Fprintf(w, "  %10.3g %12.4e %12.4e %12.4e\n", r.Peclet, r.Value, r.L2, r.H1)
			}
		}
		out = append(out, sm)
	}
	return out, nil
}
