package problem

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/tape"
)

// CellValues evaluates lowered scalar expressions once per cell, at the
// cell's centroid, with the solution as the iterate: values[k][c] is
// expression k on cell c. The expressions may read x, t (the solution's
// time), the time step, the cell quantities, the metric G and the
// solution's values and first derivatives; it is how τ and the element
// Péclet number are shown per cell.
func (s *Solution) CellValues(exprs []ir.Expr, step float64) ([][]float64, error) {
	slots := &tape.Slots{}
	prog, err := tape.Compile(exprs, slots)
	if err != nil {
		return nil, err
	}
	for _, p := range slots.Previous() {
		if int(p.D[0])+int(p.D[1])+int(p.D[2]) > 1 {
			return nil, fmt.Errorf("problem: a per-cell value reads a second derivative of the solution")
		}
	}
	m, dm := s.Mesh, s.Dofs
	c, d := m.Cell, m.Dim
	geom := element.MustLagrange(c, 1)
	ref := c.Centroid(make([]float64, d))
	phi := make([]float64, geom.NumNodes())
	dphi := make([]float64, geom.NumNodes()*d)
	geom.Eval(ref, phi)
	geom.EvalGrad(ref, dphi)
	// Basis values and reference gradients of each field at the centroid.
	fphi := make([][]float64, len(dm.Fields))
	fdphi := make([][]float64, len(dm.Fields))
	for k, f := range dm.Fields {
		fphi[k] = make([]float64, f.Element.NumNodes())
		fdphi[k] = make([]float64, f.Element.NumNodes()*d)
		f.Element.Eval(ref, fphi[k])
		f.Element.EvalGrad(ref, fdphi[k])
	}
	env := make([]float64, slots.Len())
	out := make([]float64, len(exprs))
	stack := make([]float64, prog.StackSize())
	values := make([][]float64, len(exprs))
	for k := range values {
		values[k] = make([]float64, m.NumCells())
	}
	var buf []float64
	var J, Jinv [9]float64
	for cell := 0; cell < m.NumCells(); cell++ {
		buf = m.CellCoords(cell, buf)
		clear(env[:3])
		clear(J[:])
		for a := range phi {
			for i := 0; i < d; i++ {
				env[tape.SlotX+i] += phi[a] * buf[a*d+i]
				for j := 0; j < d; j++ {
					J[i*d+j] += buf[a*d+i] * dphi[a*d+j]
				}
			}
		}
		element.Invert(d, J[:d*d], Jinv[:d*d])
		env[tape.SlotT] = s.Time
		env[tape.SlotStep] = step
		env[tape.SlotCellDiameter] = element.Diameter(c, buf)
		env[tape.SlotCellVolume] = math.Abs(element.Measure(c, buf))
		for i := 0; i < d; i++ {
			for j := 0; j < d; j++ {
				g := 0.0
				for k := 0; k < d; k++ {
					g += Jinv[k*d+i] * Jinv[k*d+j]
				}
				env[tape.SlotG+3*i+j] = g
			}
		}
		for _, p := range slots.Previous() {
			nodes := dm.CellNodes(p.Field, cell)
			v := 0.0
			axis := -1
			for k := 0; k < d; k++ {
				if p.D[k] == 1 {
					axis = k
				}
			}
			for a, n := range nodes {
				x := s.X[dm.Global(p.Field, p.Comp, int(n))]
				if axis < 0 {
					v += fphi[p.Field][a] * x
					continue
				}
				// ∂φ/∂x_axis = Σ_r ∂φ/∂ξ_r (J⁻¹)_{r,axis}
				g := 0.0
				for r := 0; r < d; r++ {
					g += fdphi[p.Field][a*d+r] * Jinv[r*d+axis]
				}
				v += g * x
			}
			env[p.Slot] = v
		}
		prog.Eval(env, out, stack)
		for k := range exprs {
			values[k][cell] = out[k]
		}
	}
	return values, nil
}
