package problem

import (
	"fmt"
	"maps"
	"math"
	"slices"
	"strings"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/tape"
)

// Boundary parts on a mesh. A lowered form names boundary parts in its
// value conditions and boundary integrals: names the mesh supplies (its
// sides or file parts, and "all"), and parts the model defines
// (ir.PartDef), which ResolveParts computes here, facet by facet.
//
// A midpoint condition {T0 R0 T1 ...} holds on a boundary facet when every
// comparison holds at the facet's midpoint (the mean of its vertices).
// Tie rule: a comparison a R b is decided on d = a − b with the tolerance
// ε = PartTolerance × the diameter of the mesh's bounding box, so that
// rounding in the coordinates cannot move a facet lying on the threshold:
// a ≤ b holds when d ≤ ε, a < b when d < −ε, a ≥ b when d ≥ −ε, a > b when
// d > ε, and a = b when |d| ≤ ε. A midpoint exactly on the threshold thus
// belongs to the part of a non-strict inequality and not to that of a
// strict one, and {x <= 0} and {x > 0} split a boundary with no facet in
// both or in neither.

// PartTolerance is the tolerance of midpoint conditions relative to the
// diameter of the mesh's bounding box.
const PartTolerance = 1e-9

// PartError is a boundary part that does not fit the mesh, or a facet
// that two conditions claim; Pos is where the model names the part or
// states the condition. It is an input error.
type PartError struct {
	Pos  source.Pos
	Msg  string
	Hint string
	Err  error // ErrNoSide for a name the mesh lacks
}

func (e *PartError) Unwrap() error { return e.Err }

func (e *PartError) Error() string {
	if e.Pos.IsValid() {
		return e.Pos.String() + ": " + e.Msg
	}
	return e.Msg
}

// NaturalFacets counts, for one unknown, the boundary facets that no
// condition claims: the natural condition (zero flux) holds there.
type NaturalFacets struct {
	Unknown string
	Facets  int
	Total   int // boundary facets of the mesh
	// Constraint marks an unknown that its own equation does not contain
	// (the pressure of an incompressible flow): it has no flux, and
	// NaturalText leaves it out.
	Constraint bool
}

// ResolveParts returns m with the facets of the form's parts added to its
// boundaries (a copy: m itself is not changed; m is returned as it is when
// the form defines no parts), after checking that every name the form
// uses exists on the mesh, that no part the model defines has the name of
// a different part of the mesh, and that no facet is claimed by two
// conditions of one unknown. It also counts the facets of each unknown
// that no condition claims. Resolving a mesh again with the same form is
// harmless: a part already on the mesh with the same facets is kept.
func ResolveParts(form *ir.LoweredForm, m *mesh.Mesh) (*mesh.Mesh, []NaturalFacets, error) {
	defined := map[string]*ir.PartDef{}
	for i := range form.Parts {
		defined[form.Parts[i].Name] = &form.Parts[i]
	}
	have := func() string { return strings.Join(m.BoundaryNames(), ", ") }
	missing := func(name string, pos source.Pos, what string) error {
		hint := "the mesh has " + have()
		if s := source.Suggest(name, slices.DeleteFunc(m.BoundaryNames(), func(n string) bool { return n == mesh.All })); s != "" {
			hint = fmt.Sprintf("did you mean %q? The mesh has %s", s, have())
		}
		return &PartError{Pos: pos, Msg: fmt.Sprintf("%s %q, which the mesh does not have", what, name), Hint: hint, Err: ErrNoSide}
	}
	// Every mesh name that a condition or a part uses.
	for _, c := range form.Claims {
		for i, name := range c.Parts {
			if _, ok := defined[name]; ok {
				continue
			}
			if _, ok := m.Boundaries[name]; !ok {
				return nil, nil, missing(name, claimPos(c, i), "the model sets a condition on")
			}
		}
	}
	for _, p := range form.Parts {
		for _, name := range p.Set.Names(nil) {
			if _, ok := m.Boundaries[name]; !ok {
				pos, _ := p.Set.NamedAt(name)
				return nil, nil, missing(name, pos, fmt.Sprintf("part %s is made from", p.Name))
			}
		}
	}
	for _, d := range form.Dirichlet {
		if _, ok := defined[d.Side]; !ok {
			if _, ok := m.Boundaries[d.Side]; !ok {
				return nil, nil, missing(d.Side, source.Pos{}, "the model sets a value on")
			}
		}
	}
	for _, side := range form.Sides() {
		if _, ok := defined[side]; !ok {
			if _, ok := m.Boundaries[side]; !ok {
				return nil, nil, missing(side, source.Pos{}, "the model integrates over")
			}
		}
	}
	out := m
	if len(form.Parts) > 0 {
		ev, err := newPartEvaluator(m)
		if err != nil {
			return nil, nil, err
		}
		cp := *m
		cp.Boundaries = maps.Clone(m.Boundaries)
		for _, p := range form.Parts {
			facets, err := ev.facets(p.Set)
			if err != nil {
				return nil, nil, &PartError{Pos: p.Pos, Msg: fmt.Sprintf("part %s: %v", p.Name, err)}
			}
			if old, ok := m.Boundaries[p.Name]; ok && !slices.Equal(old, facets) {
				return nil, nil, &PartError{Pos: p.Pos, Msg: fmt.Sprintf("the model defines part %s, and the mesh has a different part of that name", p.Name),
					Hint: "rename the part in the model (the mesh has " + have() + ")"}
			}
			cp.Boundaries[p.Name] = facets
		}
		out = &cp
	}
	natural, err := checkClaims(form, out)
	if err != nil {
		return nil, nil, err
	}
	return out, natural, nil
}

// checkClaims refuses a facet that two conditions of one unknown claim,
// and counts the facets that none claims.
func checkClaims(form *ir.LoweredForm, m *mesh.Mesh) ([]NaturalFacets, error) {
	all := m.Boundaries[mesh.All]
	var out []NaturalFacets
	for u, lu := range form.Unknowns {
		owner := map[mesh.FacetRef]int{}
		for ci, c := range form.Claims {
			if c.Unknown != u {
				continue
			}
			for pi, name := range c.Parts {
				for _, f := range m.Boundaries[name] {
					prev, dup := owner[f]
					if !dup {
						owner[f] = ci
						continue
					}
					p := form.Claims[prev]
					why := "two conditions of one kind on a facet would both apply"
					if p.Kind != c.Kind {
						why = "a facet takes one kind of condition"
					}
					x := facetMidpoint(m, f)
					return nil, &PartError{Pos: claimPos(c, pi),
						Msg: fmt.Sprintf("the facet at %s is claimed for %s by this %s condition on %s and by the %s condition at %d:%d",
							formatPoint(x), lu.Name, c.Kind, name, p.Kind, p.Pos.Line, p.Pos.Col),
						Hint: why + "; make the parts disjoint (part B = A minus C)"}
				}
			}
		}
		out = append(out, NaturalFacets{Unknown: lu.Name, Facets: len(all) - len(owner), Total: len(all), Constraint: lu.Constraint})
	}
	return out, nil
}

// NaturalText describes the facets without a condition, one phrase per
// unknown that has some, or "" when every facet has a condition.
func NaturalText(n []NaturalFacets) string {
	var parts []string
	for _, f := range n {
		if f.Facets > 0 && !f.Constraint {
			parts = append(parts, fmt.Sprintf("%s on %d of %d boundary facets", f.Unknown, f.Facets, f.Total))
		}
	}
	if len(parts) == 0 {
		return ""
	}
	return "zero flux (no condition) for " + strings.Join(parts, "; ")
}

func formatPoint(x []float64) string {
	s := make([]string, len(x))
	for i, v := range x {
		s[i] = fmt.Sprintf("%.6g", v)
	}
	return "(" + strings.Join(s, ", ") + ")"
}

// facetMidpoint is the mean of a facet's vertices.
func facetMidpoint(m *mesh.Mesh, f mesh.FacetRef) []float64 {
	x := make([]float64, m.Dim)
	vs := m.FacetVertices(f, nil)
	for _, v := range vs {
		for k, c := range m.Vertex(int(v)) {
			x[k] += c
		}
	}
	for k := range x {
		x[k] /= float64(len(vs))
	}
	return x
}

// partEvaluator finds the facets of part sets on one mesh.
type partEvaluator struct {
	m   *mesh.Mesh
	eps float64
	mid [][]float64 // midpoints of the boundary facets, in the order of Boundaries["all"]
}

func newPartEvaluator(m *mesh.Mesh) (*partEvaluator, error) {
	all, ok := m.Boundaries[mesh.All]
	if !ok {
		return nil, fmt.Errorf("problem: the mesh has no boundary %q", mesh.All)
	}
	ev := &partEvaluator{m: m}
	lo, hi := make([]float64, m.Dim), make([]float64, m.Dim)
	for k := range lo {
		lo[k], hi[k] = math.Inf(1), math.Inf(-1)
	}
	for v := 0; v < m.NumVertices(); v++ {
		for k, c := range m.Vertex(v) {
			lo[k], hi[k] = min(lo[k], c), max(hi[k], c)
		}
	}
	diam := 0.0
	for k := range lo {
		diam += (hi[k] - lo[k]) * (hi[k] - lo[k])
	}
	ev.eps = PartTolerance * math.Sqrt(diam)
	for _, f := range all {
		ev.mid = append(ev.mid, facetMidpoint(m, f))
	}
	return ev, nil
}

// facets returns the facets of s, sorted by (cell, facet).
func (ev *partEvaluator) facets(s *ir.PartSet) ([]mesh.FacetRef, error) {
	switch s.Op {
	case ir.PartNamed:
		return ev.m.Boundaries[s.Name], nil
	case ir.PartWhere:
		return ev.where(s)
	}
	a, err := ev.facets(s.Args[0])
	if err != nil {
		return nil, err
	}
	b, err := ev.facets(s.Args[1])
	if err != nil {
		return nil, err
	}
	in := map[mesh.FacetRef]bool{}
	for _, f := range b {
		in[f] = true
	}
	var out []mesh.FacetRef
	switch s.Op {
	case ir.PartUnion:
		out = append(slices.Clone(a), b...)
		slices.SortFunc(out, mesh.CompareFacetRef)
		return slices.Compact(out), nil
	case ir.PartMeet:
		for _, f := range a {
			if in[f] {
				out = append(out, f)
			}
		}
	case ir.PartMinus:
		for _, f := range a {
			if !in[f] {
				out = append(out, f)
			}
		}
	}
	return out, nil
}

// where evaluates a midpoint condition on every boundary facet.
func (ev *partEvaluator) where(s *ir.PartSet) ([]mesh.FacetRef, error) {
	slots := &tape.Slots{}
	p, err := tape.Compile(s.Terms, slots)
	if err != nil {
		return nil, err
	}
	if len(slots.Previous()) > 0 || slices.ContainsFunc(s.Terms, func(e ir.Expr) bool { return tape.ExprDeps(e)&tape.DepCell != 0 }) {
		return nil, fmt.Errorf("a condition reads the solution or a cell quantity")
	}
	env := make([]float64, slots.Len())
	val := make([]float64, len(s.Terms))
	stack := make([]float64, p.StackSize())
	var out []mesh.FacetRef
	for i, f := range ev.m.Boundaries[mesh.All] {
		copy(env[tape.SlotX:], ev.mid[i])
		p.Eval(env, val, stack)
		ok := true
		for r, rel := range s.Rels {
			d := val[r] - val[r+1]
			if math.IsNaN(d) {
				return nil, fmt.Errorf("the condition is not a number at the facet midpoint %s", formatPoint(ev.mid[i]))
			}
			switch rel {
			case ir.RelLE:
				ok = d <= ev.eps
			case ir.RelLT:
				ok = d < -ev.eps
			case ir.RelGE:
				ok = d >= -ev.eps
			case ir.RelGT:
				ok = d > ev.eps
			case ir.RelEQ:
				ok = math.Abs(d) <= ev.eps
			}
			if !ok {
				break
			}
		}
		if ok {
			out = append(out, f)
		}
	}
	return out, nil
}

// partsMissing reports whether a part the form defines is not on m yet.
func partsMissing(form *ir.LoweredForm, m *mesh.Mesh) bool {
	for _, p := range form.Parts {
		if _, ok := m.Boundaries[p.Name]; !ok {
			return true
		}
	}
	return false
}

// claimPos is where part i of a claim is written (the claim's position
// when the form does not say).
func claimPos(c ir.Claim, i int) source.Pos {
	if i < len(c.PartPos) && c.PartPos[i].IsValid() {
		return c.PartPos[i]
	}
	return c.Pos
}
