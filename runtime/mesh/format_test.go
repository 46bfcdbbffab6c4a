package mesh

import (
	"bytes"
	"errors"
	"maps"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
)

func equalMesh(a, b *Mesh) bool {
	return a.Dim == b.Dim && a.Cell == b.Cell && slices.Equal(a.Coords, b.Coords) &&
		slices.Equal(a.Cells, b.Cells) &&
		maps.EqualFunc(a.Boundaries, b.Boundaries, func(x, y []FacetRef) bool { return slices.Equal(x, y) })
}

func TestRoundTrip(t *testing.T) {
	for _, m := range []*Mesh{
		Interval(0, 1, 5, 1.1),
		Rectangle(0.1, 0.7, -1.0/3, 2, 3, 2, DiagonalUp),
		Rectangle(0, 1, 0, 1, 2, 2, Crossed),
		Rectangle(0, 1, 0, 1, 2, 3, Quads),
		Box(0, 1, 0, 2, 0, 0.3, 2, 1, 2, Kuhn),
		Box(0, 1, 0, 2, 0, 0.3, 2, 1, 2, Hexes),
	} {
		var buf bytes.Buffer
		if err := Write(&buf, m); err != nil {
			t.Fatal(err)
		}
		got, err := Read(&buf)
		if err != nil {
			t.Fatalf("%v: %v", m.Cell, err)
		}
		if !equalMesh(m, got) {
			t.Errorf("%v: round trip differs", m.Cell)
		}
	}
	// Through a file and Load.
	p := filepath.Join(t.TempDir(), "square.mesh")
	m := Rectangle(0, 1, 0, 1, 2, 2, DiagonalDown)
	if err := WriteFile(p, m); err != nil {
		t.Fatal(err)
	}
	got, err := Load(p)
	if err != nil || !equalMesh(m, got) {
		t.Errorf("Load(file): %v", err)
	}
}

// The example in the package doc parses, with the boundaries it names.
func TestDocExample(t *testing.T) {
	src := `formwright-mesh 1
dimension 2
cell triangle   # two triangles
vertices 4
0 0
1 0
1 1
0 1
cells 2
0 1 2
0 2 3
boundary bottom 1
0 1
boundary left 1
3 0
end
`
	m, err := Read(strings.NewReader(src))
	if err != nil {
		t.Fatal(err)
	}
	// bottom = facet (0,1) of cell 0 = local facet 2 (opposite vertex 2);
	// left = facet (3,0) of cell 1 (vertices 0,2,3) = local facet 1.
	want := map[string][]FacetRef{
		"bottom": {{0, 2}}, "left": {{1, 1}},
		All: {{0, 0}, {0, 2}, {1, 0}, {1, 1}},
	}
	if !maps.EqualFunc(m.Boundaries, want, func(a, b []FacetRef) bool { return slices.Equal(a, b) }) {
		t.Errorf("boundaries %v, want %v", m.Boundaries, want)
	}
}

const good = `formwright-mesh 1
dimension 2
cell triangle
vertices 4
0 0
1 0
1 1
0 1
cells 2
0 1 2
0 2 3
boundary bottom 1
0 1
end
`

// edit replaces line n (1-based) of good by repl (may be several lines or empty).
func edit(n int, repl string) string {
	lines := strings.Split(good, "\n")
	lines[n-1] = repl
	return strings.Join(lines, "\n")
}

func TestReadErrors(t *testing.T) {
	for _, tc := range []struct {
		src  string
		line int
		re   string
	}{
		{edit(1, "formwright-mesh 2"), 1, "unsupported version"},
		{edit(1, "mesh 1"), 1, "not a formwright mesh file"},
		{edit(2, "dimension 4"), 2, "bad dimension"},
		{edit(3, "cell tetrahedron"), 3, "has dimension 3"},
		{edit(3, "cell pyramid"), 3, "unknown cell"},
		{edit(4, "vertices 5"), 9, "vertex 4 missing"},
		{edit(4, "vertices -1"), 4, "bad vertex count"},
		{edit(6, "1 zero"), 6, `bad coordinate "zero"`},
		{edit(6, "1 0 0"), 6, "want 2 coordinates, got 3"},
		{edit(6, "1 inf"), 6, "bad coordinate"},
		{edit(9, "cells 3"), 12, "cell 2 missing"},
		{edit(10, "0 1 7"), 10, `vertex index 7 out of range \[0,4\)`},
		{edit(10, "0 1"), 10, "has 3 vertices, got 2"},
		{edit(10, "0 2 1"), 10, "cell 0 is inverted"},
		{edit(10, "0 1 1"), 10, "cell 0 is inverted or degenerate"},
		{edit(11, "0 2 x"), 11, `bad vertex index "x"`},
		{edit(13, "1 3"), 13, "not a facet of any cell"},
		{edit(13, "0 2"), 13, "interior facet"},
		{edit(13, "0 9"), 13, "out of range"},
		{edit(12, "boundary bottom 2"), 14, "facet 1 missing"},
		{edit(12, "boundary all 1"), 12, "reserved"},
		{edit(12, "boundary 1x 1"), 12, "bad boundary name"},
		{edit(12, "boundary bottom 1\n0 1\nboundary bottom 1"), 14, "defined twice"},
		{edit(12, "boundary bottom 2\n0 1\n1 0"), 14, "twice"},
		{edit(14, ""), 15, "unexpected end of file"},
		{edit(14, "end\nvertices 2"), 15, "after"},
		{edit(12, "faces 1"), 12, `want "boundary" or "end"`},
		{edit(9, "cell 2"), 9, `want "cells"`},
	} {
		_, err := Read(strings.NewReader(tc.src))
		var fe *FormatError
		if !errors.As(err, &fe) {
			t.Errorf("want FormatError matching %q at line %d, got %v", tc.re, tc.line, err)
			continue
		}
		if fe.Line != tc.line || !regexp.MustCompile(tc.re).MatchString(fe.Msg) {
			t.Errorf("got %q (line %d), want line %d matching %q", err, fe.Line, tc.line, tc.re)
		}
	}
	if _, err := Read(strings.NewReader(good)); err != nil {
		t.Errorf("good file: %v", err)
	}
}

func TestReadInvertedQuad(t *testing.T) {
	src := "formwright-mesh 1\ndimension 2\ncell quadrilateral\nvertices 4\n0 0\n1 0\n0.2 0.2\n0 1\ncells 1\n0 1 2 3\nend\n"
	// Vertex 2 pulled inside: the corner Jacobian at vertex 2 is negative.
	_, err := Read(strings.NewReader(src))
	var fe *FormatError
	if !errors.As(err, &fe) || fe.Line != 10 || !strings.Contains(fe.Msg, "inverted") {
		t.Errorf("got %v, want inverted-cell error at line 10", err)
	}
}

func TestParseSpec(t *testing.T) {
	sp, err := ParseSpec("rect:0,1,0,2:128x64:crossed")
	if err != nil || sp.Kind != "rect" || !slices.Equal(sp.Bounds, []float64{0, 1, 0, 2}) || !slices.Equal(sp.N, []int{128, 64}) || sp.Pattern != Crossed {
		t.Errorf("rect spec: %+v, %v", sp, err)
	}
	sp, err = ParseSpec("interval:0,1:64:graded=1.05")
	if err != nil || sp.Grading != 1.05 || sp.N[0] != 64 {
		t.Errorf("interval spec: %+v, %v", sp, err)
	}
	sp, err = ParseSpec("box:0,1,0,1,0,1:2x3x4")
	if err != nil || sp.Pattern != Kuhn || !slices.Equal(sp.N, []int{2, 3, 4}) {
		t.Errorf("box spec: %+v, %v", sp, err)
	}
	if sp, err := ParseSpec("rect:0,1,0,1:4x4"); err != nil || sp.Pattern != DiagonalUp {
		t.Errorf("default pattern: %+v %v", sp, err)
	}
	if sp, err := ParseSpec("meshes/a.mesh"); err != nil || sp.Path != "meshes/a.mesh" {
		t.Errorf("path: %+v %v", sp, err)
	}
	m, err := Load("box:0,1,0,1,0,1:2x2x2:hex")
	if err != nil || m.NumCells() != 8 {
		t.Errorf("Load box: %v", err)
	}
	for _, tc := range []struct {
		spec string
		col  int
		re   string
	}{
		{"rect:0,1,0:4x4", 6, "want 4 comma-separated bounds, got 3"},
		{"rect:0,1,0,a:4x4", 12, `bad bound "a"`},
		{"rect:0,1,1,0:4x4", 12, "not greater"},
		{"rect:0,1,0,1:4", 14, "want 2 cell counts"},
		{"rect:0,1,0,1:4x0", 16, `bad cell count "0"`},
		{"rect:0,1,0,1:4x4:hex", 18, `unknown rect pattern "hex"`},
		{"rect:0,1,0,1:4x4:tri:x", 22, "unexpected field"},
		{"rect:0,1,0,1", 13, "want rect:BOUNDS:COUNTS"},
		{"box:0,1,0,1,0,1:2x2x2:quad", 23, `unknown box pattern "quad"`},
		{"interval:0,1:8:graded=-2", 23, "bad grading"},
		{"interval:0,1:8:fine", 16, "unknown interval option"},
		{"rectangle:0,1,0,1:4x4", 1, `unknown mesh kind "rectangle"`},
		{"", 1, "empty"},
	} {
		_, err := ParseSpec(tc.spec)
		var se *SpecError
		if !errors.As(err, &se) {
			t.Errorf("%q: want SpecError, got %v", tc.spec, err)
			continue
		}
		if se.Col != tc.col || !regexp.MustCompile(tc.re).MatchString(se.Msg) {
			t.Errorf("%q: got col %d %q, want col %d matching %q", tc.spec, se.Col, se.Msg, tc.col, tc.re)
		}
	}
	// Detail puts the caret under the column.
	_, err = ParseSpec("rect:0,1,0,a:4x4")
	d := err.(*SpecError).Detail()
	lines := strings.Split(d, "\n")
	if len(lines) != 3 || strings.Index(lines[2], "^")-1 != strings.Index(lines[1], "a")-1 {
		t.Errorf("caret misplaced:\n%s", d)
	}
	if _, err := Load(filepath.Join(t.TempDir(), "missing.mesh")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
}
