package problem

import (
	"fmt"
	"math"
	"strings"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/quadrature"
	"github.com/formwright/formwright/runtime/sparse"
)

// NonFiniteError is an assembled system with a NaN or an infinity in it,
// traced to where it came from: the cell, the point, and the coefficient
// (its model name and the line that defines it) that is not finite there.
type NonFiniteError struct {
	Cell  int
	Point []float64
	// Name and Pos name the innermost named quantity (a coefficient, τ)
	// whose value is not finite, when one is; Expr is the lowered
	// subexpression otherwise.
	Name  string
	Pos   source.Pos
	Expr  string
	Value float64
}

func (e *NonFiniteError) Error() string {
	if e.Point == nil {
		return fmt.Sprintf("problem: the assembled system is not finite in cell %d, although every coefficient is finite at its quadrature points (a degenerate cell?)", e.Cell)
	}
	what := e.Expr
	if e.Name != "" {
		what = e.Name
		if e.Pos.IsValid() {
			what += " (" + e.Pos.String() + ")"
		}
	}
	pt := make([]string, len(e.Point))
	for i, v := range e.Point {
		pt[i] = fmt.Sprintf("%.4g", v)
	}
	return fmt.Sprintf("problem: %s is %v at (%s) in cell %d, so the assembled system is not finite", what, e.Value, strings.Join(pt, ", "), e.Cell)
}

// systemFinite reports whether A and b hold only finite numbers.
func systemFinite(A *sparse.CSR, b []float64) bool {
	for _, v := range A.Val {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	for _, v := range b {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}

// nonFinite is the error for an assembled system that is not finite: the
// diagnosis of diagnoseNonFinite, or a NonFiniteError without a point when
// every coefficient is finite at the quadrature points.
func (s *system) nonFinite(opts Options) error {
	if err := s.diagnoseNonFinite(opts); err != nil {
		return err
	}
	return &NonFiniteError{Cell: -1}
}

// diagnoseNonFinite finds the first cell whose coefficients are not
// finite at one of its quadrature points and names the culprit. It runs
// only after an assembly produced a NaN or an infinity, so it may be slow.
func (s *system) diagnoseNonFinite(opts Options) error {
	form, m := s.form, s.m
	c := m.Cell
	geom := element.MustLagrange(c, 1)
	rule := quadrature.For(c, form.QuadratureDegree())
	d := m.Dim
	var coefs []ir.Expr
	for _, in := range form.Integrals {
		if in.Domain.Side != "" {
			continue
		}
		for _, t := range in.Bilinear {
			coefs = append(coefs, t.Coef)
		}
		for _, t := range in.Linear {
			coefs = append(coefs, t.Coef)
		}
	}
	phi := make([]float64, geom.NumNodes())
	dphi := make([]float64, geom.NumNodes()*d)
	var buf []float64
	for cell := 0; cell < m.NumCells(); cell++ {
		buf = m.CellCoords(cell, buf)
		env := &pointEnv{time: opts.Time, step: opts.Step, diameter: element.Diameter(c, buf), volume: math.Abs(element.Measure(c, buf)), x: make([]float64, 3)}
		for q := 0; q < rule.NumPoints(); q++ {
			ref := rule.Points[q*d : (q+1)*d]
			geom.Eval(ref, phi)
			geom.EvalGrad(ref, dphi)
			clear(env.x)
			var J, Jinv [9]float64
			for a := range phi {
				for i := 0; i < d; i++ {
					env.x[i] += phi[a] * buf[a*d+i]
					for j := 0; j < d; j++ {
						J[i*d+j] += buf[a*d+i] * dphi[a*d+j]
					}
				}
			}
			element.Invert(d, J[:d*d], Jinv[:d*d])
			for i := 0; i < d; i++ {
				for j := 0; j < d; j++ {
					g := 0.0
					for k := 0; k < d; k++ {
						g += Jinv[k*d+i] * Jinv[k*d+j]
					}
					env.g[i][j] = g
				}
			}
			for _, coef := range coefs {
				if e := culprit(coef, env); e != nil {
					e.Cell, e.Point = cell, append([]float64(nil), env.x[:d]...)
					return e
				}
			}
		}
	}
	return nil
}

// culprit returns the innermost subexpression of e that is not finite at
// env (as a named quantity where one encloses it), or nil.
func culprit(e ir.Expr, env ir.Env) *NonFiniteError {
	v := ir.Eval(e, env)
	if !math.IsNaN(v) && !math.IsInf(v, 0) {
		return nil
	}
	for _, k := range ir.Children(e) {
		if c := culprit(k, env); c != nil {
			if n, ok := e.(*ir.Named); ok && c.Name == "" {
				c.Name, c.Pos = n.Name(), n.P
			}
			return c
		}
	}
	out := &NonFiniteError{Value: v, Expr: ir.Debug(e)}
	if n, ok := e.(*ir.Named); ok {
		out.Name, out.Pos = n.Name(), n.P
	}
	return out
}

// pointEnv is the environment of one quadrature point for ir.Eval: the
// point, the time, the cell quantities and the metric there; iterates
// read as zero.
type pointEnv struct {
	x                            []float64
	time, step, diameter, volume float64
	g                            [3][3]float64
}

func (p *pointEnv) Coord(axis int) float64 { return p.x[axis] }
func (p *pointEnv) Time() float64          { return p.time }
func (p *pointEnv) FieldD(*ir.FieldD) float64 {
	return 0
}
func (p *pointEnv) CellQ(q *ir.CellQ) float64 {
	switch q.Q {
	case ir.Diameter:
		return p.diameter
	case ir.Volume:
		return p.volume
	case ir.TimeStep:
		return p.step
	case ir.Metric:
		return p.g[q.I][q.J]
	}
	return 0
}
