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

// captureParts are the capture terms of a form's equation line (text).
func (t *textWriter) captureParts(f *compiler.MethodForm) []string {
	var out []string
	for _, c := range f.Capture {
		out = append(out, fmt.Sprintf("+ Σ_K (%s)_K", t.e(c.Integrand(t.m))))
	}
	return out
}

// captureDefinitions prints κ_dc = definition for each capture term (text).
func (t *textWriter) captureDefinitions(f *compiler.MethodForm) {
	for _, c := range f.Capture {
		t.printf("   %s = %s   (discontinuity-capturing diffusivity)\n", t.e(c.Kappa), t.e(compiler.Simplify(t.m.Capture[c.For], t.m.Dim)))
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
