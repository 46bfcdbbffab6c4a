package compiler

import (
	"fmt"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
)

// Adjoint returns the formal adjoint of the model's block operator applied
// to the test functions: row i is (L* v)_i, the expression paired with
// unknown u_i in
//
//	Σ_j ∫_Ω (L u)_j · v_j dx = Σ_i ∫_Ω u_i · (L* v)_i dx
//
// for u, v vanishing on ∂Ω with their derivatives (so no boundary terms).
// It is found by integrating every term by parts until no derivative acts
// on the unknown, moving coefficients onto the test side; Simplify then
// expands the derivatives of products, e.g. a·∇u ↦ −∇·(a v) =
// −a·∇v − (∇·a) v (Hughes, Comput. Methods Appl. Mech. Engrg. 127 (1995),
// for the role of L* in the fine-scale model). Time derivatives drop out:
// test functions do not depend on time.
func Adjoint(m *Model) ([]ir.Expr, error) {
	n := len(m.Unknowns)
	rows := make([][]ir.Expr, n)
	for _, eq := range m.Equations {
		v := m.Test(eq.For)
		for _, t := range additiveTerms(eq.Written) {
			if err := adjointTerm(m.Dim, t, v, func(i int, e ir.Expr) { rows[i] = append(rows[i], e) }); err != nil {
				return nil, err
			}
		}
	}
	out := make([]ir.Expr, n)
	for i := range out {
		p := m.Unknowns[i].Pos
		if len(rows[i]) == 0 {
			out[i] = ir.Zero(p, m.Unknowns[i].Rank, m.Dim)
			continue
		}
		out[i] = Simplify(ir.Sum(p, rows[i]...), m.Dim)
	}
	return out, nil
}

// UnsupportedError reports a construct a derivation step cannot handle.
type UnsupportedError struct {
	Pos  source.Pos
	What string
}

func (e *UnsupportedError) Error() string { return fmt.Sprintf("%s: %s", e.Pos, e.What) }

// adjointTerm moves every operation of the trial-linear term t onto the
// test-side expression w (same rank as t) and emits, for the unknown it
// reaches, the expression paired with it.
func adjointTerm(dim int, t, w ir.Expr, emit func(unknown int, e ir.Expr)) error {
	p := t.Pos()
	at := ir.At{P: p}
	switch t := t.(type) {
	case *ir.Field:
		if t.Role == ir.Trial {
			emit(t.Index, w)
		}
		return nil
	case *ir.Add:
		for _, x := range t.Terms {
			if err := adjointTerm(dim, x, w, emit); err != nil {
				return err
			}
		}
		return nil
	case *ir.Mul:
		field, rest := trialFactor(t)
		if field == nil {
			return nil
		}
		coef := mulOf(p, rest...)
		switch {
		case coef.Rank() == 0:
			return adjointTerm(dim, field, mulOf(p, coef, w), emit)
		case field.Rank() == 0:
			// (s T)·w with the unknown in the scalar s: s (T·w)
			return adjointTerm(dim, field, contract(p, coef, w), emit)
		}
	case *ir.Dot:
		a, b := t.A, t.B
		if ir.HasRole(b, ir.Trial) {
			switch {
			case a.Rank() == 1 && b.Rank() == 1: // (a·B) w = B·(a w)
				return adjointTerm(dim, b, mulOf(p, w, a), emit)
			case a.Rank() == 2 && b.Rank() == 1: // (A B)·w = B·(Aᵀ w) = B·(w A)
				return adjointTerm(dim, b, &ir.Dot{At: at, A: w, B: a}, emit)
			case a.Rank() == 1 && b.Rank() == 2: // (a B)·w = B : (a ⊗ w)
				return adjointTerm(dim, b, &ir.Outer{At: at, A: a, B: w}, emit)
			}
		} else {
			switch {
			case a.Rank() == 1 && b.Rank() == 1:
				return adjointTerm(dim, a, mulOf(p, w, b), emit)
			case a.Rank() == 2 && b.Rank() == 1: // (A b)·w = A : (w ⊗ b)
				return adjointTerm(dim, a, &ir.Outer{At: at, A: w, B: b}, emit)
			case a.Rank() == 1 && b.Rank() == 2: // (a B)·w = a·(B w)
				return adjointTerm(dim, a, &ir.Dot{At: at, A: b, B: w}, emit)
			}
		}
	case *ir.DDot:
		if ir.HasRole(t.B, ir.Trial) {
			return adjointTerm(dim, t.B, mulOf(p, w, t.A), emit)
		}
		return adjointTerm(dim, t.A, mulOf(p, w, t.B), emit)
	case *ir.Outer:
		if ir.HasRole(t.A, ir.Trial) { // (A⊗b):w = A·(w b)
			return adjointTerm(dim, t.A, &ir.Dot{At: at, A: w, B: t.B}, emit)
		}
		return adjointTerm(dim, t.B, &ir.Dot{At: at, A: t.A, B: w}, emit) // (a⊗B):w = B·(a w)
	case *ir.Comp:
		// X_k w = X · (e_k w)
		n := dim
		el := make([]ir.Expr, n)
		for i := range el {
			if i == t.I {
				el[i] = w
			} else {
				el[i] = zeroLike(p, w, n)
			}
		}
		return adjointTerm(dim, t.X, &ir.Vec{At: at, Elems: el}, emit)
	case *ir.Grad: // ∫ ∇X·w = −∫ X·∇·w
		return adjointTerm(dim, t.X, ir.Neg(p, &ir.Div{At: at, X: w}), emit)
	case *ir.Div: // ∫ (∇·X)·w = −∫ X·∇w
		return adjointTerm(dim, t.X, ir.Neg(p, &ir.Grad{At: at, X: w}), emit)
	case *ir.Lap: // ∫ ΔX·w = ∫ X·Δw
		return adjointTerm(dim, t.X, &ir.Lap{At: at, X: w}, emit)
	case *ir.Partial:
		return adjointTerm(dim, t.X, ir.Neg(p, &ir.Partial{At: at, X: w, Axis: t.Axis}), emit)
	case *ir.TimeDeriv:
		return adjointTerm(dim, t.X, ir.Neg(p, &ir.TimeDeriv{At: at, X: w}), emit)
	case *ir.Vec:
		// [X_1, ..., X_n]·w = Σ X_i w_i
		for i, x := range t.Elems {
			if err := adjointTerm(dim, x, &ir.Comp{At: at, X: w, I: i}, emit); err != nil {
				return err
			}
		}
		return nil
	}
	if !ir.HasRole(t, ir.Trial) {
		return nil
	}
	return &UnsupportedError{p, fmt.Sprintf("cannot form the adjoint of this %s term", nodeName(t))}
}

// contract is the full contraction of two tensors of equal rank.
func contract(p source.Pos, a, b ir.Expr) ir.Expr {
	switch a.Rank() {
	case 0:
		return mulOf(p, a, b)
	case 1:
		return &ir.Dot{At: ir.At{P: p}, A: a, B: b}
	}
	return &ir.DDot{At: ir.At{P: p}, A: a, B: b}
}

func zeroLike(p source.Pos, w ir.Expr, dim int) ir.Expr { return ir.Zero(p, w.Rank(), dim) }

func nodeName(e ir.Expr) string {
	switch e.(type) {
	case *ir.Pow:
		return "power"
	case *ir.Call:
		return "function"
	}
	return fmt.Sprintf("%T", e)[4:]
}
