package problem

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/mesh"
)

// RecoverGradient returns the recovered gradient of the finite-element
// function x (a global dof vector of dm): for every dof g of a field on
// linear simplices (P1, or P1 on intervals), the gradient of that
// component at its node, ∂_k at g·Dim + k.
//
// The recovery is the lumped-mass L² projection of the cellwise constant
// ∇u_h onto the continuous P1 space, per component:
//
//	g_h(x_a) = Σ_K ∫_K φ_a ∇u_h / Σ_K ∫_K φ_a  =  Σ_{K∋a} |K| ∇u_h|_K / Σ_{K∋a} |K|,
//
// the volume-weighted average of the gradients of the cells around node a
// (∫_K φ_a = |K|/(d+1) on a simplex). It is the recovery Jansen, Collis,
// Whiting & Shakib (1999, CMAME 174, 153–170) use to restore the
// second-derivative part of the stabilised residual on linear elements
// (recalled from memory; to be checked against the paper). Lumping makes
// it local and cheap, one pass over the cells; the consistent projection
// would need a mass-matrix solve per component and direction. It
// reproduces the gradient of a linear function exactly, and on meshes
// whose node patches are point-symmetric (uniform triangulations) it is
// second-order accurate at interior nodes for smooth functions (the
// superconvergence of patch averages, Zienkiewicz & Zhu 1992, IJNME 33,
// 1331–1364, recalled from memory). Fields that are not on linear
// simplices make it return an error.
func RecoverGradient(m *mesh.Mesh, dm *dof.Numbering, x []float64) ([]float64, error) {
	out := make([]float64, dm.NumDofs*dm.Dim)
	if err := recoverGradientInto(m, dm, x, out, nil); err != nil {
		return nil, err
	}
	return out, nil
}

// recoverGradientInto is RecoverGradient writing into out (NumDofs·Dim),
// with weight as scratch (NumDofs; nil: allocated).
func recoverGradientInto(m *mesh.Mesh, dm *dof.Numbering, x, out, weight []float64) error {
	d := dm.Dim
	if len(x) != dm.NumDofs || len(out) != dm.NumDofs*d {
		return fmt.Errorf("problem: gradient recovery of %d values into %d for %d dofs", len(x), len(out), dm.NumDofs)
	}
	if !dm.Cell.IsSimplex() {
		return fmt.Errorf("problem: gradient recovery needs linear simplices, the mesh has %v cells", dm.Cell)
	}
	for _, f := range dm.Fields {
		if f.Element.Degree != 1 {
			return fmt.Errorf("problem: gradient recovery of %s: its element has degree %d, recovery needs linear elements", f.Name, f.Element.Degree)
		}
	}
	if weight == nil {
		weight = make([]float64, dm.NumDofs)
	}
	clear(out)
	clear(weight[:dm.NumDofs])
	nv := d + 1
	var J, Ji [9]float64
	var grad [3]float64
	for c := 0; c < dm.NumCells; c++ {
		vs := m.Cells[c*nv : (c+1)*nv]
		// J = [x_1 − x_0, ..., x_d − x_0]; ∇φ_a = row a−1 of J⁻¹ (a ≥ 1),
		// ∇φ_0 = −Σ_a ∇φ_a.
		for i := 0; i < d; i++ {
			for j := 0; j < d; j++ {
				J[i*d+j] = m.Coords[int(vs[j+1])*d+i] - m.Coords[int(vs[0])*d+i]
			}
		}
		det := element.Invert(d, J[:d*d], Ji[:d*d])
		w := math.Abs(det)
		if !(w > 0) {
			return fmt.Errorf("problem: gradient recovery: cell %d is degenerate", c)
		}
		dofs := dm.CellDofs(c)
		for k := range dm.Fields {
			f := &dm.Fields[k]
			for comp := 0; comp < f.Components; comp++ {
				base := f.LocalOffset + comp*nv
				u0 := x[dofs[base]]
				for j := 0; j < d; j++ {
					g := 0.0
					for a := 1; a < nv; a++ {
						g += (x[dofs[base+a]] - u0) * Ji[(a-1)*d+j]
					}
					grad[j] = g
				}
				for a := 0; a < nv; a++ {
					gd := int(dofs[base+a])
					weight[gd] += w
					for j := 0; j < d; j++ {
						out[gd*d+j] += w * grad[j]
					}
				}
			}
		}
	}
	for g, w := range weight[:dm.NumDofs] {
		if w > 0 {
			for j := 0; j < d; j++ {
				out[g*d+j] /= w
			}
		}
	}
	return nil
}
