package study

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/problem"
)

// SweepRow is one element Péclet number of a sweep.
type SweepRow struct {
	Peclet float64 `json:"peclet"`
	Value  float64 `json:"coefficient"`
	L2     float64 `json:"l2_error"`
	H1     float64 `json:"h1_error"`
}

// SweepMethod is the sweep of one method.
type SweepMethod struct {
	Method string     `json:"method"`
	Rows   []SweepRow `json:"rows"`
}

// SweepConfig describes a sweep of the element Péclet number Pe_h =
// |a| h/(2κ) on one mesh, by setting a constant diffusivity κ.
type SweepConfig struct {
	Dim     int
	Methods []string
	Level   Level
	// Speed is the advection speed |a| that turns Pe_h into κ.
	Speed float64
	// FormAt returns the lowered form of method m with the swept
	// diffusivity set to kappa, and the exact solution of the first field
	// at that value (it may involve the coefficient).
	FormAt func(method string, kappa float64) (*ir.LoweredForm, []ir.Expr, error)
	Solve  problem.Options
	// SolveFunc, if not nil, solves in place of problem.Solve (see
	// Config.SolveFunc).
	SolveFunc SolveFunc
}

// PecletNumbers are the element Péclet numbers of a sweep: 10^e for
// e = −2, −1.5, …, 3, from the diffusive to the advective limit.
func PecletNumbers() []float64 {
	var out []float64
	for e := -2.0; e <= 3.0; e += 0.5 {
		out = append(out, math.Pow(10, e))
	}
	return out
}

// Sweep solves each method at every element Péclet number of
// PecletNumbers, setting κ = |a| h/(2 Pe_h), and returns the errors of the
// first field against its exact solution.
func Sweep(cfg SweepConfig) ([]SweepMethod, error) {
	var out []SweepMethod
	for _, meth := range cfg.Methods {
		sm := SweepMethod{Method: meth}
		for _, pe := range PecletNumbers() {
			kappa := cfg.Speed * cfg.Level.H / (2 * pe)
			form, exactExprs, err := cfg.FormAt(meth, kappa)
			if err != nil {
				return nil, err
			}
			solve := cfg.SolveFunc
			if solve == nil {
				solve = problem.Solve
			}
			sol, err := solve(form, cfg.Level.Mesh, cfg.Solve)
			if err != nil {
				return nil, fmt.Errorf("%s at element Péclet number %g: %w", meth, pe, err)
			}
			ex, err := problem.ExactFromExprs(cfg.Dim, exactExprs)
			if err != nil {
				return nil, err
			}
			l2, h1 := sol.ErrorNorms(0, ex, 0, 0)
			sm.Rows = append(sm.Rows, SweepRow{Peclet: pe, Value: kappa, L2: l2, H1: h1})
		}
		out = append(out, sm)
	}
	return out, nil
}
