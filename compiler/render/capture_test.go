package render

import (
	"bytes"
	"encoding/json"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
)

// captureModel has a crosswind (tensor) capture diffusivity, so that the
// term, its definition and its Jacobian hold matrices, norms and powers.
const captureModel = `model capture_rt
dimension 2
use tau, capturing
unknown c: scalar P1
given a = [1, 1/3]
given kappa = 1/1000
given h = diam(K)
equation for c: a . grad(c) - div(kappa*grad(c)) = x
at all: c = 0
stabilise supg, gls, vms
tau for c = tau_doubly_asymptotic(norm(a), kappa, h)
capture for c = capture_codina(7/10, norm(a), kappa, h, residual(c), grad(c), 1/100, 1/10000)*crosswind_2d(a)
`

// TestCaptureReadsBack: the capture terms of every method, the capture
// diffusivity, the Jacobian of the terms and δκ_dc print in the model
// syntax and read back to the same expression, as every derived form does
// (TestDerivedFormsReadBack).
func TestCaptureReadsBack(t *testing.T) {
	m := mustModel(t, captureModel)
	d, err := compiler.Derive(m, compiler.AllMethods)
	if err != nil {
		t.Fatal(err)
	}
	exprs := []ir.Expr{m.Capture[0]}
	n := 0
	for _, f := range d.Forms {
		for _, c := range f.Capture {
			exprs = append(exprs, c.Integrand(m))
			n++
		}
		if f.Jacobian != nil && f.Jacobian.Capture != nil {
			exprs = append(exprs, f.Jacobian.Capture)
			for _, g := range f.Jacobian.Defs {
				exprs = append(exprs, g.Def)
			}
		}
	}
	if n != 3 {
		t.Fatalf("%d capture terms, want one for each of SUPG, GLS and VMS (none for Galerkin)", n)
	}
	for _, e := range exprs {
		c := compiler.Simplify(e, m.Dim)
		s := notation.Expr(c, notation.Syntax, notation.Names{})
		back, errs := m.ParseExpr("capture", s)
		if len(errs) > 0 {
			t.Fatalf("%q does not read back: %v", s, errs)
		}
		if b := compiler.Simplify(back, m.Dim); !ir.Equal(b, c) {
			t.Fatalf("%q reads back as a different expression", s)
		}
	}
}

// TestCapturePrinted: text and JSON carry the capture term of each
// stabilised method, its definition and its Jacobian.
func TestCapturePrinted(t *testing.T) {
	m := mustModel(t, captureModel)
	d, err := compiler.Derive(m, []compiler.Method{compiler.SUPG})
	if err != nil {
		t.Fatal(err)
	}
	var txt bytes.Buffer
	if err := WriteText(&txt, d); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"κ_dc_c = ", "(discontinuity-capturing diffusivity)", "δκ_dc_c = ", "discontinuity capturing for c"} {
		if !strings.Contains(txt.String(), want) {
			t.Errorf("text output lacks %q", want)
		}
	}
	var js bytes.Buffer
	if err := WriteJSON(&js, d); err != nil {
		t.Fatal(err)
	}
	var v struct {
		Stabilised []struct {
			Capture []struct {
				For        string
				Definition struct{ Syntax string }
			}
		}
		Nonlinear struct {
			Jacobians []struct {
				Capture *struct{ Syntax string } `json:"capture_terms"`
			}
		}
	}
	if err := json.Unmarshal(js.Bytes(), &v); err != nil {
		t.Fatal(err)
	}
	if len(v.Stabilised) != 1 || len(v.Stabilised[0].Capture) != 1 || v.Stabilised[0].Capture[0].For != "c" ||
		!strings.Contains(v.Stabilised[0].Capture[0].Definition.Syntax, "outer(a, a)") {
		t.Errorf("JSON stabilised capture: %+v", v.Stabilised)
	}
	if len(v.Nonlinear.Jacobians) != 1 || v.Nonlinear.Jacobians[0].Capture == nil {
		t.Errorf("JSON Jacobian has no capture terms")
	}
}
