package compiler

import (
	"fmt"
	"slices"
	"strings"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/lang/source"
)

// Boundary parts. A condition "at NAME: ..." names a side that the mesh
// supplies (declared by "sides", or the default sides of the built-in
// meshes), "all" (the whole boundary of whatever mesh the model runs on),
// or a part the model defines with "part NAME = SET". A set is built from
// names, midpoint conditions {EXPR REL EXPR ...} and the operations cup
// (∪), cap (∩) and minus (∖), applied from left to right. The checker
// inlines defined parts into each other, so a Part's set refers only to
// names of the mesh; the runtime finds the facets (runtime/problem).

// PartDef is a boundary part the model defines.
type PartDef struct {
	Name string
	// Set refers only to mesh names (sides and "all"); its condition terms
	// are checked scalar expressions of x, y, z and constant coefficients.
	Set *ir.PartSet
	Pos source.Pos
}

// SetTeX writes the part's set in the markup of notes (a LaTeX subset;
// notation.Plain reads it as Unicode text).
func (p *PartDef) SetTeX() string { return partTeX(p.Set) }

// Part returns the part the model defines under name, or nil.
func (m *Model) Part(name string) *PartDef {
	for _, p := range m.Parts {
		if p.Name == name {
			return p
		}
	}
	return nil
}

// ConditionParts lists the parts and sides that the model's conditions
// name, in the order they first appear.
func (m *Model) ConditionParts() []string {
	var out []string
	for _, bc := range m.BCs {
		for _, s := range bc.Sides {
			if !slices.Contains(out, s) {
				out = append(out, s)
			}
		}
	}
	return out
}

// setOps are the words that join sets; a part cannot be called by them.
var setOps = []string{"cup", "cap", "minus"}

type partDecl struct {
	stmt   *lang.PartStmt
	set    *ir.PartSet // nil until checked
	active bool
	failed bool
}

// checkParts checks the part statements: names that are new (not a side,
// not "all", not a set operation, not defined twice), sets whose names
// resolve, conditions that are scalar functions of the coordinates.
func (c *checker) checkParts(f *lang.File) {
	m := c.m
	decls := map[string]*partDecl{}
	var order []string
	for _, s := range f.Stmts {
		s, ok := s.(*lang.PartStmt)
		if !ok {
			continue
		}
		n := s.Name
		switch {
		case n.Text == ir.AllParts || slices.Contains(m.Sides, n.Text):
			c.errorf(n.Pos, n.End, "choose another name for the part", "%q is already a side of the mesh", n.Text)
			continue
		case slices.Contains(setOps, n.Text):
			c.errorf(n.Pos, n.End, "choose another name for the part", "%q joins sets (cup, cap, minus) and cannot name a part", n.Text)
			continue
		}
		if prev, dup := decls[n.Text]; dup {
			c.errorf(n.Pos, n.End, "", "part %q defined twice (first at %s)", n.Text, prev.stmt.Name.Pos)
			continue
		}
		decls[n.Text] = &partDecl{stmt: s}
		order = append(order, n.Text)
	}
	var resolve func(d *partDecl) *ir.PartSet
	var set func(p lang.PartSet) *ir.PartSet
	set = func(p lang.PartSet) *ir.PartSet {
		switch p := p.(type) {
		case *lang.PartName:
			if p.Name == ir.AllParts || slices.Contains(m.Sides, p.Name) {
				return &ir.PartSet{Op: ir.PartNamed, Name: p.Name, Pos: p.Pos()}
			}
			if d, ok := decls[p.Name]; ok {
				if d.active {
					c.errorf(p.Pos(), p.End(), "a part cannot contain itself", "part %q is defined in terms of itself", p.Name)
					d.failed = true
					return nil
				}
				return resolve(d)
			}
			c.errorf(p.Pos(), p.End(), c.partHint(p.Name, order), "%q is neither a side nor a part of this model", p.Name)
			return nil
		case *lang.PartWhere:
			out := &ir.PartSet{Op: ir.PartWhere, Pos: p.Pos()}
			ok := true
			for i, t := range p.Terms {
				e := c.partTerm(t)
				ok = ok && e != nil
				out.Terms = append(out.Terms, e)
				if i > 0 {
					out.Rels = append(out.Rels, relationOf(p.Rels[i-1]))
				}
			}
			if !ok {
				return nil
			}
			return out
		case *lang.PartBinary:
			x, y := set(p.X), set(p.Y)
			if x == nil || y == nil {
				return nil
			}
			op := map[string]ir.PartOp{"cup": ir.PartUnion, "cap": ir.PartMeet, "minus": ir.PartMinus}[p.Op]
			return &ir.PartSet{Op: op, Args: [2]*ir.PartSet{x, y}, Pos: p.OpPos}
		}
		return nil
	}
	resolve = func(d *partDecl) *ir.PartSet {
		if d.set != nil || d.failed {
			return d.set
		}
		d.active = true
		d.set = set(d.stmt.Set)
		d.active = false
		if d.set == nil {
			d.failed = true
		}
		return d.set
	}
	for _, name := range order {
		d := decls[name]
		if s := resolve(d); s != nil {
			m.Parts = append(m.Parts, &PartDef{Name: name, Set: s, Pos: d.stmt.Name.Pos})
		}
	}
	c.partNames = order
}

// partHint lists the names a set may use.
func (c *checker) partHint(name string, parts []string) string {
	cand := append(append([]string{ir.AllParts}, c.m.Sides...), parts...)
	if s := source.Suggest(name, cand); s != "" {
		return fmt.Sprintf("did you mean %q?", s)
	}
	hint := "the sides are " + strings.Join(c.m.Sides, ", ") + " and all"
	if len(parts) > 0 {
		hint += "; the parts are " + strings.Join(parts, ", ")
	}
	return hint + `; declare the names of a mesh file's parts with "sides NAME, ..."`
}

// partTerm checks one term of a midpoint condition: a scalar that depends
// on the coordinates and constants only.
func (c *checker) partTerm(t lang.Expr) ir.Expr {
	e := c.exprWith(t, false)
	if e == nil {
		return nil
	}
	if e.Rank() != 0 {
		c.errorf(t.Pos(), t.End(), "compare scalars, such as x or x^2 + y^2", "a condition compares scalars, but this is a %s", rankName(e.Rank()))
		return nil
	}
	bad := ir.HasField(e) || ir.Contains(e, func(x ir.Expr) bool {
		s, ok := x.(*ir.Sym)
		return ok && s.Kind != ir.Coefficient
	})
	if !bad {
		for _, l := range LowerExpr(c.m, e) {
			bad = bad || ir.Contains(l, func(x ir.Expr) bool {
				switch x.(type) {
				case *ir.Time, *ir.CellQ, *ir.FieldD, *ir.Field:
					return true
				}
				return false
			})
		}
	}
	if bad {
		c.errorf(t.Pos(), t.End(), "a part is fixed: use x, y, z, numbers and constant coefficients", "a condition on the facet midpoint may not depend on the unknowns, on time or on cell quantities")
		return nil
	}
	return e
}

func relationOf(s string) ir.Relation {
	switch s {
	case "<":
		return ir.RelLT
	case ">=":
		return ir.RelGE
	case ">":
		return ir.RelGT
	case "=":
		return ir.RelEQ
	}
	return ir.RelLE
}

// partTeX writes a part set in the LaTeX subset of notes: Γ names in
// roman, conditions in braces, ∪ ∩ ∖ applied from left to right.
func partTeX(s *ir.PartSet) string {
	switch s.Op {
	case ir.PartNamed:
		if s.Name == ir.AllParts {
			return `\partial\Omega`
		}
		return `\mathrm{` + notation.TeXProse(s.Name) + `}`
	case ir.PartWhere:
		var b strings.Builder
		b.WriteString(`\{`)
		for i, t := range s.Terms {
			if i > 0 {
				b.WriteString(" " + map[ir.Relation]string{ir.RelLE: `\le`, ir.RelLT: "<", ir.RelGE: `\ge`, ir.RelGT: ">", ir.RelEQ: "="}[s.Rels[i-1]] + " ")
			}
			b.WriteString(notation.Expr(t, notation.LaTeX, notation.Names{}))
		}
		b.WriteString(`\}`)
		return b.String()
	}
	y := partTeX(s.Args[1])
	if s.Args[1].Op >= ir.PartUnion {
		y = `(` + y + `)`
	}
	op := map[ir.PartOp]string{ir.PartUnion: `\cup`, ir.PartMeet: `\cap`, ir.PartMinus: `\setminus`}[s.Op]
	return partTeX(s.Args[0]) + " " + op + " " + y
}
