package ir

import (
	"fmt"

	"github.com/formwright/formwright/lang/source"
)

// Boundary parts: sets of boundary facets that a model names in its
// conditions. A part is a name the mesh supplies (a side of a built-in
// mesh, a named part of a mesh file, or All, the whole boundary), or a set
// that the model defines ("part NAME = SET"): a selection by a condition on
// the facet midpoint, and unions, intersections and differences of parts.
// The runtime turns each PartDef into facets on the mesh it solves on.

// AllParts is the name of the whole boundary of any mesh.
const AllParts = "all"

// PartOp is the kind of a PartSet node.
type PartOp uint8

// The part set operations.
const (
	PartNamed PartOp = iota // the part Name of the mesh
	PartWhere               // the boundary facets whose midpoint satisfies Terms[0] Rels[0] Terms[1] ...
	PartUnion               // Args[0] ∪ Args[1]
	PartMeet                // Args[0] ∩ Args[1]
	PartMinus               // Args[0] \ Args[1]
)

// Relation is a comparison in a midpoint condition.
type Relation uint8

// The relations.
const (
	RelLE Relation = iota // ≤
	RelLT                 // <
	RelGE                 // ≥
	RelGT                 // >
	RelEQ                 // =
)

var relationText = [...]string{"<=", "<", ">=", ">", "="}

func (r Relation) String() string { return relationText[r] }

// PartSet is a set of boundary facets, as a tree.
type PartSet struct {
	Op   PartOp
	Name string // PartNamed
	// Terms and Rels hold a chain of comparisons (PartWhere): the facet
	// belongs when Terms[i] Rels[i] Terms[i+1] holds for every i at its
	// midpoint. Each term is a scalar expression of the coordinates (lowered
	// forms: only Num, Const, Coord, Add, Mul, Pow, Call and Named).
	Terms []Expr
	Rels  []Relation
	Args  [2]*PartSet // PartUnion, PartMeet, PartMinus
	Pos   source.Pos
}

// PartDef is a part that the model defines.
type PartDef struct {
	Name string
	Set  *PartSet
	Pos  source.Pos
}

// Names appends to dst the mesh part names that s refers to, without
// repeats, in the order they appear.
func (s *PartSet) Names(dst []string) []string {
	if s == nil {
		return dst
	}
	if s.Op == PartNamed {
		for _, n := range dst {
			if n == s.Name {
				return dst
			}
		}
		return append(dst, s.Name)
	}
	dst = s.Args[0].Names(dst)
	return s.Args[1].Names(dst)
}

// NamedAt returns the position of the first reference to mesh part name
// in s, and whether there is one.
func (s *PartSet) NamedAt(name string) (source.Pos, bool) {
	if s == nil {
		return source.Pos{}, false
	}
	if s.Op == PartNamed {
		return s.Pos, s.Name == name
	}
	if p, ok := s.Args[0].NamedAt(name); ok {
		return p, true
	}
	return s.Args[1].NamedAt(name)
}

// Map returns a copy of s with every term of its conditions replaced by
// f(term); f returns the term (or its replacement) and an error.
func (s *PartSet) Map(f func(Expr) (Expr, error)) (*PartSet, error) {
	if s == nil {
		return nil, nil
	}
	out := *s
	out.Terms = make([]Expr, len(s.Terms))
	for i, t := range s.Terms {
		e, err := f(t)
		if err != nil {
			return nil, err
		}
		out.Terms[i] = e
	}
	for i := range s.Args {
		a, err := s.Args[i].Map(f)
		if err != nil {
			return nil, err
		}
		out.Args[i] = a
	}
	return &out, nil
}

// validate checks the shape of a part set.
func (s *PartSet) validate() error {
	if s == nil {
		return fmt.Errorf("empty part set")
	}
	switch s.Op {
	case PartNamed:
		if s.Name == "" {
			return fmt.Errorf("part without a name")
		}
	case PartWhere:
		if len(s.Terms) < 2 || len(s.Rels) != len(s.Terms)-1 {
			return fmt.Errorf("condition with %d terms and %d relations", len(s.Terms), len(s.Rels))
		}
		for _, t := range s.Terms {
			if t == nil || t.Rank() != 0 {
				return fmt.Errorf("condition term is not a scalar")
			}
			bad := false
			Inspect(t, func(e Expr) bool {
				switch e.(type) {
				case *Num, *Coord, *Add, *Mul, *Pow, *Call, *Const, *Named:
				default:
					bad = true
				}
				return !bad
			})
			if bad {
				return fmt.Errorf("condition term %s is not a function of the coordinates", t)
			}
		}
		for _, r := range s.Rels {
			if int(r) >= len(relationText) {
				return fmt.Errorf("relation %d", r)
			}
		}
	case PartUnion, PartMeet, PartMinus:
		for _, a := range s.Args {
			if err := a.validate(); err != nil {
				return err
			}
		}
	default:
		return fmt.Errorf("part operation %d", s.Op)
	}
	return nil
}

// bcKinds are the kinds of a Claim.
var bcKinds = []string{"value", "flux", "robin"}

// Claim says where one boundary condition of the model applies: the
// conditions of unknown Unknown of kind Kind ("value", "flux" or "robin")
// hold on the parts Parts, written at PartPos in the model (Pos is the
// condition's). The runtime checks claims against the mesh: every part
// exists, no facet is claimed twice for one unknown, and it reports the
// facets that no condition claims (they take the natural condition). Claims
// are not part of FormHash: kernels do not read them.
type Claim struct {
	Unknown int
	Kind    string
	Parts   []string
	PartPos []source.Pos
	Pos     source.Pos
}
