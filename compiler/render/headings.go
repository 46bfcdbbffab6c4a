package render

import (
	"fmt"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
)

// Heading is the derived form of one method in the words of the text
// derivation, for the comments of generated kernels: the Galerkin form,
// its boundary integrals by side, each stabilisation term by the model
// name of its τ, and the VMS cross-stress term.
type Heading struct {
	Galerkin string
	Boundary map[string]string
	Stab     map[string]string
	Cross    string
}

// Headings returns the Heading of every method of the derivation, by
// method name.
func Headings(d *compiler.Derivation) map[string]Heading {
	m := d.Model
	names := namesFor(m)
	e := func(x ir.Expr) string { return notation.Expr(x, notation.Text, names) }
	g := d.Galerkin
	gal := fmt.Sprintf("B = ∫_Ω %s dx, F = ∫_Ω %s dx", e(g.Bilinear), e(g.Source))
	bnd := map[string]string{}
	for _, b := range g.Boundary {
		bnd[b.Side] = fmt.Sprintf("∫_%s [%s] ds", b.Side, e(b.Integrand))
	}
	out := map[string]Heading{}
	for _, f := range d.Forms {
		h := Heading{Galerkin: gal, Boundary: bnd, Stab: map[string]string{}}
		for _, s := range f.Stab {
			sign := "+"
			if s.Sign < 0 {
				sign = "−"
			}
			h.Stab[s.Tau.Name] = fmt.Sprintf("%s Σ_K (%s R_%s, %s)_K", sign, e(s.Tau), m.Unknowns[s.For].Name, e(s.TestOp))
		}
		if f.Cross != nil {
			h.Cross = fmt.Sprintf("+ Σ_K (%s)_K", e(f.Cross))
		}
		out[f.Method.String()] = h
	}
	return out
}
