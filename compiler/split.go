package compiler

import "github.com/formwright/formwright/compiler/ir"

// Part names one part of the operator split.
type Part uint8

// The parts of L = L_t + L_A + L_D + L_R + L_C.
const (
	Temporal  Part = iota // time derivatives
	Advective             // first-order terms in the equation's own unknown
	Diffusive             // second-order terms
	Reactive              // zero-order terms
	// Coupling holds the first-order terms in the other unknowns of a
	// system: ∇p in a momentum equation, ∇·u in a continuity equation.
	Coupling
	numParts
)

var partNames = [...]string{"temporal", "advective", "diffusive", "reactive", "coupling"}

func (p Part) String() string { return partNames[p] }

// Split is one equation's operator divided by derivative order, each part
// kept in the form the model wrote it (div(κ∇u) stays diffusive as a whole,
// even when κ varies and its expansion has a first-order piece).
type Split struct {
	For   int
	Parts [numParts]ir.Expr // nil where the part is absent
}

// FirstOrder is the whole first-order part, advective and coupling terms
// together (nil when there is none): what SUPG puts on the test function.
func (s Split) FirstOrder(dim int) ir.Expr {
	switch a, c := s.Parts[Advective], s.Parts[Coupling]; {
	case a == nil:
		return c
	case c == nil:
		return a
	default:
		return Simplify(ir.Sum(a.Pos(), a, c), dim)
	}
}

// SplitOperator divides every equation's operator into its temporal,
// advective (first-order), diffusive (second-order) and reactive
// (zero-order) parts, by the highest derivative acting on the unknown in
// each term. For a system this is done row by row of the block operator;
// first-order terms whose derivatives act only on other unknowns than the
// equation's own (∇p in a momentum equation, ∇·u in a continuity
// equation) are not advection and form the coupling part.
func SplitOperator(m *Model) []Split {
	out := make([]Split, len(m.Equations))
	for k, eq := range m.Equations {
		var parts [numParts][]ir.Expr
		for _, t := range additiveTerms(eq.Written) {
			order, td := derivOrder(t)
			var p Part
			switch {
			case td:
				p = Temporal
			case order == 0:
				p = Reactive
			case order == 1 && !derivesOwn(t, eq.For):
				p = Coupling
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

// derivesOwn reports whether a derivative in t acts on the trial field of
// unknown own.
func derivesOwn(t ir.Expr, own int) bool {
	found := false
	var walk func(e ir.Expr, under bool)
	seen := map[ir.Expr]bool{}
	walk = func(e ir.Expr, under bool) {
		if found || seen[e] && !under {
			return
		}
		seen[e] = true
		switch e := e.(type) {
		case *ir.Field:
			found = under && e.Role == ir.Trial && e.Index == own
			return
		case *ir.Grad, *ir.Div, *ir.Partial, *ir.Lap:
			under = true
		}
		for _, k := range ir.Children(e) {
			walk(k, under)
		}
	}
	walk(t, false)
	return found
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
