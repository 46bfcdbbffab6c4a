package problem

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/mesh"
)

// This file lets another engine (runtime/distributed) solve a form the way
// Solve does and hand back its result as a Solution: the same dof
// numbering, the same value and mean conditions, the same fields.

// DofMap numbers the form's unknowns on m as Solve does (runtime/dof, with
// the elements of kernel.LayoutFor).
func DofMap(form *ir.LoweredForm, m *mesh.Mesh) (*dof.Numbering, error) { return dofMap(form, m) }

// ValueConditions evaluates the form's value conditions at time t at the
// boundary nodes, as Solve does: fixed[i] marks a prescribed dof of dm and
// values[i] is its value (later conditions win where sides meet). Mean
// conditions are not included (see MeanConditions).
func ValueConditions(form *ir.LoweredForm, m *mesh.Mesh, dm *dof.Numbering, t float64) (fixed []bool, values []float64, err error) {
	return dirichlet(form, m, dm, t)
}

// MeanCondition is one mean condition as Solve applies it: Pin is fixed
// at 0 during the solve, and afterwards the field's dofs are shifted by
// Target − Σ w_i x_i / Σ w_i, with Weights[k] = ∫_Ω φ of Dofs[k].
type MeanCondition struct {
	Field   int
	Pin     int
	Dofs    []int
	Weights []float64
	Target  float64
}

// MeanConditions returns the form's mean conditions on dm, checked as
// Solve checks them.
func MeanConditions(form *ir.LoweredForm, m *mesh.Mesh, dm *dof.Numbering) ([]MeanCondition, error) {
	fixes, err := newMeanFixes(form, m, dm)
	if err != nil {
		return nil, err
	}
	out := make([]MeanCondition, len(fixes))
	for i, f := range fixes {
		out[i] = MeanCondition{Field: f.field, Pin: f.pin, Dofs: f.dofs, Weights: f.w, Target: f.target}
	}
	return out, nil
}

// NewSolution makes the Solution of a form on m from a global dof vector x
// (the numbering of dm, from DofMap) that another engine computed, with
// that engine's summary; it fills the fields, their ranges and, when the
// summary has none, the quadrature (the form's own rule). The solution
// has no Matrix or RHS.
func NewSolution(form *ir.LoweredForm, m *mesh.Mesh, dm *dof.Numbering, x []float64, sum Summary) (*Solution, error) {
	if len(x) != dm.NumDofs {
		return nil, fmt.Errorf("problem: a solution of %d values for %d dofs", len(x), dm.NumDofs)
	}
	sol := &Solution{Form: form, Mesh: m, Dofs: dm, X: x}
	if sum.Quadrature == "" {
		sum.Quadrature = quadratureText(form, m.Cell, 0)
	}
	sum.Ranges = nil
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
	sol.Summary = sum
	return sol, nil
}
