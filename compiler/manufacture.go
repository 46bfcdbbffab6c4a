package compiler

import (
	"fmt"
	"slices"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
)

// Manufactured is a model rewritten so that a chosen function is its exact
// solution (the method of manufactured solutions: Roache 2002, J. Fluids
// Eng. 124; Salari & Knupp 2000, Sandia report SAND2000-1444).
type Manufactured struct {
	Model *Model
	// Exact holds the exact solution of each unknown.
	Exact []ir.Expr
	// Sources holds the derived source of each equation, L(u*).
	Sources []ir.Expr
}

// Manufacture applies the model's operator to exact (one expression per
// unknown, of the unknown's rank) symbolically and returns a copy of the
// model whose sources are f = L(u*) and whose boundary data make u* exact:
// value conditions take u* itself, flux and Robin conditions keep their
// form with the flux of u* added as data (flux(u) = G(u) + q(u*) − G(u*)),
// and the rest of the boundary (a part of its own) gets the flux of u*. sources, where not nil
// for an equation, replaces the derived source (to check a source worked
// out by hand).
func Manufacture(m *Model, exact []ir.Expr, sources []ir.Expr) (*Manufactured, error) {
	if len(exact) != len(m.Unknowns) {
		return nil, fmt.Errorf("manufactured solution: %d expressions for %d unknowns", len(exact), len(m.Unknowns))
	}
	for i, u := range m.Unknowns {
		if exact[i].Rank() != u.Rank {
			return nil, fmt.Errorf("manufactured solution for %s is a %s, but %s is a %s", u.Name, rankName(exact[i].Rank()), u.Name, rankName(u.Rank))
		}
		if ir.HasField(exact[i]) {
			return nil, fmt.Errorf("manufactured solution for %s must be a function of the coordinates and time only", u.Name)
		}
	}
	sub := func(e ir.Expr) ir.Expr {
		return ir.MapUp(e, func(n ir.Expr) ir.Expr {
			if f, ok := n.(*ir.Field); ok && (f.Role == ir.Trial || f.Role == ir.Previous) {
				return exact[f.Index]
			}
			return n
		})
	}
	g, err := WeakGalerkin(m)
	if err != nil {
		return nil, err
	}
	mm := *m
	mm.Equations = nil
	out := &Manufactured{Model: &mm, Exact: exact}
	for k, eq := range m.Equations {
		src := Simplify(substituteDefs(m, sub(eq.Written)), m.Dim)
		if sources != nil && k < len(sources) && sources[k] != nil {
			src = sources[k]
		}
		e := *eq
		e.Source = src
		mm.Equations = append(mm.Equations, &e)
		out.Sources = append(out.Sources, src)
	}
	mm.BCs = nil
	mm.Parts = slices.Clone(m.Parts)
	for _, u := range m.Unknowns {
		q := g.Flux[u.Index]
		// flux(u) = G(u) + q(u*) − G(u*) where a flux or Robin condition
		// G holds, and q(u*) where none does.
		fluxData := func(p source.Pos, given ir.Expr, kind BCKind, sides []string) {
			if q == nil {
				return // no second-order term: no flux to prescribe
			}
			data := Simplify(ir.Sub(p, substituteDefs(m, sub(q)), substituteDefs(m, sub(given))), m.Dim)
			mm.BCs = append(mm.BCs, &BC{Sides: sides, Unknown: u.Index, Kind: kind, Value: ir.Sum(p, given, data), Pos: p})
		}
		var claimed *ir.PartSet
		whole := false
		for _, b := range m.BCs {
			if b.Unknown != u.Index {
				continue
			}
			if b.Kind == ValueBC {
				mm.BCs = append(mm.BCs, &BC{Sides: b.Sides, Unknown: u.Index, Kind: ValueBC, Value: exact[u.Index], Pos: b.Pos})
			} else {
				fluxData(b.Pos, b.Value, b.Kind, b.Sides)
			}
			for _, side := range b.Sides {
				whole = whole || side == ir.AllParts
				set := &ir.PartSet{Op: ir.PartNamed, Name: side, Pos: b.Pos}
				if d := m.Part(side); d != nil {
					set = d.Set
				}
				if claimed == nil {
					claimed = set
				} else {
					claimed = &ir.PartSet{Op: ir.PartUnion, Args: [2]*ir.PartSet{claimed, set}, Pos: b.Pos}
				}
			}
		}
		// The rest of the boundary gets the flux of u*.
		switch {
		case whole || q == nil:
		case claimed == nil:
			fluxData(u.Pos, ir.Zero(u.Pos, u.Rank, m.Dim), FluxBC, []string{ir.AllParts})
		default:
			rest := &PartDef{Name: "rest(" + u.Name + ")", Pos: u.Pos,
				Set: &ir.PartSet{Op: ir.PartMinus, Args: [2]*ir.PartSet{{Op: ir.PartNamed, Name: ir.AllParts, Pos: u.Pos}, claimed}, Pos: u.Pos}}
			mm.Parts = append(mm.Parts, rest)
			fluxData(u.Pos, ir.Zero(u.Pos, u.Rank, m.Dim), FluxBC, []string{rest.Name})
		}
	}
	return out, nil
}

// DefaultExact is a smooth, non-polynomial solution suited to a model's
// dimension, for each unknown (vectors get shifted variants per component).
func DefaultExact(m *Model) []string {
	scalar := map[int][]string{
		1: {"sin(pi*x) + x*exp(x)/2", "cos(pi*x/2)", "exp(x)*sin(2*x)"},
		2: {"sin(pi*x)*sin(pi*y) + x*exp(y)/2", "cos(pi*x)*sin(pi*y)", "sin(pi*x)*cos(pi*y)"},
		3: {"sin(pi*x)*sin(pi*y)*sin(pi*z) + x*y*z", "cos(pi*x)*sin(pi*y)*z", "sin(pi*x)*y*cos(pi*z)"},
	}[m.Dim]
	var out []string
	for _, u := range m.Unknowns {
		if u.Rank == 0 {
			out = append(out, scalar[u.Index%len(scalar)])
			continue
		}
		s := "["
		for c := 0; c < m.Dim; c++ {
			if c > 0 {
				s += ", "
			}
			s += scalar[(u.Index+c)%len(scalar)]
		}
		out = append(out, s+"]")
	}
	return out
}

// OverrideCoef returns a copy of the model with one constant coefficient
// given a new value (for parameter sweeps).
func OverrideCoef(m *Model, name string, value ir.Expr) (*Model, error) {
	c := m.Coef(name)
	if c == nil {
		return nil, fmt.Errorf("the model has no coefficient %q", name)
	}
	if c.Def.Rank() != 0 || depsOf(c.Def) != 0 {
		return nil, fmt.Errorf("coefficient %q is not a constant scalar, so it cannot be swept", name)
	}
	mm := *m
	mm.Coefs = nil
	for _, k := range m.Coefs {
		if k.Name == name {
			kk := *k
			kk.Def = value
			mm.Coefs = append(mm.Coefs, &kk)
			continue
		}
		mm.Coefs = append(mm.Coefs, k)
	}
	return &mm, nil
}
