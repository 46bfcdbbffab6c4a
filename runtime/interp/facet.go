package interp

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/tape"
)

// facetData is the quadrature on one local facet: a rule whose points are
// in the cell's reference coordinates (weights of the facet's reference
// rule), the constant reference tangents ∂ξ/∂s_k of the facet
// parametrisation and the reference outward normal.
type facetData struct {
	element.ReferenceFacet
	tabs []*element.Table
}

// FacetKernel is the interpreted kernel of the boundary integrals of a
// lowered form on one side: it implements kernel.FacetKernel.
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
	lay, deg, err := layoutAndDegree(form, c, opts)
	if err != nil {
		return nil, err
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
			fd := facetData{ReferenceFacet: element.NewReferenceFacet(c, f, deg)}
			for ei, e := range it.elems {
				fd.tabs = append(fd.tabs, it.table(ei, e, lay.Geometry, fd.Rule))
			}
			fk.facets = append(fk.facets, fd)
		}
		fk.s = it.newScratch(fk.facets[0].tabs)
		out = append(out, fk)
	}
	return out, nil
}

// Side implements kernel.FacetKernel.
func (k *FacetKernel) Side() string { return k.side }

// Layout is the layout of the element matrix the kernel writes (that of
// the cell kernel of the same form).
func (k *FacetKernel) Layout() kernel.Layout { return k.it.lay }

// Facet implements kernel.FacetKernel. It fills A and b with NaN on a
// non-positive Jacobian determinant; no allocation.
func (k *FacetKernel) Facet(in *kernel.FacetInput, A, b []float64) {
	it, s := k.it, k.s
	n := it.n
	clear(A[:n*n])
	clear(b[:n])
	fd := &k.facets[in.Facet]
	ci := &in.CellInput
	it.beginCell(s, ci)
	d := it.lay.Cell.Dim()
	for q := 0; q < fd.Rule.NumPoints(); q++ {
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
				v += s.JInv[i*d+kk] * fd.Normal[i]
			}
			nv[kk] = v
			nn += v * v
		}
		nn = math.Sqrt(nn)
		for kk := 0; kk < 3; kk++ {
			s.env[tape.SlotNormal+kk] = nv[kk] / nn
		}
		// Surface measure.
		meas := 1.0
		if d > 1 {
			var t [2][3]float64
			for m := 0; m < d-1; m++ {
				for i := 0; i < d; i++ {
					v := 0.0
					for j := 0; j < d; j++ {
						v += s.J[i*d+j] * fd.Tangents[m][j]
					}
					t[m][i] = v
				}
			}
			if d == 2 {
				meas = math.Hypot(t[0][0], t[0][1])
			} else {
				c := element.Cross(t[0], t[1])
				meas = math.Sqrt(c[0]*c[0] + c[1]*c[1] + c[2]*c[2])
			}
		}
		it.pointCoefs(s)
		it.accumulate(s, fd.Rule.Weights[q]*meas, A, b)
	}
}
