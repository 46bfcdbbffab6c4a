package problem

import (
	"fmt"
	"slices"
	"strings"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/mesh"
)

// MeshError says why a mesh does not fit a form: wrong dimension, cells
// that the form's elements do not live on, or a boundary side that the
// form integrates over or prescribes values on but the mesh lacks.
type MeshError struct{ Msg string }

func (e *MeshError) Error() string { return e.Msg }

// CheckMesh reports whether the mesh can carry the form: the same
// dimension, cells of the kind the form's elements need, and every side
// the form uses (value conditions and boundary integrals).
func CheckMesh(form *ir.LoweredForm, m *mesh.Mesh) error {
	if m.Dim != form.Dim {
		return &MeshError{fmt.Sprintf("a %d-dimensional mesh for a %d-dimensional model", m.Dim, form.Dim)}
	}
	for _, u := range form.Unknowns {
		if form.Dim > 1 && (u.Element.Family == ir.Simplicial) != m.Cell.IsSimplex() {
			return &MeshError{fmt.Sprintf("unknown %s uses %v elements, which need %s cells, but the mesh has %v cells",
				u.Name, u.Element, u.Element.CellNoun(form.Dim), m.Cell)}
		}
	}
	var used []string
	for _, d := range form.Dirichlet {
		used = append(used, d.Side)
	}
	used = append(used, form.Sides()...)
	for _, side := range used {
		if _, ok := m.Boundaries[side]; !ok {
			return &MeshError{fmt.Sprintf("the model sets a condition on side %q, which the mesh does not have (it has %s)", side, strings.Join(slices.DeleteFunc(m.BoundaryNames(), func(s string) bool { return s == mesh.All }), ", "))}
		}
	}
	return nil
}
