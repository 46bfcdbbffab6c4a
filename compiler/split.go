package compiler

import "github.com/formwright/formwright/compiler/ir"

// Part names one part of the operator split.
type Part uint8

// The parts of L = L_t + L_A + L_D + L_R.
const (
	Temporal  Part = iota // time derivatives
	Advective             // first-order terms
	Diffusive             // second-order terms
	Reactive              // zero-order terms
)

var partNames = [...]string{"temporal", "advective", "diffusive", "reactive"}

func (p Part) String() string { return partNames[p] }

// Split is one equation's operator divided by derivative order, each part
// kept in the form the model wrote it (div(κ∇u) stays diffusive as a whole,
// even when κ varies and its expansion has a first-order piece).
type Split struct {
	For   int
	Parts [4]ir.Expr // nil where the part is absent
}

// SplitOperator divides every equation's operator into its temporal,
// advective (first-order), diffusive (second-order) and reactive
// (zero-order) parts, by the highest derivative acting on the unknown in
// each term. For a system this is done row by row of the block operator, so
// coupling terms such as ∇p in a momentum equation and ∇·u in a continuity
// equation are first-order and land in the advective part.
func SplitOperator(m *Model) []Split {
	out := make([]Split, len(m.Equations))
	for k, eq := range m.Equations {
		var parts [4][]ir.Expr
		for _, t := range additiveTerms(eq.Written) {
			order, td := derivOrder(t)
			var p Part
			switch {
			case td:
				p = Temporal
			case order == 0:
				p = Reactive
			case order == 1:
				p = Advective
			default:
				p = Diffusive
			}
			parts[p] = append(parts[p], t)
		}
		out[k].For = eq.For
		for i, ts := range parts {
			if len(ts) > 0 {
				out[k].Parts[i] = Simplify(ir.Sum(eq.Pos, ts...), m.Dim)
			}
		}
	}
	return out
}

// toTest replaces every trial field by the test function of the same
// unknown: the operator applied to the test functions, L v.
func toTest(e ir.Expr) ir.Expr { return withRole(e, ir.Trial, ir.Test) }

// withRole replaces every field of role from in e by the same field with
// role to.
func withRole(e ir.Expr, from, to ir.Role) ir.Expr {
	return ir.MapUp(e, func(n ir.Expr) ir.Expr {
		if f, ok := n.(*ir.Field); ok && f.Role == from {
			g := *f
			g.Role = to
			return &g
		}
		return n
	})
}
