package compiler

import (
	"fmt"
	"slices"
	"testing"

	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/stdlib"
)

// TestFreeConstants: a model whose operator and conditions leave a
// constant free (pure Neumann diffusion; the pressure of an enclosed
// Stokes flow, which appears only through ∇p) is flagged; a reaction
// term, a value condition on part of the boundary, a Robin condition or a
// mean condition fixes the constant (the kernel of the Neumann Laplacian
// is the constants: e.g. Brenner & Scott, 3rd ed., §5.2 [memory]).
func TestFreeConstants(t *testing.T) {
	const scalar = "model s\ndimension 2\nunknown u: scalar P1\nequation for u: -lap(u) + %s = 1\n%s\n"
	const stokes = "model st\ndimension 2\nunknown vel: vector P1\nunknown p: scalar P1\n" +
		"equation for vel: -lap(vel) + grad(p) = [0, 0]\nequation for p: div(vel) = 0\nat all: vel = [0, 0]\n%s\n"
	for _, c := range []struct {
		name, src string
		want      []string
	}{
		{"pure Neumann", sprintf(scalar, "0*u", "at all: flux(u) = 0"), []string{"u"}},
		{"no condition", sprintf(scalar, "0*u", ""), []string{"u"}},
		{"reaction", sprintf(scalar, "u", "at all: flux(u) = 0"), nil},
		{"value on one side", sprintf(scalar, "0*u", "at left: u = 0"), nil},
		{"Robin", sprintf(scalar, "0*u", "at all: flux(u) = 1 - u"), nil},
		{"mean", sprintf(scalar, "0*u", "mean u = 0"), nil},
		{"Stokes enclosed", sprintf(stokes, ""), []string{"p"}},
		{"Stokes with mean", sprintf(stokes, "mean p = 0"), nil},
	} {
		f, errs := lang.Parse("n.fw", []byte(c.src))
		m, cerrs := Check(f, CheckOptions{Load: stdlib.Module})
		if len(errs)+len(cerrs) > 0 {
			t.Fatalf("%s: %v %v", c.name, errs, cerrs)
		}
		if got := m.FreeConstants(); !slices.Equal(got, c.want) {
			t.Errorf("%s: free constants %v, want %v", c.name, got, c.want)
		}
	}
}

func sprintf(format string, args ...any) string { return fmt.Sprintf(format, args...) }
