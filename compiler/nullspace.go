package compiler

import (
	"fmt"

	"github.com/formwright/formwright/compiler/ir"
)

// FreeConstants lists the unknowns that the model fixes only up to a
// constant: adding a constant to the unknown (to one component of a
// vector unknown) changes no equation, no value or Robin condition holds
// it, and no mean condition fixes it. The discrete problem is then
// singular (a pure Neumann problem, the pressure of an enclosed flow). The
// test is exact for linear operators: L(c e_k) is derived symbolically and
// must simplify to zero in every equation. Each entry names the unknown,
// and the component for a vector.
func (m *Model) FreeConstants() []string {
	var out []string
	for _, u := range m.Unknowns {
		if m.HasMean(u.Index) || m.holdsValue(u.Index) {
			continue
		}
		comps := 1
		if u.Rank == 1 {
			comps = m.Dim
		}
		for k := 0; k < comps; k++ {
			if !m.constantInKernel(u.Index, k) {
				continue
			}
			if u.Rank == 0 {
				out = append(out, u.Name)
			} else {
				out = append(out, fmt.Sprintf("%s[%d]", u.Name, k+1))
			}
		}
	}
	return out
}

// holdsValue reports whether a value or Robin condition acts on unknown i.
func (m *Model) holdsValue(i int) bool {
	for _, bc := range m.BCs {
		if bc.Unknown == i && (bc.Kind == ValueBC || bc.Kind == RobinBC) {
			return true
		}
	}
	return false
}

// constantInKernel reports whether every equation's operator vanishes on
// the unknown i equal to the unit constant in component k (every other
// unknown zero).
func (m *Model) constantInKernel(i, k int) bool {
	u := m.Unknowns[i]
	var unit ir.Expr = ir.Int(u.Pos, 1)
	if u.Rank == 1 {
		el := make([]ir.Expr, m.Dim)
		for j := range el {
			el[j] = ir.Int(u.Pos, 0)
		}
		el[k] = ir.Int(u.Pos, 1)
		unit = &ir.Vec{At: ir.At{P: u.Pos}, Elems: el}
	}
	for _, eq := range m.Equations {
		op := ir.MapUp(eq.Written, func(e ir.Expr) ir.Expr {
			f, ok := e.(*ir.Field)
			if !ok || f.Role != ir.Trial {
				return e
			}
			if f.Index == i {
				return unit
			}
			return ir.Zero(f.P, f.R, m.Dim)
		})
		if !ir.IsZero(Simplify(op, m.Dim)) {
			return false
		}
	}
	return true
}
