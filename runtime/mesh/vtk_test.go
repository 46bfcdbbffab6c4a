package mesh

import (
	"bufio"
	"bytes"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/formwright/formwright/runtime/cell"
)

// Files written by VTK 9.1's own vtkXMLUnstructuredGridWriter
// (testdata/vtkwritten/write.py) in every data format it offers — ascii,
// inline base64, appended raw and appended base64; UInt32 and UInt64
// headers; zlib with one or several blocks, the last full or partial;
// little and big endian; Float32 points and Int32 connectivity — read to
// the meshes that script describes. This checks the decoder against the
// reference implementation of the format rather than against our own
// writer.
func TestVTKWrittenFiles(t *testing.T) {
	fr := func(c, f int32) FacetRef { return FacetRef{c, f} }
	want := map[string]*Mesh{
		// The second triangle is listed clockwise (0,3,2) and repaired to
		// (0,2,3); point 4 is unused. Bottom (0,1) is facet 2 of cell 0,
		// left (3,0) facet 1 of cell 1 (the facet opposite vertex 2).
		"square": {Dim: 2, Cell: cell.Triangle, Coords: []float64{0, 0, 1, 0, 1, 1, 0, 1}, Cells: []int32{0, 1, 2, 0, 2, 3},
			Boundaries: map[string][]FacetRef{"bottom": {fr(0, 2)}, "left": {fr(1, 1)}, All: {fr(0, 0), fr(0, 2), fr(1, 0), fr(1, 1)}}},
		// The face z = 0 is facet 3 (opposite vertex 3); region 5.
		"quadratic-tetra": {Dim: 3, Cell: cell.Tetrahedron, Coords: []float64{0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 1}, Cells: []int32{0, 1, 2, 3},
			Boundaries: map[string][]FacetRef{"base": {fr(0, 3)}, All: {fr(0, 0), fr(0, 1), fr(0, 2), fr(0, 3)}}, Regions: []int32{5}},
		// Kept points in file order: the 8 corners of the first hexahedron,
		// then (2,0,0), (2,1,0), (2,0,1), (2,1,1). Inlet x = 0 is facet 0
		// of cell 0, outlet x = 2 facet 1 of cell 1 (runtime/cell order
		// x-, x+, y-, y+, z-, z+).
		"quadratic-hexahedra": {Dim: 3, Cell: cell.Hexahedron,
			Coords: []float64{0, 0, 0, 1, 0, 0, 1, 1, 0, 0, 1, 0, 0, 0, 1, 1, 0, 1, 1, 1, 1, 0, 1, 1, 2, 0, 0, 2, 1, 0, 2, 0, 1, 2, 1, 1},
			Cells:  []int32{0, 1, 2, 3, 4, 5, 6, 7, 1, 8, 9, 2, 5, 10, 11, 6},
			Boundaries: map[string][]FacetRef{"inlet": {fr(0, 0)}, "outlet": {fr(1, 1)},
				All: {fr(0, 0), fr(0, 2), fr(0, 3), fr(0, 4), fr(0, 5), fr(1, 1), fr(1, 2), fr(1, 3), fr(1, 4), fr(1, 5)}}},
		// Corners of the 8-node quad, then (2,0), (2,1); wall x = 0 is
		// facet 3 (3,0) of cell 0.
		"quadratic-quads": {Dim: 2, Cell: cell.Quadrilateral, Coords: []float64{0, 0, 1, 0, 1, 1, 0, 1, 2, 0, 2, 1}, Cells: []int32{0, 1, 2, 3, 1, 4, 5, 2},
			Boundaries: map[string][]FacetRef{"wall": {fr(0, 3)}, All: {fr(0, 0), fr(0, 2), fr(0, 3), fr(1, 0), fr(1, 1), fr(1, 2)}}},
		// The second edge is listed (2,1) and repaired to (1,2); inflow is
		// vertex 0 = facet 1 of cell 0, outflow vertex 2 = facet 0 of cell 1.
		"quadratic-edges": {Dim: 1, Cell: cell.Segment, Coords: []float64{0, 1, 2}, Cells: []int32{0, 1, 1, 2},
			Boundaries: map[string][]FacetRef{"inflow": {fr(0, 1)}, "outflow": {fr(1, 0)}, All: {fr(0, 1), fr(1, 0)}}},
	}
	files, err := filepath.Glob(filepath.Join("testdata", "vtkwritten", "*.vtu"))
	if err != nil || len(files) < 20 {
		t.Fatalf("%d files in testdata/vtkwritten (%v)", len(files), err)
	}
	for _, p := range files {
		base := filepath.Base(p)
		var w *Mesh
		for name, m := range want {
			if strings.HasPrefix(base, name+"-") {
				w = m
			}
		}
		if w == nil {
			t.Errorf("%s: no expectation", base)
			continue
		}
		m, err := ReadVTUFile(p)
		if err != nil {
			t.Errorf("%v", err)
			continue
		}
		if d := meshDiff(w, m); d != "" {
			t.Errorf("%s: %s", base, d)
		}
	}
}

// findVTKPython returns a python3 found on PATH that can import vtk, or "".
func findVTKPython() string {
	for _, dir := range filepath.SplitList(os.Getenv("PATH")) {
		if dir == "" {
			continue
		}
		p := filepath.Join(dir, "python3")
		if fi, err := os.Stat(p); err != nil || fi.IsDir() || fi.Mode()&0o111 == 0 {
			continue
		}
		if exec.Command(p, "-c", "import vtk").Run() == nil {
			return p
		}
	}
	return ""
}

// vtkView is what testdata/vtkread.py prints for one file.
type vtkView struct {
	Path   string
	Points [][3]float64
	Cells  [][]int64
	Part   []int64
	IDs    []int64
	Names  []string
}

// Files written by WriteVTU, in both encodings and for every cell type,
// are read by VTK's own vtkXMLUnstructuredGridReader (when a python3 with
// the vtk module is installed) to the points, cells, part numbers and
// part names the package doc specifies.
func TestVTKReadsWrittenFiles(t *testing.T) {
	py := findVTKPython()
	if py == "" {
		t.Skip("no python3 on PATH can import vtk; install Debian's python3-vtk9 to run this test")
	}
	dir := t.TempDir()
	meshes := map[string]*Mesh{}
	var paths []string
	for name, m := range sampleMeshes() {
		for enc, suffix := range map[Encoding]string{Binary: "binary", ASCII: "ascii"} {
			p := filepath.Join(dir, name+"-"+suffix+".vtu")
			if err := WriteVTUFile(p, m, enc); err != nil {
				t.Fatal(err)
			}
			meshes[p] = m
			paths = append(paths, p)
		}
	}
	slices.Sort(paths)
	cmd := exec.Command(py, append([]string{filepath.Join("testdata", "vtkread.py")}, paths...)...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("%s vtkread.py: %v\n%s", py, err, stderr.String())
	}
	sc := bufio.NewScanner(bytes.NewReader(out))
	sc.Buffer(nil, 1<<24)
	seen := 0
	for sc.Scan() {
		var v vtkView
		if err := json.Unmarshal(sc.Bytes(), &v); err != nil {
			t.Fatal(err)
		}
		m := meshes[v.Path]
		if m == nil {
			t.Fatalf("unexpected path %q", v.Path)
		}
		seen++
		name := filepath.Base(v.Path)
		// Points: the vertices, padded to 3 coordinates with zeros.
		if len(v.Points) != m.NumVertices() {
			t.Errorf("%s: VTK reads %d points, want %d", name, len(v.Points), m.NumVertices())
			continue
		}
		for i, p := range v.Points {
			for k := 0; k < 3; k++ {
				w := 0.0
				if k < m.Dim {
					w = m.Vertex(i)[k]
				}
				if p[k] != w {
					t.Fatalf("%s: point %d is %v in VTK, want coordinate %d = %v", name, i, p, k, w)
				}
			}
		}
		// Cells: the mesh cells, then each part's facets in name order.
		var wantCells [][]int64
		var wantPart []int64
		for c := 0; c < m.NumCells(); c++ {
			row := []int64{int64(cell.VTKType(m.Cell, 1))}
			for _, x := range m.CellVertices(c) {
				row = append(row, int64(x))
			}
			wantCells = append(wantCells, row)
			r := int64(0)
			if m.Regions != nil {
				r = int64(m.Regions[c])
			}
			wantPart = append(wantPart, r)
		}
		var wantNames []string
		var wantIDs []int64
		for _, n := range m.BoundaryNames() {
			if n == All {
				continue
			}
			wantNames = append(wantNames, n)
			wantIDs = append(wantIDs, int64(len(wantNames)))
			for _, f := range m.Boundaries[n] {
				row := []int64{int64(facetVTKType(m.Cell))}
				for _, x := range m.FacetVertices(f, nil) {
					row = append(row, int64(x))
				}
				wantCells = append(wantCells, row)
				wantPart = append(wantPart, int64(len(wantNames)))
			}
		}
		if !slices.EqualFunc(v.Cells, wantCells, slices.Equal) {
			t.Errorf("%s: VTK cells differ: %v..., want %v...", name, v.Cells[:min(3, len(v.Cells))], wantCells[:min(3, len(wantCells))])
		}
		if !slices.Equal(v.Part, wantPart) {
			t.Errorf("%s: %s in VTK %v, want %v", name, PartArray, v.Part, wantPart)
		}
		if !slices.Equal(v.IDs, wantIDs) || !slices.Equal(v.Names, wantNames) {
			t.Errorf("%s: part table in VTK %v %q, want %v %q", name, v.IDs, v.Names, wantIDs, wantNames)
		}
	}
	if seen != len(paths) {
		t.Errorf("VTK read %d of %d files", seen, len(paths))
	}
}
