package element

import (
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/quadrature"
)

// ReferenceFacet is the quadrature on local facet f of the reference cell
// c that the facet kernels integrate with (interpreted and generated alike):
// the facet's reference rule of the given degree mapped into the cell's
// reference coordinates by the facet's vertices, with the facet rule's
// weights; the constant tangents ∂ξ/∂s_k of that affine parametrisation;
// and the reference outward normal (not normalised).
type ReferenceFacet struct {
	Rule     quadrature.Rule
	Tangents [2][3]float64
	Normal   [3]float64
}

// NewReferenceFacet builds the ReferenceFacet of local facet f of c with a
// rule of the given degree: the facet's reference rule (quadrature.For on
// the facet cell type; a single point of weight 1 in 1D) mapped into the
// cell by the facet's linear parametrisation ξ(s) = Σ_a N_a(s) V_a over its
// reference vertices V_a.
func NewReferenceFacet(c cell.Type, f, deg int) ReferenceFacet {
	d := c.Dim()
	verts := c.Vertices()
	fv := c.Facets()[f]
	var fd ReferenceFacet
	if d == 1 {
		v := fv[0]
		fd.Rule = quadrature.Rule{Cell: c, Degree: deg, Points: []float64{verts[v]}, Weights: []float64{1}}
		// Facet 0 is x = 1 (normal +x), facet 1 is x = 0 (normal −x).
		fd.Normal[0] = 1
		if verts[v] == 0 {
			fd.Normal[0] = -1
		}
		return fd
	}
	ft := c.FacetType()
	fr := quadrature.For(ft, deg)
	fe := MustLagrange(ft, 1)
	fdim := ft.Dim()
	nq := fr.NumPoints()
	pts := make([]float64, nq*d)
	phi := make([]float64, fe.NumNodes())
	dphi := make([]float64, fe.NumNodes()*fdim)
	for q := 0; q < nq; q++ {
		s := fr.Points[q*fdim : (q+1)*fdim]
		fe.Eval(s, phi)
		for a, v := range fv {
			for k := 0; k < d; k++ {
				pts[q*d+k] += phi[a] * verts[v*d+k]
			}
		}
	}
	// Tangents: constant, since every reference facet is affine.
	fe.EvalGrad(fr.Points[:fdim], dphi)
	for m := 0; m < fdim; m++ {
		for a, v := range fv {
			for k := 0; k < d; k++ {
				fd.Tangents[m][k] += dphi[a*fdim+m] * verts[v*d+k]
			}
		}
	}
	p := func(i, k int) float64 { return verts[fv[i]*d+k] }
	if d == 2 {
		// Cell on the left of (a → b): n = (t_y, −t_x).
		fd.Normal[0], fd.Normal[1] = p(1, 1)-p(0, 1), -(p(1, 0) - p(0, 0))
	} else {
		var u, w [3]float64
		for k := 0; k < 3; k++ {
			u[k], w[k] = p(1, k)-p(0, k), p(2, k)-p(1, k)
		}
		fd.Normal = Cross(u, w)
	}
	fd.Rule = quadrature.Rule{Cell: c, Degree: fr.Degree, Points: pts, Weights: append([]float64(nil), fr.Weights...)}
	return fd
}

// Cross is the cross product u × w.
func Cross(u, w [3]float64) [3]float64 {
	return [3]float64{u[1]*w[2] - u[2]*w[1], u[2]*w[0] - u[0]*w[2], u[0]*w[1] - u[1]*w[0]}
}
