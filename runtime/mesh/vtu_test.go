package mesh

import (
	"bytes"
	"errors"
	"fmt"
	"maps"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/formwright/formwright/runtime/cell"
)

// meshDiff describes the first difference between two meshes ("" if
// equal): dimension, cell type, coordinates (exactly), cells, boundary
// parts and regions.
func meshDiff(a, b *Mesh) string {
	switch {
	case a.Dim != b.Dim || a.Cell != b.Cell:
		return fmt.Sprintf("%dD %v vs %dD %v", a.Dim, a.Cell, b.Dim, b.Cell)
	case !slices.Equal(a.Coords, b.Coords):
		return fmt.Sprintf("coordinates differ (%d vs %d values)", len(a.Coords), len(b.Coords))
	case !slices.Equal(a.Cells, b.Cells):
		return fmt.Sprintf("cells differ (%d vs %d entries)", len(a.Cells), len(b.Cells))
	case !slices.Equal(a.Regions, b.Regions):
		return "regions differ"
	case !maps.EqualFunc(a.Boundaries, b.Boundaries, func(x, y []FacetRef) bool { return slices.Equal(x, y) }):
		return fmt.Sprintf("boundaries differ: %v vs %v", a.BoundaryNames(), b.BoundaryNames())
	}
	return ""
}

// sampleMeshes are one mesh of every cell type, with extra boundary parts
// (overlapping the sides, and an empty one) and regions on some.
func sampleMeshes() map[string]*Mesh {
	ms := map[string]*Mesh{
		"interval":       Span1(0, 1, 5, 1.1),
		"triangle":       Span2(0.1, 0.7, -1.0/3, 2, 3, 2, DiagonalUp),
		"triangle-flip":  Span2(0, 1, 0, 1, 2, 3, DiagonalDown),
		"quartered":      Span2(0, 1, 0, 1, 2, 2, Quartered),
		"quadrilateral":  Span2(0, 1, 0, 1, 2, 3, Quads),
		"tetrahedron":    Span3(0, 1, 0, 2, 0, 0.3, 2, 1, 2, Kuhn),
		"hexahedron":     Span3(0, 1, 0, 2, 0, 0.3, 2, 1, 2, Hexes),
		"refined-square": Refine(Span2(0, 1, 0, 1, 1, 1, DiagonalUp)),
		"lshape":         lShape(DiagonalUp),
		"hole":           squareWithHole(Quads),
	}
	q := ms["quadrilateral"]
	q.Boundaries["inlet-2"] = slices.Clone(q.Boundaries[Left][:1])
	q.Boundaries["empty"] = nil
	q.Regions = []int32{0, 1, 1, 7, 0, 2}
	h := ms["hexahedron"]
	h.Boundaries["lid"] = append(slices.Clone(h.Boundaries[Top]), h.Boundaries[Back]...)
	slices.SortFunc(h.Boundaries["lid"], CompareFacetRef)
	h.Regions = make([]int32, h.NumCells())
	h.Regions[3] = 4
	return ms
}

// Read(Write(m)) equals m for every cell type and both encodings, through
// a stream and through a file and Load.
func TestVTURoundTrip(t *testing.T) {
	for name, m := range sampleMeshes() {
		for _, enc := range []Encoding{Binary, ASCII} {
			var buf bytes.Buffer
			if err := WriteVTU(&buf, m, enc); err != nil {
				t.Fatalf("%s: %v", name, err)
			}
			got, err := ReadVTU(&buf, ReadOptions{})
			if err != nil {
				t.Fatalf("%s enc %d: %v", name, enc, err)
			}
			if d := meshDiff(m, got); d != "" {
				t.Errorf("%s enc %d: %s", name, enc, d)
			}
		}
	}
	p := filepath.Join(t.TempDir(), "square.vtu")
	m := Span2(0, 1, 0, 1, 2, 2, DiagonalDown)
	if err := WriteVTUFile(p, m, Binary); err != nil {
		t.Fatal(err)
	}
	got, err := Load(p)
	if err != nil {
		t.Fatal(err)
	}
	if d := meshDiff(m, got); d != "" {
		t.Errorf("Load(file): %s", d)
	}
}

// vtu builds an ascii .vtu text by hand (not with WriteVTU), for reader
// tests: points (3 coordinates each), cells as VTK node lists with their
// VTK types, optional part numbers and a name table.
type vtu struct {
	points  [][3]float64
	cells   [][]int
	types   []int
	part    []int // nil: no PartArray
	ids     []int
	names   []string
	offsets []int // nil: computed
}

func (v vtu) String() string {
	var b strings.Builder
	b.WriteString(`<?xml version="1.0"?>
<VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" header_type="UInt64">
  <UnstructuredGrid>
`)
	if v.ids != nil {
		b.WriteString("    <FieldData>\n      <DataArray type=\"Int32\" Name=\"formwright_part_ids\" NumberOfTuples=\"" + strconv.Itoa(len(v.ids)) + "\" format=\"ascii\">")
		for _, id := range v.ids {
			fmt.Fprintf(&b, " %d", id)
		}
		b.WriteString("</DataArray>\n      <Array type=\"String\" Name=\"formwright_part_names\" NumberOfTuples=\"" + strconv.Itoa(len(v.names)) + "\" format=\"ascii\">")
		for _, n := range v.names {
			for _, c := range []byte(n) {
				fmt.Fprintf(&b, " %d", c)
			}
			b.WriteString(" 0")
		}
		b.WriteString("</Array>\n    </FieldData>\n")
	}
	fmt.Fprintf(&b, "    <Piece NumberOfPoints=\"%d\" NumberOfCells=\"%d\">\n", len(v.points), len(v.cells))
	if v.part != nil {
		b.WriteString("      <CellData>\n        <DataArray type=\"Int32\" Name=\"formwright_part\" format=\"ascii\">\n")
		for _, p := range v.part {
			fmt.Fprintf(&b, " %d", p)
		}
		b.WriteString("\n        </DataArray>\n      </CellData>\n")
	}
	b.WriteString("      <Points>\n        <DataArray type=\"Float64\" NumberOfComponents=\"3\" format=\"ascii\">\n")
	for _, p := range v.points {
		fmt.Fprintf(&b, "          %v %v %v\n", p[0], p[1], p[2])
	}
	b.WriteString("        </DataArray>\n      </Points>\n      <Cells>\n        <DataArray type=\"Int64\" Name=\"connectivity\" format=\"ascii\">\n")
	off := v.offsets
	n := 0
	for _, c := range v.cells {
		b.WriteString("         ")
		for _, i := range c {
			fmt.Fprintf(&b, " %d", i)
		}
		b.WriteString("\n")
		n += len(c)
		if v.offsets == nil {
			off = append(off, n)
		}
	}
	b.WriteString("        </DataArray>\n        <DataArray type=\"Int64\" Name=\"offsets\" format=\"ascii\">\n         ")
	for _, o := range off {
		fmt.Fprintf(&b, " %d", o)
	}
	b.WriteString("\n        </DataArray>\n        <DataArray type=\"UInt8\" Name=\"types\" format=\"ascii\">\n         ")
	for _, t := range v.types {
		fmt.Fprintf(&b, " %d", t)
	}
	b.WriteString("\n        </DataArray>\n      </Cells>\n    </Piece>\n  </UnstructuredGrid>\n</VTKFile>\n")
	return b.String()
}

// square is the unit square as two triangles (0,1,2) and (0,2,3), with
// the bottom edge as part 1 "bottom" and the left edge (3,0) as part 2.
func square() vtu {
	return vtu{
		points: [][3]float64{{0, 0, 0}, {1, 0, 0}, {1, 1, 0}, {0, 1, 0}},
		cells:  [][]int{{0, 1, 2}, {0, 2, 3}, {0, 1}, {3, 0}},
		types:  []int{5, 5, 3, 3},
		part:   []int{0, 0, 1, 2},
		ids:    []int{1, 2},
		names:  []string{"bottom", "left"},
	}
}

func readString(s string) (*Mesh, error) {
	return ReadVTU(strings.NewReader(s), ReadOptions{Name: "test.vtu"})
}

// The hand-written square reads as expected: facet (0,1) is local facet 2
// of cell 0 (opposite vertex 2), facet (3,0) is local facet 1 of cell 1
// (vertices 0,2,3; opposite vertex 2).
func TestReadSquare(t *testing.T) {
	m, err := readString(square().String())
	if err != nil {
		t.Fatal(err)
	}
	want := map[string][]FacetRef{
		"bottom": {{0, 2}}, "left": {{1, 1}},
		All: {{0, 0}, {0, 2}, {1, 0}, {1, 1}},
	}
	if !maps.EqualFunc(m.Boundaries, want, func(a, b []FacetRef) bool { return slices.Equal(a, b) }) {
		t.Errorf("boundaries %v, want %v", m.Boundaries, want)
	}
	if m.Dim != 2 || m.Cell != cell.Triangle || !slices.Equal(m.Cells, []int32{0, 1, 2, 0, 2, 3}) || m.Regions != nil {
		t.Errorf("mesh %+v", m)
	}
}

// Mirrored cells are repaired by the documented permutation (flipOrder),
// quadratic cells give their vertices, unused points are dropped, pixel
// and voxel corners are reordered, lower-dimension cells are ignored, and
// a part without a name gets "part<N>".
func TestReadRepairs(t *testing.T) {
	// Clockwise triangle (0,2,1) and quad (0,3,2,1); a quadratic triangle
	// whose mid-edge nodes 4,5,6 are dropped; point 7 unused.
	v := vtu{
		points: [][3]float64{{0, 0, 0}, {1, 0, 0}, {1, 1, 0}, {0, 1, 0}, {0.5, 0, 0}, {1, 0.5, 0}, {0.5, 0.5, 0}, {9, 9, 0}},
		cells:  [][]int{{0, 2, 1}, {0, 2, 3, 6, 5, 4}, {0}, {1, 0}},
		types:  []int{5, 22, 1, 3},
		part:   []int{0, 0, 0, 4},
	}
	m, err := readString(v.String())
	if err != nil {
		t.Fatal(err)
	}
	// Points 0..3 keep their numbers (4,5,6 appear as mid nodes only; 7 is
	// unused); cell 0 is repaired to (0,1,2).
	if m.NumVertices() != 4 || !slices.Equal(m.Cells, []int32{0, 1, 2, 0, 2, 3}) {
		t.Errorf("vertices %d cells %v", m.NumVertices(), m.Cells)
	}
	if got := m.Boundaries["part4"]; !slices.Equal(got, []FacetRef{{0, 2}}) {
		t.Errorf("part4 = %v", got)
	}
	// A clockwise quad and a pixel.
	q := vtu{
		points: [][3]float64{{0, 0, 0}, {1, 0, 0}, {1, 1, 0}, {0, 1, 0}, {2, 0, 0}, {2, 1, 0}},
		cells:  [][]int{{0, 3, 2, 1}, {1, 4, 2, 5}},
		types:  []int{9, 8},
	}
	m, err = readString(q.String())
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(m.Cells, []int32{0, 1, 2, 3, 1, 4, 5, 2}) || m.CheckOrientation() != nil {
		t.Errorf("quads %v", m.Cells)
	}
	// A mirrored hexahedron (rings reversed) and a voxel side by side.
	h := vtu{points: [][3]float64{
		{0, 0, 0}, {1, 0, 0}, {1, 1, 0}, {0, 1, 0}, {0, 0, 1}, {1, 0, 1}, {1, 1, 1}, {0, 1, 1},
		{2, 0, 0}, {2, 1, 0}, {2, 0, 1}, {2, 1, 1}},
		cells: [][]int{{0, 3, 2, 1, 4, 7, 6, 5}, {1, 8, 2, 9, 5, 10, 6, 11}},
		types: []int{12, 11},
	}
	m, err = readString(h.String())
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(m.Cells, []int32{0, 1, 2, 3, 4, 5, 6, 7, 1, 8, 9, 2, 5, 10, 11, 6}) || m.CheckOrientation() != nil {
		t.Errorf("hexes %v", m.Cells)
	}
	// A mirrored tetrahedron and a reversed interval.
	tet := vtu{points: [][3]float64{{0, 0, 0}, {0, 1, 0}, {1, 0, 0}, {0, 0, 1}}, cells: [][]int{{0, 1, 2, 3}}, types: []int{10}}
	if m, err = readString(tet.String()); err != nil || m.CheckOrientation() != nil {
		t.Errorf("tet: %v", err)
	}
	iv := vtu{points: [][3]float64{{1, 0, 0}, {0, 0, 0}}, cells: [][]int{{0, 1}, {1}}, types: []int{3, 1}, part: []int{0, 1}}
	m, err = readString(iv.String())
	if err != nil || !slices.Equal(m.Cells, []int32{1, 0}) || !slices.Equal(m.Boundaries["part1"], []FacetRef{{0, 1}}) {
		t.Errorf("interval: %v %v %v", err, m.Cells, m.Boundaries)
	}
}

// Every refused input gives a *FileError naming the file and the cell,
// point or line at fault.
func TestReadErrors(t *testing.T) {
	type tc struct {
		name        string
		src         string
		cell, point int // -1: none expected
		line        int // 0: not checked
		re          string
	}
	mod := func(f func(v *vtu)) string {
		v := square()
		f(&v)
		return v.String()
	}
	good := square().String()
	cases := []tc{
		{"nan", mod(func(v *vtu) { v.points[2][0] = math.NaN() }), -1, 2, 0, `x = NaN is not finite`},
		{"inf", mod(func(v *vtu) { v.points[3][1] = math.Inf(-1) }), -1, 3, 0, `y = -Inf is not finite`},
		{"z", mod(func(v *vtu) { v.points[1][2] = 0.5 }), -1, 1, 0, `z = 0.5, but a 2-dimensional mesh must have z = 0`},
		{"degenerate", mod(func(v *vtu) { v.points[2] = [3]float64{0.5, 0.5, 0}; v.points[3] = [3]float64{1, 1, 0} }), 1, -1, 0, `degenerate triangle`},
		{"repeated vertex", mod(func(v *vtu) { v.cells[1] = []int{0, 2, 2} }), 1, -1, 0, `degenerate`},
		{"interior facet", mod(func(v *vtu) { v.cells[3] = []int{0, 2} }), 3, -1, 0, `not on the boundary: it is the facet between cells 0 and 1`},
		{"no facet", mod(func(v *vtu) { v.cells[3] = []int{1, 3} }), 3, -1, 0, `no facet of a triangle`},
		{"facet off mesh", mod(func(v *vtu) { v.points = append(v.points, [3]float64{5, 5, 0}); v.cells[3] = []int{3, 4} }), 3, -1, 0, `point 4 is no vertex`},
		{"mixed", mod(func(v *vtu) {
			v.points = append(v.points, [3]float64{2, 0, 0}, [3]float64{2, 1, 0})
			v.cells = append(v.cells, []int{1, 4, 5, 2})
			v.types = append(v.types, 9)
			v.part = append(v.part, 0)
		}), 4, -1, 0, `a VTK_QUAD among triangle cells \(cell 0 is a VTK_TRIANGLE\): a mesh has one cell type`},
		{"wedge", mod(func(v *vtu) { v.types[1] = 13 }), 1, -1, 0, `VTK cell type 13 is not supported`},
		{"node count", mod(func(v *vtu) { v.types[1] = 9 }), 1, -1, 0, `a VTK_QUAD has 4 nodes, the offsets give it 3`},
		{"offsets", mod(func(v *vtu) { v.offsets = []int{3, 2, 8, 10} }), 1, -1, 0, `offset 2 is out of order`},
		{"offsets short", mod(func(v *vtu) { v.offsets = []int{3, 6, 8, 9} }), 3, -1, 0, `a VTK_LINE has 2 nodes, the offsets give it 1`},
		{"index", mod(func(v *vtu) { v.cells[0] = []int{0, 1, 7} }), 0, -1, 0, `point index 7 out of range \[0,4\)`},
		{"facet type", vtu{points: [][3]float64{{0, 0, 0}, {1, 0, 0}, {0, 1, 0}, {0, 0, 1}}, cells: [][]int{{0, 1, 2, 3}, {0, 2, 1, 3}}, types: []int{10, 9}}.String(),
			1, -1, 0, `a VTK_QUAD cannot be a facet of a tetrahedron, whose facets are triangles`},
		{"negative part", mod(func(v *vtu) { v.part[2] = -3 }), 2, -1, 0, `boundary part number -3`},
		{"negative region", mod(func(v *vtu) { v.part[0] = -1 }), 0, -1, 0, `region number -1`},
		{"repeat facet", mod(func(v *vtu) { v.cells[3] = []int{1, 0}; v.part[3] = 1 }), 3, -1, 0, `repeats cell 2 in boundary part "bottom"`},
		{"reserved", mod(func(v *vtu) { v.names[0] = "all" }), -1, -1, 0, `reserved`},
		{"bad name", mod(func(v *vtu) { v.names[0] = "2nd" }), -1, -1, 0, `bad part name "2nd"`},
		{"same name", mod(func(v *vtu) { v.names[1] = "bottom" }), -1, -1, 0, `the name "bottom" is given to parts 1 and 2`},
		{"same id", mod(func(v *vtu) { v.ids[1] = 1 }), -1, -1, 0, `part number 1 named twice`},
		{"id zero", mod(func(v *vtu) { v.ids[1] = 0 }), -1, -1, 0, `part number 0: want 1 or more`},
		{"names short", mod(func(v *vtu) { v.names = v.names[:1] }), -1, -1, 0, `formwright_part_ids has 2 entries, formwright_part_names 1`},
		{"default name taken", mod(func(v *vtu) { v.names[0] = "part2"; v.ids[1] = 5 }), -1, -1, 0, `part 2 has no name and its default name "part2" is taken by part 1`},
		{"vertices only", mod(func(v *vtu) { v.cells = [][]int{{0}}; v.types = []int{1}; v.part = nil; v.ids = nil }), -1, -1, 0, `vertex cells only`},
		{"no cells", mod(func(v *vtu) { v.cells = nil; v.types = nil; v.part = nil; v.ids = nil }), -1, -1, 0, `no cells`},
		{"tangled quad", vtu{points: [][3]float64{{0, 0, 0}, {1, 0, 0}, {0, 1, 0}, {1, 1, 0}}, cells: [][]int{{0, 1, 2, 3}}, types: []int{9}}.String(), 0, -1, 0, `tangled quadrilateral`},
		{"non-convex quad", vtu{points: [][3]float64{{0, 0, 0}, {1, 0, 0}, {0.2, 0.2, 0}, {0, 1, 0}}, cells: [][]int{{0, 1, 2, 3}}, types: []int{9}}.String(), 0, -1, 0, `tangled quadrilateral`},
		{"flat quad", vtu{points: [][3]float64{{0, 0, 0}, {1, 0, 0}, {2, 0, 0}, {0, 1, 0}}, cells: [][]int{{0, 1, 2, 3}}, types: []int{9}}.String(), 0, -1, 0, `degenerate quadrilateral`},
		// Header and XML.
		{"root", "<Other/>", -1, -1, 1, `root element is <Other>`},
		{"polydata", `<VTKFile type="PolyData"></VTKFile>`, -1, -1, 1, `want a VTK XML UnstructuredGrid`},
		{"compressor", strings.Replace(good, `header_type="UInt64"`, `header_type="UInt64" compressor="vtkLZ4DataCompressor"`, 1), -1, -1, 2, `only vtkZLibDataCompressor`},
		{"byte order", strings.Replace(good, `LittleEndian`, `MiddleEndian`, 1), -1, -1, 2, `want LittleEndian or BigEndian`},
		{"xml", strings.Replace(good, `</Points>`, `</Pints>`, 1), -1, -1, 21, `malformed XML`},
		{"truncated", good[:len(good)/2], -1, -1, 0, `malformed XML|unexpected EOF`},
		{"coordinate text", strings.Replace(good, "          1 1 0\n", "          1 1 zero\n", 1), -1, -1, 18, `array Points: value 8: bad number "zero"`},
		{"too many values", strings.Replace(good, "          1 1 0\n", "          1 1 0 4\n", 1), -1, -1, 19, `more than the 12 values expected`},
		{"too few values", strings.Replace(good, "          1 1 0\n", "          1 1\n", 1), -1, -1, 15, `holds 11 values, want 12`},
		{"uint8 range", strings.Replace(good, "  5 5 3 3\n", "  5 5 3 300\n", 1), -1, -1, 0, `"300" is not a UInt8`},
		{"float connectivity", strings.Replace(good, `type="Int64" Name="connectivity"`, `type="Float32" Name="connectivity"`, 1), -1, -1, 0, `want an integer type`},
		{"two pieces", strings.Replace(good, "</Piece>", "</Piece><Piece NumberOfPoints=\"1\" NumberOfCells=\"0\"></Piece>", 1), -1, -1, 0, `a second <Piece>`},
		{"components", strings.Replace(good, `NumberOfComponents="3"`, `NumberOfComponents="2"`, 1), -1, -1, 0, `Points has 2 components, want 3`},
		{"no types", strings.Replace(good, `Name="types"`, `Name="kinds"`, 1), -1, -1, 0, `no types array`},
		{"appended missing", strings.Replace(good, "<DataArray type=\"UInt8\" Name=\"types\" format=\"ascii\">\n          5 5 3 3\n", `<DataArray type="UInt8" Name="types" format="appended" offset="0">`, 1), -1, -1, 32, `array types is appended, but the file has no <AppendedData>`},
		{"appended text", strings.Replace(good, `Name="types" format="ascii"`, `Name="types" format="appended" offset="0"`, 1), -1, -1, 34, `unexpected text inside <DataArray>`},
		{"points over limit", strings.Replace(good, `NumberOfPoints="4"`, `NumberOfPoints="99999999999"`, 1), -1, -1, 0, `more than the limit of 16777216`},
		{"entity", strings.Replace(good, "          1 1 0\n", "          1 1 &amp;\n", 1), -1, -1, 0, `entity or character reference`},
	}
	for _, c := range cases {
		_, err := readString(c.src)
		var fe *FileError
		if !errors.As(err, &fe) {
			t.Errorf("%s: want *FileError, got %T %v", c.name, err, err)
			continue
		}
		if fe.Path != "test.vtu" || fe.Cell != c.cell || fe.Point != c.point || (c.line != 0 && fe.Line != c.line) || !regexp.MustCompile(c.re).MatchString(fe.Msg) {
			t.Errorf("%s: got %q (cell %d point %d line %d), want cell %d point %d line %d matching %q",
				c.name, err, fe.Cell, fe.Point, fe.Line, c.cell, c.point, c.line, c.re)
		}
	}
	if _, err := readString(good); err != nil {
		t.Errorf("good file: %v", err)
	}
	// The message format.
	_, err := readString(cases[0].src)
	if want := "test.vtu: point 2: coordinate x = NaN is not finite"; err == nil || err.Error() != want {
		t.Errorf("got %q, want %q", err, want)
	}
	if _, err := Load(filepath.Join(t.TempDir(), "missing.vtu")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
}

// The example file in the package doc reads to the mesh it describes.
func TestDocExample(t *testing.T) {
	src, err := os.ReadFile("doc.go")
	if err != nil {
		t.Fatal(err)
	}
	var xml []string
	in := false
	for _, l := range strings.Split(string(src), "\n") {
		l, ok := strings.CutPrefix(l, "//\t")
		in = in || ok && strings.HasPrefix(l, "<?xml")
		if in {
			xml = append(xml, l)
		}
		if in && l == "</VTKFile>" {
			break
		}
	}
	m, err := readString(strings.Join(xml, "\n"))
	if err != nil {
		t.Fatalf("%v\n%s", err, strings.Join(xml, "\n"))
	}
	want := &Mesh{Dim: 2, Cell: cell.Triangle, Coords: []float64{0, 0, 1, 0, 1, 1, 0, 1}, Cells: []int32{0, 1, 2, 0, 2, 3},
		Boundaries: map[string][]FacetRef{"bottom": {{0, 2}}, All: {{0, 0}, {0, 2}, {1, 0}, {1, 1}}}}
	if d := meshDiff(want, m); d != "" {
		t.Error(d)
	}
}

var vtuSink []byte

func benchmarkWriteVTU(b *testing.B, m *Mesh, enc Encoding) {
	var buf bytes.Buffer
	for b.Loop() {
		buf.Reset()
		if err := WriteVTU(&buf, m, enc); err != nil {
			b.Fatal(err)
		}
	}
	vtuSink = buf.Bytes()
	b.SetBytes(int64(buf.Len()))
}

func benchmarkReadVTU(b *testing.B, m *Mesh, enc Encoding) {
	var buf bytes.Buffer
	if err := WriteVTU(&buf, m, enc); err != nil {
		b.Fatal(err)
	}
	b.SetBytes(int64(buf.Len()))
	for b.Loop() {
		r, err := ReadVTU(bytes.NewReader(buf.Bytes()), ReadOptions{})
		if err != nil {
			b.Fatal(err)
		}
		meshSink = r
	}
}

// 2·256² = 131072 triangles; 6·32³ = 196608 tetrahedra.
func BenchmarkWriteVTUTriangles256Binary(b *testing.B) {
	benchmarkWriteVTU(b, Span2(0, 1, 0, 1, 256, 256, DiagonalUp), Binary)
}
func BenchmarkWriteVTUTriangles256ASCII(b *testing.B) {
	benchmarkWriteVTU(b, Span2(0, 1, 0, 1, 256, 256, DiagonalUp), ASCII)
}
func BenchmarkReadVTUTriangles256Binary(b *testing.B) {
	benchmarkReadVTU(b, Span2(0, 1, 0, 1, 256, 256, DiagonalUp), Binary)
}
func BenchmarkReadVTUTriangles256ASCII(b *testing.B) {
	benchmarkReadVTU(b, Span2(0, 1, 0, 1, 256, 256, DiagonalUp), ASCII)
}
func BenchmarkReadVTUTetrahedra32Binary(b *testing.B) {
	benchmarkReadVTU(b, Span3(0, 1, 0, 1, 0, 1, 32, 32, 32, Kuhn), Binary)
}
