package problem

import (
	"errors"
	"slices"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/runtime/mesh"
)

func named(n string) *ir.PartSet { return &ir.PartSet{Op: ir.PartNamed, Name: n} }

func where(terms []ir.Expr, rels ...ir.Relation) *ir.PartSet {
	return &ir.PartSet{Op: ir.PartWhere, Terms: terms, Rels: rels}
}

func setOp(op ir.PartOp, a, b *ir.PartSet) *ir.PartSet {
	return &ir.PartSet{Op: op, Args: [2]*ir.PartSet{a, b}}
}

func partForm(parts []ir.PartDef, claims ...ir.Claim) *ir.LoweredForm {
	for i := range claims {
		claims[i].PartPos = make([]source.Pos, len(claims[i].Parts))
		for k := range claims[i].PartPos {
			claims[i].PartPos[k] = source.Pos{File: "m.fw", Line: 10 + i, Col: 4 + k}
		}
		claims[i].Pos = source.Pos{File: "m.fw", Line: 10 + i, Col: 1}
	}
	return &ir.LoweredForm{Dim: 2, Unknowns: []ir.LoweredUnknown{{Name: "u", Element: mustElement("P1")}}, Parts: parts, Claims: claims}
}

// The tie rule of midpoint conditions (parts.go). On [−1, 1] × [0, 1] with
// three columns of quadrilaterals the bottom facets have their midpoints at
// x = −2/3, 0 and 2/3 (worked out by hand): the middle one lies on the
// threshold x = 0, so it belongs to {x <= 0}, {x >= 0} and {x = 0} but
// not to {x < 0} or {x > 0}. Sets count facets; the expected counts are
// those of the hand-drawn mesh (3 bottom facets, 3 top, 1 left, 1 right).
func TestPartTieRule(t *testing.T) {
	m := mesh.Span2(-1, 1, 0, 1, 3, 1, mesh.Quads)
	x, y := coord(0), coord(1)
	zero := num(0, 1)
	cases := []struct {
		name string
		set  *ir.PartSet
		want int
	}{
		{"x<=0 on bottom", setOp(ir.PartMeet, named("bottom"), where([]ir.Expr{x, zero}, ir.RelLE)), 2},
		{"x<0 on bottom", setOp(ir.PartMeet, named("bottom"), where([]ir.Expr{x, zero}, ir.RelLT)), 1},
		{"x>=0 on bottom", setOp(ir.PartMeet, named("bottom"), where([]ir.Expr{x, zero}, ir.RelGE)), 2},
		{"x>0 on bottom", setOp(ir.PartMeet, named("bottom"), where([]ir.Expr{x, zero}, ir.RelGT)), 1},
		{"x=0", where([]ir.Expr{x, zero}, ir.RelEQ), 2}, // bottom and top middle facets
		{"y=0 is bottom", where([]ir.Expr{y, zero}, ir.RelEQ), 3},
		{"chain -1 < x <= 0", where([]ir.Expr{num(-1, 1), x, zero}, ir.RelLT, ir.RelLE), 4}, // bottom 2, top 2; left side has x = -1
		{"all minus bottom", setOp(ir.PartMinus, named("all"), named("bottom")), 5},
		{"left cup right cup top", setOp(ir.PartUnion, setOp(ir.PartUnion, named("left"), named("right")), named("top")), 5},
		{"bottom cup bottom", setOp(ir.PartUnion, named("bottom"), named("bottom")), 3},
		{"circle", where([]ir.Expr{add(mul(x, x), mul(y, y)), num(1, 4)}, ir.RelLE), 1}, // midpoints: only (0, 0) has x² + y² ≤ 1/4
	}
	for _, c := range cases {
		form := partForm([]ir.PartDef{{Name: "p", Set: c.set}})
		if err := form.Validate(); err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		rm, _, err := ResolveParts(form, m)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if got := len(rm.Boundaries["p"]); got != c.want {
			t.Errorf("%s: %d facets, want %d", c.name, got, c.want)
		}
		if _, ok := m.Boundaries["p"]; ok {
			t.Fatalf("%s: ResolveParts changed the mesh it was given", c.name)
		}
		// Resolving the resolved mesh again keeps the part.
		if _, _, err := ResolveParts(form, rm); err != nil {
			t.Errorf("%s: second resolve: %v", c.name, err)
		}
	}
}

// Complementary strict and non-strict conditions split a boundary with no
// facet in both or in neither, whatever the mesh: checked on a mesh whose
// vertices do not fall on the threshold and on one whose facets straddle it.
func TestPartComplementsSplit(t *testing.T) {
	x := coord(0)
	for _, m := range []*mesh.Mesh{mesh.Span2(-1, 1, 0, 1, 7, 3, mesh.DiagonalUp), mesh.Span2(-1, 1, 0, 1, 8, 4, mesh.Quartered)} {
		form := partForm([]ir.PartDef{
			{Name: "a", Set: where([]ir.Expr{x, num(1, 3)}, ir.RelLE)},
			{Name: "b", Set: where([]ir.Expr{x, num(1, 3)}, ir.RelGT)},
		}, ir.Claim{Unknown: 0, Kind: "value", Parts: []string{"a"}}, ir.Claim{Unknown: 0, Kind: "flux", Parts: []string{"b"}})
		rm, natural, err := ResolveParts(form, m)
		if err != nil {
			t.Fatal(err)
		}
		all := len(m.Boundaries["all"])
		if a, b := len(rm.Boundaries["a"]), len(rm.Boundaries["b"]); a+b != all || a == 0 || b == 0 {
			t.Errorf("%d + %d facets, want a split of %d", a, b, all)
		}
		if natural[0].Facets != 0 || natural[0].Total != all {
			t.Errorf("natural facets %+v, want none of %d", natural[0], all)
		}
	}
}

// A facet claimed by two conditions of one unknown is refused at the
// second condition's place; facets without a condition are counted.
func TestPartClaims(t *testing.T) {
	m := mesh.Span2(-1, 1, 0, 1, 4, 2, mesh.DiagonalUp)
	x := coord(0)
	inlet := setOp(ir.PartMeet, named("bottom"), where([]ir.Expr{x, num(0, 1)}, ir.RelLE))
	form := partForm([]ir.PartDef{{Name: "inlet", Set: inlet}},
		ir.Claim{Unknown: 0, Kind: "value", Parts: []string{"inlet"}},
		ir.Claim{Unknown: 0, Kind: "flux", Parts: []string{"left", "bottom"}})
	_, _, err := ResolveParts(form, m)
	var pe *PartError
	if !errors.As(err, &pe) {
		t.Fatalf("err = %v, want a *PartError", err)
	}
	if pe.Pos.Line != 11 || pe.Pos.Col != 5 || !strings.Contains(pe.Msg, "flux condition on bottom") || !strings.Contains(pe.Msg, "value condition at 10:1") {
		t.Errorf("error %v at %v", pe.Msg, pe.Pos)
	}

	form = partForm([]ir.PartDef{{Name: "inlet", Set: inlet}}, ir.Claim{Unknown: 0, Kind: "value", Parts: []string{"inlet", "top"}})
	_, natural, err := ResolveParts(form, m)
	if err != nil {
		t.Fatal(err)
	}
	// 4x2 cells: 12 boundary facets; inlet 2 and top 4 claimed (by hand).
	if natural[0].Facets != 6 || natural[0].Total != 12 {
		t.Errorf("natural %+v, want 6 of 12", natural[0])
	}
	if s := NaturalText(natural); s != "zero flux (no condition) for u on 6 of 12 boundary facets" {
		t.Errorf("NaturalText = %q", s)
	}
}

// A name the mesh lacks is an input error at its place in the model,
// listing the mesh's parts, and wraps ErrNoSide.
func TestPartMissing(t *testing.T) {
	m := mesh.Span2(0, 1, 0, 1, 2, 2, mesh.DiagonalUp)
	form := partForm(nil, ir.Claim{Unknown: 0, Kind: "value", Parts: []string{"left", "inlet"}})
	_, _, err := ResolveParts(form, m)
	var pe *PartError
	if !errors.As(err, &pe) || !errors.Is(err, ErrNoSide) {
		t.Fatalf("err = %v", err)
	}
	if pe.Pos.Col != 5 || !strings.Contains(pe.Msg, `"inlet"`) || !strings.Contains(pe.Hint, "all, bottom, left, right, top") {
		t.Errorf("%v (hint %q) at %v", pe.Msg, pe.Hint, pe.Pos)
	}
	// A part made from a missing name.
	form = partForm([]ir.PartDef{{Name: "p", Set: setOp(ir.PartMeet, named("outflow"), named("top"))}})
	if _, _, err := ResolveParts(form, m); !errors.Is(err, ErrNoSide) {
		t.Errorf("part from a missing name: %v", err)
	}
	// A defined part whose name the mesh has with other facets.
	form = partForm([]ir.PartDef{{Name: "top", Set: named("bottom")}})
	if _, _, err := ResolveParts(form, m); err == nil || !strings.Contains(err.Error(), "different part of that name") {
		t.Errorf("clash: %v", err)
	}
}

// Midpoints of facets in 1D (a vertex) and 3D (the mean of a face's
// vertices): on 2 × 2 × 2 hexahedra of the unit cube the face z = 0 has 4
// facets with midpoints at x, y ∈ {1/4, 3/4} (by hand), so {z <= 0} is the
// side front, and {z <= 0} ∩ {x + y <= 1/2} is one facet (a midpoint on
// x + y = 1/2 exactly belongs to the non-strict inequality). On the
// interval [0, 1] the facets are the two end points.
func TestPartMidpoints1D3D(t *testing.T) {
	cube := mesh.Span3(0, 1, 0, 1, 0, 1, 2, 2, 2, mesh.Hexes)
	x, y, z := coord(0), coord(1), coord(2)
	zero := num(0, 1)
	check := func(m *mesh.Mesh, dim int, set *ir.PartSet, want int) {
		t.Helper()
		form := partForm([]ir.PartDef{{Name: "p", Set: set}})
		form.Dim = dim
		rm, _, err := ResolveParts(form, m)
		if err != nil {
			t.Fatal(err)
		}
		if got := len(rm.Boundaries["p"]); got != want {
			t.Errorf("%d facets, want %d", got, want)
		}
	}
	front := where([]ir.Expr{z, zero}, ir.RelLE)
	check(cube, 3, front, 4)
	check(cube, 3, setOp(ir.PartMinus, front, named("front")), 0)
	check(cube, 3, setOp(ir.PartMeet, front, where([]ir.Expr{add(x, y), num(1, 2)}, ir.RelLE)), 1)
	check(cube, 3, setOp(ir.PartMeet, front, where([]ir.Expr{add(x, y), num(1, 2)}, ir.RelLT)), 0)
	line, err := mesh.Load("span:0,1:5")
	if err != nil {
		t.Fatal(err)
	}
	check(line, 1, where([]ir.Expr{x, num(1, 2)}, ir.RelGT), 1)
	check(line, 1, where([]ir.Expr{x, x}, ir.RelEQ), 2)
}

// A constraint unknown (one its own equation does not contain, like the
// pressure of an incompressible flow) has no flux, so the summary does not
// report its free facets.
func TestNaturalTextSkipsConstraints(t *testing.T) {
	n := []NaturalFacets{{Unknown: "vel", Facets: 0, Total: 8}, {Unknown: "p", Facets: 8, Total: 8, Constraint: true}}
	if s := NaturalText(n); s != "" {
		t.Errorf("NaturalText = %q, want none", s)
	}
	n[0].Facets = 2
	if s := NaturalText(n); s != "zero flux (no condition) for vel on 2 of 8 boundary facets" {
		t.Errorf("NaturalText = %q", s)
	}
}

// Set algebra on random parts: for random sets A, B built from sides and
// midpoint conditions, |A ∪ B| + |A ∩ B| = |A| + |B|, A ∖ B and B are
// disjoint, (A ∖ B) ∪ (A ∩ B) = A, and every result is sorted, without
// repeats and inside the boundary (inclusion–exclusion; identities of set
// algebra).
func TestPartSetAlgebra(t *testing.T) {
	m := mesh.Span2(-1, 1, 0, 1, 9, 5, mesh.Quartered)
	x, y := coord(0), coord(1)
	leaves := []*ir.PartSet{
		named("bottom"), named("top"), named("left"), named("right"), named("all"),
		where([]ir.Expr{x, num(0, 1)}, ir.RelLE), where([]ir.Expr{x, num(1, 3)}, ir.RelGT),
		where([]ir.Expr{num(1, 4), y, num(3, 4)}, ir.RelLT, ir.RelLE),
		where([]ir.Expr{add(mul(x, x), mul(y, y)), num(1, 2)}, ir.RelGE),
	}
	rng := uint64(12345)
	next := func(n int) int { rng = rng*6364136223846793005 + 1442695040888963407; return int(rng>>33) % n }
	var random func(depth int) *ir.PartSet
	random = func(depth int) *ir.PartSet {
		if depth == 0 || next(3) == 0 {
			return leaves[next(len(leaves))]
		}
		return setOp([]ir.PartOp{ir.PartUnion, ir.PartMeet, ir.PartMinus}[next(3)], random(depth-1), random(depth-1))
	}
	size := func(s *ir.PartSet) []mesh.FacetRef {
		t.Helper()
		rm, _, err := ResolveParts(partForm([]ir.PartDef{{Name: "p", Set: s}}), m)
		if err != nil {
			t.Fatal(err)
		}
		f := rm.Boundaries["p"]
		for i := 1; i < len(f); i++ {
			if mesh.CompareFacetRef(f[i-1], f[i]) >= 0 {
				t.Fatalf("facets not sorted or repeated: %v", f)
			}
		}
		return f
	}
	all := map[mesh.FacetRef]bool{}
	for _, f := range m.Boundaries["all"] {
		all[f] = true
	}
	for trial := 0; trial < 200; trial++ {
		a, b := random(3), random(3)
		fa, fb := size(a), size(b)
		cup, meet := size(setOp(ir.PartUnion, a, b)), size(setOp(ir.PartMeet, a, b))
		if len(cup)+len(meet) != len(fa)+len(fb) {
			t.Fatalf("|A∪B| + |A∩B| = %d + %d, |A| + |B| = %d + %d", len(cup), len(meet), len(fa), len(fb))
		}
		if n := len(size(setOp(ir.PartMeet, setOp(ir.PartMinus, a, b), b))); n != 0 {
			t.Fatalf("(A∖B) ∩ B has %d facets", n)
		}
		if back := size(setOp(ir.PartUnion, setOp(ir.PartMinus, a, b), setOp(ir.PartMeet, a, b))); !slices.Equal(back, fa) {
			t.Fatalf("(A∖B) ∪ (A∩B) ≠ A")
		}
		for _, f := range cup {
			if !all[f] {
				t.Fatalf("facet %v is not on the boundary", f)
			}
		}
	}
}
