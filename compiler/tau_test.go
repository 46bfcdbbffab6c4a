package compiler

import (
	"fmt"
	"math"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
)

// noLeaves is an Env for expressions made of numbers only.
type noLeaves struct{}

func (noLeaves) Coord(int) float64         { return math.NaN() }
func (noLeaves) Time() float64             { return math.NaN() }
func (noLeaves) CellQ(*ir.CellQ) float64   { return math.NaN() }
func (noLeaves) FieldD(*ir.FieldD) float64 { return math.NaN() }

// tauValue evaluates a call of a stdlib τ formula with numeric arguments
// in a model whose unknown uses element (the element matters for
// inverse_estimate).
func tauValue(t *testing.T, element, call string) float64 {
	t.Helper()
	m := mustModel(t, fmt.Sprintf(`model tau_probe
dimension 2
use tau
unknown c: scalar %s
given f = 1
given probe = %s
equation for c: -lap(c) = f
at all: c = 0
stabilise galerkin
`, element, call))
	e := m.Coef("probe").Def
	l := LowerExpr(m, e)
	if len(l) != 1 {
		t.Fatalf("%s lowers to %d components", call, len(l))
	}
	return ir.Eval(l[0], noLeaves{})
}

func near(a, b, rel float64) bool { return math.Abs(a-b) <= rel*math.Abs(b) }

// TestStdlibTauLimits checks the τ formulas of stdlib/modules/tau.fw
// against values worked out independently of the language.
func TestStdlibTauLimits(t *testing.T) {
	// The optimal 1D τ, h/(2|a|)(coth α − 1/α) with α = |a|h/(2k)
	// (Brooks & Hughes 1982, CMAME 32), written out in Go.
	for _, alpha := range []float64{0.1, 1, 3, 30} {
		s, h := 2.0, 0.1
		k := s * h / (2 * alpha)
		want := h / (2 * s) * (1/math.Tanh(alpha) - 1/alpha)
		call := fmt.Sprintf("tau_optimal(%v, %v, %v)", s, k, h)
		if got := tauValue(t, "P1", call); !near(got, want, 1e-12) {
			t.Errorf("%s = %.17g, closed form %.17g", call, got, want)
		}
	}
	// Both limits of the optimal τ: h/(2|a|) as k → 0 and h²/(12k) as
	// |a| → 0 (the expansion coth α − 1/α = α/3 + O(α³); Brooks & Hughes
	// 1982). The doubly asymptotic, Shakib–Hughes–Johan (1991, CMAME 89)
	// and Franca–Frey–Hughes (1992) forms share them for linear elements.
	h := 0.1
	for _, f := range []string{"tau_doubly_asymptotic(%v, %v, %v)", "tau_shakib_steady(%v, %v, %v)", "tau_ffh(%v, %v, %v)"} {
		adv := fmt.Sprintf(f, 2.0, 1e-12, h)
		if got, want := tauValue(t, "P1", adv), h/4; !near(got, want, 1e-6) {
			t.Errorf("%s = %.10g, advective limit h/(2|a|) = %g", adv, got, want)
		}
		dif := fmt.Sprintf(f, 1e-9, 1.0, h)
		if got, want := tauValue(t, "P1", dif), h*h/12; !near(got, want, 1e-6) {
			t.Errorf("%s = %.10g, diffusive limit h²/(12k) = %g", dif, got, want)
		}
	}
	// For linear elements (C_inv = 0, m_k = 1/3) the Franca–Frey–Hughes τ
	// is the doubly asymptotic one exactly.
	for _, args := range [][3]float64{{1, 0.01, 0.1}, {1, 1, 0.1}, {3, 0.02, 0.05}} {
		a := fmt.Sprintf("(%v, %v, %v)", args[0], args[1], args[2])
		if x, y := tauValue(t, "P1", "tau_ffh"+a), tauValue(t, "P1", "tau_doubly_asymptotic"+a); !near(x, y, 1e-14) {
			t.Errorf("tau_ffh%s = %.17g, tau_doubly_asymptotic %.17g", a, x, y)
		}
	}
	// On P2 triangles C_inv = 96 (runtime/element, checked against sympy),
	// m_k = 2/96, and the diffusive limit is m_k h²/(4k) = h²/(192k).
	dif := fmt.Sprintf("tau_ffh(%v, %v, %v)", 1e-9, 1.0, h)
	if got, want := tauValue(t, "P2", dif), h*h/192; !near(got, want, 1e-12) {
		t.Errorf("P2 %s = %.10g, want h²/(192k) = %g", dif, got, want)
	}
	if got := tauValue(t, "P2", "inverse_estimate"); got != 96 {
		t.Errorf("inverse_estimate on a P2 triangle model lowers to %g, want 96", got)
	}
}
