package problem

import (
	"fmt"

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
// the form uses (value conditions and boundary integrals), with the
// checks of ResolveParts.
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
	// Every side and part the form uses, and where its conditions apply
	// (parts.go): a *PartError.
	if _, _, err := ResolveParts(form, m); err != nil {
		return err
	}
	return nil
}
