package interp

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/assemble"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/quadrature"
)

// facetData is the quadrature on one local facet: a rule whose points are
// in the cell's reference coordinates (weights of the facet's reference
// rule), the constant reference tangents ∂ξ/∂s_k of the facet
// parametrisation and the reference outward normal.
type facetData struct {
	rule quadrature.Rule
	tabs []*element.Table
	tang [2][3]float64
	nref [3]float64
}

// FacetKernel is the interpreted kernel of the boundary integrals of a
// lowered form on one side: it implements assemble.FacetKernel.
type FacetKernel struct {
	side   string
	it     *integrand
	facets []facetData
	s      *scratch
}

// NewFacetKernels builds one facet kernel per side that carries a
// boundary integral in form, in the order the sides first appear.
//
// Facet quadrature: the facet's reference rule (quadrature.For on the
// facet cell type, same degree rule as the cells; a single point of weight
// 1 in 1D) mapped into the cell by the facet's linear parametrisation
// ξ(s) = Σ_a N_a(s) V_a over its reference vertices V_a. The physical
// weight is w·|J t_1| (2D) or w·|J t_1 × J t_2| (3D) with t_k = ∂ξ/∂s_k,
// and the outward unit normal is J^{-T} n_ref normalised, where n_ref is
// the reference normal from the facet's vertex orientation (runtime/cell).
func NewFacetKernels(form *ir.LoweredForm, c cell.Type, opts Options) ([]*FacetKernel, error) {
	lay, err := LayoutFor(form, c)
	if err != nil {
		return nil, err
	}
	deg := opts.Degree
	if deg <= 0 {
		if deg, err = DefaultDegree(form, c); err != nil {
			return nil, err
		}
	}
	sides := form.Sides()
	var out []*FacetKernel
	for _, side := range sides {
		bil, lin := splitIntegrals(form, side)
		it, err := newIntegrand(form, lay, bil, lin)
		if err != nil {
			return nil, fmt.Errorf("side %q: %w", side, err)
		}
		fk := &FacetKernel{side: side, it: it}
		for f := 0; f < c.NumFacets(); f++ {
			fd := makeFacet(c, f, deg)
			for ei, e := range it.elems {
				fd.tabs = append(fd.tabs, it.table(ei, e, lay.Geometry, fd.rule))
			}
			fk.facets = append(fk.facets, fd)
		}
		fk.s = it.newScratch(fk.facets[0].tabs)
		out = append(out, fk)
	}
	return out, nil
}

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

// NewReferenceFacet builds the ReferenceFacet of local facet f of c.
func NewReferenceFacet(c cell.Type, f, deg int) ReferenceFacet {
	fd := makeFacet(c, f, deg)
	return ReferenceFacet{Rule: fd.rule, Tangents: fd.tang, Normal: fd.nref}
}

func makeFacet(c cell.Type, f, deg int) facetData {
	d := c.Dim()
	verts := c.Vertices()
	fv := c.Facets()[f]
	var fd facetData
	if d == 1 {
		v := fv[0]
		fd.rule = quadrature.Rule{Cell: c, Degree: deg, Points: []float64{verts[v]}, Weights: []float64{1}}
		// Facet 0 is x = 1 (normal +x), facet 1 is x = 0 (normal −x).
		fd.nref[0] = 1
		if verts[v] == 0 {
			fd.nref[0] = -1
		}
		return fd
	}
	ft := c.FacetType()
	fr := quadrature.For(ft, deg)
	fe := element.MustLagrange(ft, 1)
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
				fd.tang[m][k] += dphi[a*fdim+m] * verts[v*d+k]
			}
		}
	}
	p := func(i, k int) float64 { return verts[fv[i]*d+k] }
	if d == 2 {
		// Cell on the left of (a → b): n = (t_y, −t_x).
		fd.nref[0], fd.nref[1] = p(1, 1)-p(0, 1), -(p(1, 0) - p(0, 0))
	} else {
		var u, w [3]float64
		for k := 0; k < 3; k++ {
			u[k], w[k] = p(1, k)-p(0, k), p(2, k)-p(1, k)
		}
		fd.nref = cross(u, w)
	}
	fd.rule = quadrature.Rule{Cell: c, Degree: fr.Degree, Points: pts, Weights: append([]float64(nil), fr.Weights...)}
	return fd
}

func cross(u, w [3]float64) [3]float64 {
	return [3]float64{u[1]*w[2] - u[2]*w[1], u[2]*w[0] - u[0]*w[2], u[0]*w[1] - u[1]*w[0]}
}

// Side implements assemble.FacetKernel.
func (k *FacetKernel) Side() string { return k.side }

// Layout is the layout of the element matrix the kernel writes (that of
// the cell kernel of the same form).
func (k *FacetKernel) Layout() assemble.Layout { return k.it.lay }

// Facet implements assemble.FacetKernel. It fills A and b with NaN on a
// non-positive Jacobian determinant; no allocation.
func (k *FacetKernel) Facet(in *assemble.FacetInput, A, b []float64) {
	it, s := k.it, k.s
	n := it.n
	clear(A[:n*n])
	clear(b[:n])
	fd := &k.facets[in.Facet]
	ci := &in.CellInput
	it.beginCell(s, ci)
	d := it.lay.Cell.Dim()
	for q := 0; q < fd.rule.NumPoints(); q++ {
		if _, ok := it.point(s, fd.tabs, q, ci); !ok {
			fillNaN(A[:n*n], b[:n])
			return
		}
		// Normal: J^{-T} n_ref, normalised.
		var nv [3]float64
		nn := 0.0
		for kk := 0; kk < d; kk++ {
			v := 0.0
			for i := 0; i < d; i++ {
				v += s.JInv[i*d+kk] * fd.nref[i]
			}
			nv[kk] = v
			nn += v * v
		}
		nn = math.Sqrt(nn)
		for kk := 0; kk < 3; kk++ {
			s.env[SlotNormal+kk] = nv[kk] / nn
		}
		// Surface measure.
		meas := 1.0
		if d > 1 {
			var t [2][3]float64
			for m := 0; m < d-1; m++ {
				for i := 0; i < d; i++ {
					v := 0.0
					for j := 0; j < d; j++ {
						v += s.J[i*d+j] * fd.tang[m][j]
					}
					t[m][i] = v
				}
			}
			if d == 2 {
				meas = math.Hypot(t[0][0], t[0][1])
			} else {
				c := cross(t[0], t[1])
				meas = math.Sqrt(c[0]*c[0] + c[1]*c[1] + c[2]*c[2])
			}
		}
		it.pointCoefs(s)
		it.accumulate(s, fd.rule.Weights[q]*meas, A, b)
	}
}
