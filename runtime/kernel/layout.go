package kernel

import (
	"fmt"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
)

// CellOf is the cell type of a lowered form: the segment in 1D, the
// triangle or tetrahedron for P elements, the quadrilateral or hexahedron
// for Q elements.
func CellOf(form *ir.LoweredForm) cell.Type {
	return cell.Of(form.Dim, form.Family() == ir.TensorProduct)
}

// ElementFor returns the Lagrange element e on cells of type c, or an
// error when the element does not live on such cells.
func ElementFor(e ir.Element, c cell.Type) (*element.Element, error) {
	if c.Dim() > 1 && (e.Family == ir.Simplicial) != c.IsSimplex() {
		return nil, fmt.Errorf("element %v needs %s cells, the mesh has %v cells", e, e.CellNoun(c.Dim()), c)
	}
	return element.Lagrange(c, e.Degree)
}

// LayoutFor returns the kernel layout of a valid form's unknowns on cells
// c: the P1/Q1 geometry element and one field per unknown (components: 1
// for a scalar, form.Dim for a vector).
func LayoutFor(form *ir.LoweredForm, c cell.Type) (Layout, error) {
	if form.Dim != c.Dim() {
		return Layout{}, fmt.Errorf("a %d-dimensional form on %v cells", form.Dim, c)
	}
	l := Layout{Cell: c, Geometry: element.MustLagrange(c, 1)}
	for _, u := range form.Unknowns {
		e, err := ElementFor(u.Element, c)
		if err != nil {
			return l, fmt.Errorf("unknown %s: %w", u.Name, err)
		}
		l.Fields = append(l.Fields, FieldLayout{Element: e, Components: u.Components(form.Dim)})
	}
	return l, nil
}
