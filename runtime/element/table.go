package element

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/runtime/quadrature"
)

// Table holds an element's basis values, reference gradients and reference
// second derivatives at every point of a quadrature rule, together with the
// same data for the geometry element that defines the map to physical cells.
type Table struct {
	Element  *Element
	Geometry *Element
	// Rule has its points in cell reference coordinates; on a facet table
	// they are the facet rule's points mapped onto the facet, and the
	// weights are scaled by cell.Type.FacetScale (they sum to the measure
	// of the reference facet).
	Rule quadrature.Rule
	// Facet is the local facet of a table made by SampleFacet, else -1.
	Facet int

	// Values[q*NumNodes+i] = φ_i(ξ_q).
	Values []float64
	// Grads[(q*NumNodes+i)*Dim+k] = ∂φ_i/∂ξ_k (ξ_q).
	Grads []float64
	// Hess[((q*NumNodes+i)*Dim+k)*Dim+l] = ∂²φ_i/∂ξ_k∂ξ_l (ξ_q).
	Hess []float64

	// NoHessians makes Map skip the physical second derivatives
	// (PointGeometry.Hess is then left unchanged), for kernels that do not
	// use them.
	NoHessians bool

	geomValues, geomGrads, geomHess []float64
}

// Sample evaluates e at the points of rule, using e itself as the
// geometry element (isoparametric map).
func (e *Element) Sample(rule quadrature.Rule) *Table { return e.SampleWith(e, rule) }

// SampleWith evaluates e at the points of rule, with the map to physical
// cells defined by the nodes of geom (e.g. a P1 geometry for a P2 field on
// straight-sided cells, when only vertex coordinates are at hand). It
// panics if the cells differ.
func (e *Element) SampleWith(geom *Element, rule quadrature.Rule) *Table {
	if geom.Cell != e.Cell || rule.Cell != e.Cell {
		panic(fmt.Sprintf("element: sampling %v with geometry on %v and rule on %v", e.Cell, geom.Cell, rule.Cell))
	}
	t := &Table{Element: e, Geometry: geom, Rule: rule, Facet: -1}
	t.Values, t.Grads, t.Hess = tab(e, rule)
	if geom == e {
		t.geomValues, t.geomGrads, t.geomHess = t.Values, t.Grads, t.Hess
	} else {
		t.geomValues, t.geomGrads, t.geomHess = tab(geom, rule)
	}
	return t
}

func tab(e *Element, rule quadrature.Rule) (v, g, h []float64) {
	nq, n, d := rule.NumPoints(), e.n, e.dim
	v, g, h = make([]float64, nq*n), make([]float64, nq*n*d), make([]float64, nq*n*d*d)
	for q := 0; q < nq; q++ {
		xi := rule.Points[q*d : (q+1)*d]
		e.Eval(xi, v[q*n:(q+1)*n])
		e.EvalGrad(xi, g[q*n*d:(q+1)*n*d])
		e.EvalHess(xi, h[q*n*d*d:(q+1)*n*d*d])
	}
	return v, g, h
}

// SampleFacet evaluates e, with geometry element geom, at the points of
// a rule on the facet reference cell (rule.Cell == e.Cell.FacetType())
// mapped onto local facet f by cell.Type.FacetPoint. On the interval a
// facet is a point: rule is ignored and the table has one point of
// weight 1. Map on the result also fills PointGeometry.Normal, and its
// Weight is the surface weight (see Map).
func (e *Element) SampleFacet(geom *Element, f int, rule quadrature.Rule) *Table {
	c, d := e.Cell, e.dim
	if f < 0 || f >= c.NumFacets() {
		panic(fmt.Sprintf("element: facet %d of a %v", f, c))
	}
	mapped := quadrature.Rule{Cell: c, Degree: rule.Degree}
	if d == 1 {
		mapped.Points, mapped.Weights = make([]float64, 1), []float64{1}
		mapped.Degree = math.MaxInt32
		c.FacetPoint(f, nil, mapped.Points)
	} else {
		if rule.Cell != c.FacetType() {
			panic(fmt.Sprintf("element: facet rule on %v for a facet of a %v", rule.Cell, c))
		}
		nq := rule.NumPoints()
		mapped.Points, mapped.Weights = make([]float64, nq*d), make([]float64, nq)
		scale := c.FacetScale(f)
		for q := 0; q < nq; q++ {
			c.FacetPoint(f, rule.Points[q*(d-1):(q+1)*(d-1)], mapped.Points[q*d:(q+1)*d])
			mapped.Weights[q] = rule.Weights[q] * scale
		}
	}
	t := e.SampleWith(geom, mapped)
	t.Facet = f
	return t
}

// NumPoints is the number of quadrature points.
func (t *Table) NumPoints() int { return t.Rule.NumPoints() }

// Value returns φ_i(ξ_q) for all i (a sub-slice of Values).
func (t *Table) Value(q int) []float64 {
	n := t.Element.n
	return t.Values[q*n : (q+1)*n]
}

// PointGeometry is the physical geometry at one quadrature point, filled in
// place by Table.Map. Create it with Table.NewPointGeometry.
type PointGeometry struct {
	Dim, NumNodes int
	// X is the physical point (Dim).
	X []float64
	// J[i*Dim+j] = ∂x_i/∂ξ_j; JInv[i*Dim+j] = ∂ξ_i/∂x_j.
	J, JInv []float64
	// DetJ = det J; Weight = quadrature weight × |det J|.
	DetJ, Weight float64
	// Grad[i*Dim+k] = ∂φ_i/∂x_k.
	Grad []float64
	// Hess[(i*Dim+k)*Dim+l] = ∂²φ_i/∂x_k∂x_l, including the curvature term of
	// a non-affine map.
	Hess []float64
	// G[i*Dim+j] = Σ_k ∂ξ_k/∂x_i ∂ξ_k/∂x_j; GVec[i] = Σ_j ∂ξ_j/∂x_i.
	G, GVec []float64
	// Normal is the physical outward unit normal (facet tables only).
	Normal []float64

	d2x       []float64 // ∂²x_k/∂ξ_a∂ξ_b, [(k*Dim+a)*Dim+b]
	tmp, tmp2 []float64 // Dim*Dim scratch
}

// NewPointGeometry allocates a PointGeometry sized for t.
func (t *Table) NewPointGeometry() *PointGeometry {
	d, n := t.Element.dim, t.Element.n
	return &PointGeometry{
		Dim: d, NumNodes: n,
		X: make([]float64, d), J: make([]float64, d*d), JInv: make([]float64, d*d),
		Grad: make([]float64, n*d), Hess: make([]float64, n*d*d),
		G: make([]float64, d*d), GVec: make([]float64, d), Normal: make([]float64, d),
		d2x: make([]float64, d*d*d), tmp: make([]float64, d*d), tmp2: make([]float64, d*d),
	}
}

// JacobianError reports a non-positive Jacobian determinant: an inverted
// or degenerate cell.
type JacobianError struct {
	Point int     // quadrature point
	Det   float64 // det J there
}

func (e *JacobianError) Error() string {
	return fmt.Sprintf("element: non-positive Jacobian determinant %g at quadrature point %d (inverted or degenerate cell)", e.Det, e.Point)
}

// Map computes the geometry at quadrature point q of the physical cell whose
// geometry-element nodes have coordinates coords (Geometry.NumNodes()*Dim,
// node-major). It allocates nothing. If det J <= 0 it returns a
// *JacobianError; X, J and DetJ are filled, the rest is not.
//
// On a facet table (SampleFacet) it also fills Normal, the outward unit
// normal n = J^{-T}N/|J^{-T}N| for the reference normal N, and Weight is
// the surface weight w_q |det J| |J^{-T}N| (Nanson's formula
// n da = det J J^{-T} N dA; e.g. G. A. Holzapfel, Nonlinear Solid Mechanics
// (2000), ch. 2), so Σ_q Weight f(x_q) approximates ∫_facet f ds.
func (t *Table) Map(coords []float64, q int, out *PointGeometry) error {
	ge, d := t.Geometry, t.Element.dim
	ng := ge.n
	if len(coords) < ng*d {
		panic(fmt.Sprintf("element: coords has length %d, need %d", len(coords), ng*d))
	}
	if out.Dim != d || out.NumNodes != t.Element.n {
		panic("element: PointGeometry was made for another table")
	}
	gv := t.geomValues[q*ng : (q+1)*ng]
	gg := t.geomGrads[q*ng*d : (q+1)*ng*d]
	gh := t.geomHess[q*ng*d*d : (q+1)*ng*d*d]
	J, X, d2x := out.J, out.X, out.d2x
	clear(J)
	clear(X)
	clear(d2x)
	for n := 0; n < ng; n++ {
		xn := coords[n*d : (n+1)*d]
		for i := 0; i < d; i++ {
			X[i] += xn[i] * gv[n]
			for j := 0; j < d; j++ {
				J[i*d+j] += xn[i] * gg[n*d+j]
				for b := 0; b < d; b++ {
					d2x[(i*d+j)*d+b] += xn[i] * gh[(n*d+j)*d+b]
				}
			}
		}
	}
	det := Invert(d, J, out.JInv)
	out.DetJ = det
	if !(det > 0) {
		return &JacobianError{Point: q, Det: det}
	}
	out.Weight = t.Rule.Weights[q] * math.Abs(det)
	Ji := out.JInv
	if t.Facet >= 0 {
		N := t.Element.Cell.FacetNormal(t.Facet)
		nn := 0.0
		for i := 0; i < d; i++ {
			s := 0.0
			for k := 0; k < d; k++ {
				s += Ji[k*d+i] * N[k]
			}
			out.Normal[i] = s
			nn += s * s
		}
		nn = math.Sqrt(nn)
		for i := 0; i < d; i++ {
			out.Normal[i] /= nn
		}
		out.Weight *= nn
	}
	for i := 0; i < d; i++ {
		gs := 0.0
		for j := 0; j < d; j++ {
			gs += Ji[j*d+i]
			s := 0.0
			for k := 0; k < d; k++ {
				s += Ji[k*d+i] * Ji[k*d+j]
			}
			out.G[i*d+j] = s
		}
		out.GVec[i] = gs
	}
	n := t.Element.n
	eg := t.Grads[q*n*d : (q+1)*n*d]
	eh := t.Hess[q*n*d*d : (q+1)*n*d*d]
	if d == 2 {
		t.mapBasis2D(out, eg, eh, d2x)
		return nil
	}
	tmp := out.tmp
	for a := 0; a < n; a++ {
		ga := out.Grad[a*d : (a+1)*d]
		for i := 0; i < d; i++ {
			s := 0.0
			for k := 0; k < d; k++ {
				s += Ji[k*d+i] * eg[a*d+k]
			}
			ga[i] = s
		}
		if t.NoHessians {
			continue
		}
		// mm = d²N/dξ² − Σ_k (dN/dx_k) d²x_k/dξ²; tmp = mm J^{-1}
		ha := eh[a*d*d : (a+1)*d*d]
		mm := out.tmp2
		for pr := 0; pr < d*d; pr++ {
			m := ha[pr]
			for k := 0; k < d; k++ {
				m -= ga[k] * d2x[k*d*d+pr]
			}
			mm[pr] = m
		}
		for p := 0; p < d; p++ {
			for j := 0; j < d; j++ {
				s := 0.0
				for r := 0; r < d; r++ {
					s += mm[p*d+r] * Ji[r*d+j]
				}
				tmp[p*d+j] = s
			}
		}
		// Hess = J^{-T} tmp
		h := out.Hess[a*d*d : (a+1)*d*d]
		for i := 0; i < d; i++ {
			for j := 0; j < d; j++ {
				s := 0.0
				for p := 0; p < d; p++ {
					s += Ji[p*d+i] * tmp[p*d+j]
				}
				h[i*d+j] = s
			}
		}
	}
	return nil
}

// mapBasis2D is the basis part of Map for d = 2, written out: the same
// products in the same order as the general loops (K = J⁻¹):
// ∇φ = Kᵀ∇̂φ, m = Ĥφ − Σ_k ∂φ/∂x_k ∂²x_k/∂ξ², Hφ = Kᵀ m K.
func (t *Table) mapBasis2D(out *PointGeometry, eg, eh, d2x []float64) {
	K := out.JInv[:4:4]
	k00, k01, k10, k11 := K[0], K[1], K[2], K[3]
	n := t.Element.n
	grad := out.Grad[: 2*n : 2*n]
	eg = eg[: 2*n : 2*n]
	for a := 0; a < n; a++ {
		e0, e1 := eg[2*a], eg[2*a+1]
		g0 := k00*e0 + k10*e1
		g1 := k01*e0 + k11*e1
		grad[2*a], grad[2*a+1] = g0, g1
	}
	if t.NoHessians {
		return
	}
	c := d2x[:8:8]
	hess := out.Hess[: 4*n : 4*n]
	eh = eh[: 4*n : 4*n]
	for a := 0; a < n; a++ {
		g0, g1 := grad[2*a], grad[2*a+1]
		h := eh[4*a : 4*a+4 : 4*a+4]
		m00 := h[0] - g0*c[0] - g1*c[4]
		m01 := h[1] - g0*c[1] - g1*c[5]
		m10 := h[2] - g0*c[2] - g1*c[6]
		m11 := h[3] - g0*c[3] - g1*c[7]
		// tmp = m K
		t00 := m00*k00 + m01*k10
		t01 := m00*k01 + m01*k11
		t10 := m10*k00 + m11*k10
		t11 := m10*k01 + m11*k11
		// H = Kᵀ tmp
		o := hess[4*a : 4*a+4 : 4*a+4]
		o[0] = k00*t00 + k10*t10
		o[1] = k00*t01 + k10*t11
		o[2] = k01*t00 + k11*t10
		o[3] = k01*t01 + k11*t11
	}
}

// Invert writes the inverse of the d×d matrix a (d <= 3, row-major) into
// inv by the adjugate and returns det a. If det a == 0, inv is left
// unchanged. It does not allocate; the interpreted kernels use it too, so
// both paths invert Jacobians with the same arithmetic.
func Invert(d int, a, inv []float64) float64 {
	switch d {
	case 1:
		if a[0] != 0 {
			inv[0] = 1 / a[0]
		}
		return a[0]
	case 2:
		det := a[0]*a[3] - a[1]*a[2]
		if det != 0 {
			inv[0], inv[1], inv[2], inv[3] = a[3]/det, -a[1]/det, -a[2]/det, a[0]/det
		}
		return det
	case 3:
		c00 := a[4]*a[8] - a[5]*a[7]
		c01 := a[5]*a[6] - a[3]*a[8]
		c02 := a[3]*a[7] - a[4]*a[6]
		det := a[0]*c00 + a[1]*c01 + a[2]*c02
		if det != 0 {
			r := 1 / det
			inv[0] = c00 * r
			inv[1] = (a[2]*a[7] - a[1]*a[8]) * r
			inv[2] = (a[1]*a[5] - a[2]*a[4]) * r
			inv[3] = c01 * r
			inv[4] = (a[0]*a[8] - a[2]*a[6]) * r
			inv[5] = (a[2]*a[3] - a[0]*a[5]) * r
			inv[6] = c02 * r
			inv[7] = (a[1]*a[6] - a[0]*a[7]) * r
			inv[8] = (a[0]*a[4] - a[1]*a[3]) * r
		}
		return det
	}
	panic(fmt.Sprintf("element: %d-dimensional Jacobian", d))
}
