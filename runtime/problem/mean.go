package problem

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/quadrature"
	"github.com/formwright/formwright/runtime/sparse"
)

// meanFix is one mean condition as the solver applies it: the equations
// fix the field only up to a constant, so one dof (pin) is fixed at 0, the
// system is solved, and the field is shifted by the constant that gives
// it the prescribed mean, Σ_i w_i x_i / Σ_i w_i with w_i = ∫_Ω φ_i.
// Fixing one dof replaces that dof's equation; the residual of the
// replaced equation afterwards measures how compatible the data are with
// a free constant (zero when the constant is exactly in the null space).
type meanFix struct {
	field  int
	pin    int       // global dof fixed during the solve
	dofs   []int     // global dofs of the field
	w      []float64 // ∫ φ_i over the domain, for each of dofs
	target float64
}

func newMeanFixes(form *ir.LoweredForm, m *mesh.Mesh, dm *dof.Numbering) ([]meanFix, error) {
	var out []meanFix
	for _, mc := range form.Means {
		if mc.Unknown < 0 || mc.Unknown >= len(dm.Fields) {
			return nil, fmt.Errorf("problem: mean condition on unknown %d of %d", mc.Unknown, len(dm.Fields))
		}
		f := dm.Fields[mc.Unknown]
		if f.Components != 1 {
			return nil, fmt.Errorf("problem: mean condition on %s, which has %d components", f.Name, f.Components)
		}
		for _, d := range form.Dirichlet {
			if d.Unknown == mc.Unknown {
				return nil, fmt.Errorf("problem: %s has both a value condition (on %q) and a mean condition", f.Name, d.Side)
			}
		}
		target := ir.Eval(mc.Value, constEnv{})
		if math.IsNaN(target) || math.IsInf(target, 0) {
			return nil, fmt.Errorf("problem: the mean of %s is not a finite constant", f.Name)
		}
		mf := meanFix{field: mc.Unknown, pin: dm.Global(mc.Unknown, 0, 0), target: target}
		for n := 0; n < f.NumNodes; n++ {
			mf.dofs = append(mf.dofs, dm.Global(mc.Unknown, 0, n))
		}
		w, err := nodeIntegrals(m, dm, mc.Unknown)
		if err != nil {
			return nil, err
		}
		mf.w = w
		out = append(out, mf)
	}
	return out, nil
}

// nodeIntegrals returns ∫_Ω φ_n for every node n of a scalar field, by the
// quadrature of degree 2k+1 for elements of degree k (exact on affine
// cells).
func nodeIntegrals(m *mesh.Mesh, dm *dof.Numbering, field int) ([]float64, error) {
	f := dm.Fields[field]
	e := f.Element
	rule := quadrature.For(dm.Cell, 2*e.Degree+1)
	tab := e.SampleWith(element.MustLagrange(dm.Cell, 1), rule)
	pg := tab.NewPointGeometry()
	w := make([]float64, f.NumNodes)
	var coords []float64
	for c := 0; c < dm.NumCells; c++ {
		coords = m.CellCoords(c, coords)
		nodes := dm.CellNodes(field, c)
		for q := 0; q < rule.NumPoints(); q++ {
			if err := tab.Map(coords, q, pg); err != nil {
				return nil, fmt.Errorf("problem: cell %d: %w", c, err)
			}
			phi := tab.Value(q)
			for i, n := range nodes {
				w[int(n)] += pg.Weight * phi[i]
			}
		}
	}
	return w, nil
}

// shift moves the field to its prescribed mean.
func (mf *meanFix) shift(x []float64) {
	s, vol := 0.0, 0.0
	for i, g := range mf.dofs {
		s += mf.w[i] * x[g]
		vol += mf.w[i]
	}
	c := mf.target - s/vol
	for _, g := range mf.dofs {
		x[g] += c
	}
}

// replacedResidual is |(A x − b)_pin| relative to Σ_j |A_pin,j x_j| + |b_pin|:
// how far the solution is from satisfying the equation that fixing the
// pin replaced.
func (mf *meanFix) replacedResidual(A *sparse.CSR, b, x []float64) float64 {
	r, scale := -b[mf.pin], math.Abs(b[mf.pin])
	for k := A.RowPtr[mf.pin]; k < A.RowPtr[mf.pin+1]; k++ {
		v := A.Val[k] * x[A.Col[k]]
		r += v
		scale += math.Abs(v)
	}
	if scale == 0 {
		return 0
	}
	return math.Abs(r) / scale
}

// constEnv evaluates expressions without leaves (the lowered constant of a
// mean condition).
type constEnv struct{}

func (constEnv) Coord(int) float64         { return math.NaN() }
func (constEnv) Time() float64             { return math.NaN() }
func (constEnv) CellQ(*ir.CellQ) float64   { return math.NaN() }
func (constEnv) FieldD(*ir.FieldD) float64 { return math.NaN() }
