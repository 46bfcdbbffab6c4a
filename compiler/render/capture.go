package render

import (
	"fmt"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
)

// The discontinuity-capturing terms of a stabilised form (compiler
// capture.go): the terms Σ_K (κ_dc ∇u, ∇v)_K in the form's equation, and
// the definition of each κ_dc below it.

// captureParts are the capture terms of a form's equation line.
func (t *textWriter) captureParts(f *compiler.MethodForm) []string {
	var out []string
	for _, c := range f.Capture {
		in := t.e(c.Integrand(t.m))
		if t.s == notation.LaTeX {
			out = append(out, fmt.Sprintf("+ \\sum_K \\left(%s\\right)_K", in))
		} else {
			out = append(out, fmt.Sprintf("+ Σ_K (%s)_K", in))
		}
	}
	return out
}

// captureDefinitions prints κ_dc = definition for each capture term.
func (t *textWriter) captureDefinitions(f *compiler.MethodForm) {
	for _, c := range f.Capture {
		def := compiler.Simplify(t.m.Capture[c.For], t.m.Dim)
		if t.s == notation.LaTeX {
			t.printf("%s &= %s \\\\\n", t.e(c.Kappa), t.e(def))
		} else {
			t.printf("   %s = %s   (discontinuity-capturing diffusivity)\n", t.e(c.Kappa), t.e(def))
		}
	}
}

type jsonCapt struct {
	For        string      `json:"for"`
	Symbol     *Expression `json:"symbol"`
	Definition *Expression `json:"definition"`
	Integrand  *Expression `json:"integrand"`
}

func jsonCapture(m *compiler.Model, f *compiler.MethodForm, names notation.Names) []jsonCapt {
	var out []jsonCapt
	for _, c := range f.Capture {
		var def ir.Expr = compiler.Simplify(m.Capture[c.For], m.Dim)
		out = append(out, jsonCapt{m.Unknowns[c.For].Name, jexpr(c.Kappa, names), jexpr(def, names), jexpr(c.Integrand(m), names)})
	}
	return out
}
