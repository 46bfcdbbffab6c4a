package problem

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/quadrature"
	"github.com/formwright/formwright/runtime/tape"
)

// Exact is an exact solution of one field: Eval writes, at point x (length
// Dim) and time t, the component values into u (length Components) and
// their gradients into grad (grad[c*Dim+k] = ∂u_c/∂x_k).
type Exact func(x []float64, t float64, u, grad []float64)

// ExactFromExprs makes an Exact from lowered scalar expressions of x and t,
// one per component. Gradients come from the same tape by forward-mode
// differentiation (tape.Program.EvalGrad), so no derivative has to be
// written by hand. The returned function is not safe for concurrent use.
func ExactFromExprs(dim int, comps []ir.Expr) (Exact, error) {
	slots := &tape.Slots{}
	p, err := tape.Compile(comps, slots)
	if err != nil {
		return nil, err
	}
	if len(slots.Previous()) > 0 || func() bool {
		for _, e := range comps {
			if tape.ExprDeps(e)&tape.DepCell != 0 {
				return true
			}
		}
		return false
	}() {
		return nil, fmt.Errorf("problem: an exact solution may depend on x and t only")
	}
	env := make([]float64, slots.Len())
	stack := make([]float64, p.DualStackSize())
	g3 := make([]float64, 3*len(comps))
	return func(x []float64, t float64, u, grad []float64) {
		copy(env[tape.SlotX:tape.SlotX+dim], x[:dim])
		env[tape.SlotT] = t
		p.EvalGrad(env, u, g3, stack)
		for c := range comps {
			copy(grad[c*dim:(c+1)*dim], g3[3*c:3*c+dim])
		}
	}, nil
}

// ErrorNorms returns the L² norm and the H¹ seminorm of u − u_h for field
// (all components together: ‖u − u_h‖² = Σ_c ∫ (u_c − u_h,c)²), computed by
// quadrature of degree 2k+3 (k the field's element degree; 0 < degree
// overrides), high enough that the quadrature error is negligible next to
// the discretisation error of degree-k elements. t is the time passed to
// exact.
func (s *Solution) ErrorNorms(field int, exact Exact, t float64, degree int) (l2, h1 float64) {
	e2, g2, _, _ := s.errorIntegrals(field, exact, t, degree)
	return math.Sqrt(e2), math.Sqrt(g2)
}

// ErrorNormsUpToConstant is ErrorNorms for a scalar field that is defined
// only up to a constant (one with a mean condition): the L² norm of
// e − ē, e = u − u_h and ē its mean, from ‖e − ē‖² = ∫e² − (∫e)²/|Ω|. The
// H¹ seminorm does not see constants.
func (s *Solution) ErrorNormsUpToConstant(field int, exact Exact, t float64, degree int) (l2, h1 float64) {
	e2, g2, e1, vol := s.errorIntegrals(field, exact, t, degree)
	return math.Sqrt(math.Max(0, e2-e1*e1/vol)), math.Sqrt(g2)
}

// errorIntegrals returns ∫|e|², ∫|∇e|², ∫Σ_c e_c and |Ω| for e = u − u_h.
func (s *Solution) errorIntegrals(field int, exact Exact, t float64, degree int) (e2, g2, e1, vol float64) {
	dm := s.Dofs
	f := dm.Fields[field]
	e := f.Element
	if degree <= 0 {
		degree = 2*e.Degree + 3
	}
	rule := quadrature.For(dm.Cell, degree)
	geom := element.MustLagrange(dm.Cell, 1)
	tab := e.SampleWith(geom, rule)
	pg := tab.NewPointGeometry()
	d, nn, nc := dm.Dim, e.NumNodes(), f.Components
	u, gu := make([]float64, nc), make([]float64, nc*d)
	uh, guh := make([]float64, nc), make([]float64, nc*d)
	var coords []float64
	for c := 0; c < dm.NumCells; c++ {
		coords = s.Mesh.CellCoords(c, coords)
		nodes := dm.CellNodes(field, c)
		for q := 0; q < rule.NumPoints(); q++ {
			if err := tab.Map(coords, q, pg); err != nil {
				return math.NaN(), math.NaN(), math.NaN(), math.NaN()
			}
			phi := tab.Value(q)
			clear(uh)
			clear(guh)
			for comp := 0; comp < nc; comp++ {
				for i := 0; i < nn; i++ {
					xv := s.X[dm.Global(field, comp, int(nodes[i]))]
					uh[comp] += xv * phi[i]
					for k := 0; k < d; k++ {
						guh[comp*d+k] += xv * pg.Grad[i*d+k]
					}
				}
			}
			exact(pg.X, t, u, gu)
			vol += pg.Weight
			for comp := 0; comp < nc; comp++ {
				r := u[comp] - uh[comp]
				e2 += pg.Weight * r * r
				e1 += pg.Weight * r
				for k := 0; k < d; k++ {
					r := gu[comp*d+k] - guh[comp*d+k]
					g2 += pg.Weight * r * r
				}
			}
		}
	}
	return e2, g2, e1, vol
}
