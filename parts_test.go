package main

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/distributed"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"
)

// A model on the unit square with value conditions on part of the bottom
// side and on the left side; the rest of the boundary is free.
const partsModel = `model parts
dimension 2
unknown u: scalar P1
given kappa = 1
equation for u: -div(kappa*grad(u)) = 1
part west_floor = bottom cap {x <= 1/2}
at west_floor, left: u = 0
`

func writeFile(t *testing.T, dir, name, src string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func maxAbsDiff(a, b []float64) float64 {
	if len(a) != len(b) {
		return math.Inf(1)
	}
	d := 0.0
	for i := range a {
		d = math.Max(d, math.Abs(a[i]-b[i]))
	}
	return d
}

// Each class of input error that needs the mesh: exit status 2, the
// place in the model, the parts the mesh has, and nothing written.
func TestPartErrorsNeedingTheMesh(t *testing.T) {
	dir := t.TempDir()
	missing := writeFile(t, dir, "missing.fw", "model m\ndimension 2\nsides inlet, wall\nunknown u: scalar P1\nequation for u: -lap(u) = 1\nat wall: u = 0\nat inlet: u = 1\n")
	fromMissing := writeFile(t, dir, "from_missing.fw", "model m\ndimension 2\nsides wall\nunknown u: scalar P1\nequation for u: -lap(u) = 1\npart w = wall cap {y <= 1/2}\nat w: u = 0\n")
	claimed := writeFile(t, dir, "claimed.fw", "model m\ndimension 2\nunknown u: scalar P1\nequation for u: -lap(u) = 1\npart a = bottom cap {x <= 1/2}\nat bottom: u = 0\nat a: flux(u) = 1\n")
	sameKind := writeFile(t, dir, "same_kind.fw", "model m\ndimension 2\nunknown u: scalar P1\nequation for u: -lap(u) = 1\npart a = {y <= 0}\nat bottom, top: u = 0\nat a: u = 1\n")
	typo := writeFile(t, dir, "typo.fw", "model m\ndimension 2\nunknown u: scalar P1\nequation for u: -lap(u) = 1\npart a = botom cap {x <= 1/2}\nat a: u = 0\n")
	out := filepath.Join(dir, "u.vtu")
	meshOut := filepath.Join(dir, "m.vtu")
	const sq = "span:0,1,0,1:4x4:tri"
	for _, c := range []struct {
		args []string
		want []string
	}{
		{[]string{"solve", missing, "--mesh", sq, "--out", out}, []string{"missing.fw:6:4: the model sets a condition on \"wall\", which the mesh does not have", "mesh has all, bottom, left, right, top"}},
		{[]string{"solve", fromMissing, "--mesh", sq, "--out", out}, []string{"from_missing.fw:6:10: part w is made from \"wall\", which the mesh does not have", "mesh has all, bottom"}},
		{[]string{"solve", claimed, "--mesh", sq, "--out", out}, []string{"claimed.fw:7:4: the facet at (0.", "claimed for u by this flux condition on a and by the value condition at 6:1", "a facet takes one kind of condition"}},
		{[]string{"solve", sameKind, "--mesh", sq, "--out", out}, []string{"same_kind.fw:7:4: the facet at (", "value condition on a and by the value condition at 6:1"}},
		{[]string{"solve", typo, "--mesh", sq, "--out", out}, []string{"typo.fw:5:10: \"botom\" is neither a side nor a part of this model", `did you mean "bottom"?`}},
		{[]string{"mesh", sq, "--model", missing, "-o", meshOut}, []string{"missing.fw:6:4: the model sets a condition on \"wall\""}},
		{[]string{"verify", missing, "--mesh", sq, "--levels", "2", "--quiet"}, []string{"\"wall\", which the mesh does not have"}},
	} {
		st, _, errs := runCmd(c.args...)
		if st != exitBadInput {
			t.Errorf("%v: status %d, want 2 (stderr %q)", c.args, st, errs)
		}
		for _, w := range c.want {
			if !strings.Contains(errs, w) {
				t.Errorf("%v: stderr %q does not contain %q", c.args, errs, w)
			}
		}
		for _, p := range []string{out, meshOut} {
			if _, err := os.Stat(p); err == nil {
				t.Fatalf("%v: %s was written", c.args, p)
			}
		}
	}
}

// Facets without a condition take the natural condition, and derive and
// solve say so. On 4 × 4 squares of the unit square the boundary has 16
// facets; west_floor (2) and left (4) have a value, so 10 are free
// (counted by hand).
func TestNaturalConditionReported(t *testing.T) {
	p := writeFile(t, t.TempDir(), "parts.fw", partsModel)
	st, out, errs := runCmd("solve", p, "--mesh", "span:0,1,0,1:4x4:tri", "--quiet")
	if st != exitOK {
		t.Fatalf("solve: %d %s", st, errs)
	}
	if want := "boundary   zero flux (no condition) for u on 10 of 16 boundary facets\n"; !strings.Contains(out, want) {
		t.Errorf("solve summary lacks %q:\n%s", want, out)
	}
	st, out, errs = runCmd("derive", p)
	if st != exitOK {
		t.Fatalf("derive: %d %s", st, errs)
	}
	if want := "wherever the boundary has no condition for u (outside west_floor, left): zero flux (the natural condition)"; !strings.Contains(out, want) {
		t.Errorf("derive lacks %q:\n%s", want, out)
	}
}

// A part chosen by a midpoint condition gives the solution of the same
// problem with the part handed to the mesh as a side of its own, its
// facets picked here by looking at the vertices (the bottom facets whose
// vertices have x ≤ 1/2): both back ends' paths share the facets, so the
// solutions agree to rounding.
func TestPartByConditionEqualsPartByHand(t *testing.T) {
	const spec = "span:0,1,0,1:8x8:tri"
	sol := solveModel(t, partsModel, compiler.Galerkin, spec)
	msh, err := mesh.Load(spec)
	if err != nil {
		t.Fatal(err)
	}
	var floor []mesh.FacetRef
	for _, f := range msh.Boundaries["bottom"] {
		vs := msh.FacetVertices(f, nil)
		if msh.Vertex(int(vs[0]))[0] <= 0.5 && msh.Vertex(int(vs[1]))[0] <= 0.5 {
			floor = append(floor, f)
		}
	}
	if len(floor) != 4 {
		t.Fatalf("%d bottom facets with x ≤ 1/2, want 4", len(floor))
	}
	msh.Boundaries["floor"] = floor
	src := strings.Replace(partsModel, "part west_floor = bottom cap {x <= 1/2}\n", "sides left, right, bottom, top, floor\n", 1)
	src = strings.Replace(src, "west_floor", "floor", 1)
	m, err := loadModel(writeFile(t, t.TempDir(), "byhand.fw", src))
	if err != nil {
		t.Fatal(err)
	}
	lf, err := lowerModel(m, compiler.Galerkin)
	if err != nil {
		t.Fatal(err)
	}
	ref, err := problem.Solve(lf, msh, problem.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if d := maxAbsDiff(sol.X, ref.X); d > 1e-14 {
		t.Errorf("part by condition and part by hand differ by %.2e", d)
	}
}

// The mesh command writes a built-in mesh, refined, with the parts a
// model defines; reading the file back gives the mesh built and refined
// in memory with the parts computed by runtime/problem (vertices, cells,
// every part). An existing file is never replaced without --replace, and
// the input is never replaced.
func TestMeshCommand(t *testing.T) {
	dir := t.TempDir()
	const spec = "span:-1,1,0,1:6x3:tri"
	const model = "examples/hairpin_dye/model.fw"
	out := filepath.Join(dir, "trough.vtu")
	st, stdout, errs := runCmd("mesh", spec, "--refine", "1", "--model", model, "-o", out)
	if st != exitOK {
		t.Fatalf("mesh: %d %s", st, errs)
	}
	if !strings.Contains(stdout, "part inlet") {
		t.Errorf("the summary does not list the model's parts:\n%s", stdout)
	}
	want, err := mesh.Load(spec)
	if err != nil {
		t.Fatal(err)
	}
	want = mesh.Refine(want)
	m, err := loadModel(model)
	if err != nil {
		t.Fatal(err)
	}
	lf, err := lowerModel(m, compiler.Galerkin)
	if err != nil {
		t.Fatal(err)
	}
	if want, _, err = problem.ResolveParts(lf, want); err != nil {
		t.Fatal(err)
	}
	got, err := mesh.ReadVTUFile(out)
	if err != nil {
		t.Fatal(err)
	}
	if got.Dim != want.Dim || got.Cell != want.Cell || !slices.Equal(got.Coords, want.Coords) || !slices.Equal(got.Cells, want.Cells) {
		t.Fatalf("read back: %v mesh, %d vertices, %d cells; written %v, %d, %d (or coordinates differ)", got.Cell, got.NumVertices(), got.NumCells(), want.Cell, want.NumVertices(), want.NumCells())
	}
	if !slices.Equal(got.BoundaryNames(), want.BoundaryNames()) {
		t.Fatalf("parts %v, want %v", got.BoundaryNames(), want.BoundaryNames())
	}
	for _, n := range want.BoundaryNames() {
		if !slices.Equal(got.Boundaries[n], want.Boundaries[n]) {
			t.Errorf("part %s: %d facets read back, %d written", n, len(got.Boundaries[n]), len(want.Boundaries[n]))
		}
	}
	if len(want.Boundaries["inlet"]) != 6 || len(want.Boundaries["outlet"]) != 6 {
		t.Errorf("inlet %d, outlet %d facets; want 6 each (12 bottom facets after refinement)", len(want.Boundaries["inlet"]), len(want.Boundaries["outlet"]))
	}

	before, _ := os.ReadFile(out)
	for _, c := range []struct {
		args []string
		msg  string
	}{
		{[]string{"mesh", "span:0,1:4", "-o", out}, "exists: refusing to overwrite it"},
		{[]string{"mesh", out, "-o", out, "--replace"}, "refusing to overwrite input file"},
		{[]string{"mesh", spec, "-o", filepath.Join(dir, "m.txt")}, "name it FILE.vtu"},
		{[]string{"mesh", spec, "-o", filepath.Join(dir, "nodir", "m.vtu")}, "does not exist"},
		{[]string{"mesh", "span:0,1:x", "-o", filepath.Join(dir, "m.vtu")}, "mesh:"},
		{[]string{"mesh", spec, "--refine", "30", "-o", filepath.Join(dir, "m.vtu")}, "--refine 30"},
		{[]string{"mesh", spec, "--model", "adr", "-o", filepath.Join(dir, "m.vtu")}, ""}, // same dimension: fine
		{[]string{"mesh", "span:0,1:4", "--model", "adr", "-o", filepath.Join(dir, "m1.vtu")}, "2-dimensional and the mesh 1-dimensional"},
	} {
		st, _, errs := runCmd(c.args...)
		if c.msg == "" {
			if st != exitOK {
				t.Errorf("%v: %d %s", c.args, st, errs)
			}
			continue
		}
		if st != exitBadInput || !strings.Contains(errs, c.msg) {
			t.Errorf("%v: status %d, stderr %q; want 2 and %q", c.args, st, errs, c.msg)
		}
	}
	if after, _ := os.ReadFile(out); !bytes.Equal(before, after) {
		t.Fatal("a refused command changed the file")
	}
	if _, err := os.Stat(filepath.Join(dir, "m1.vtu")); err == nil {
		t.Error("a refused command wrote its file")
	}
	if st, _, errs := runCmd("mesh", "span:0,1:4", "-o", out, "--replace", "--ascii"); st != exitOK {
		t.Fatalf("--replace: %d %s", st, errs)
	}
	if m1, err := mesh.ReadVTUFile(out); err != nil || m1.Dim != 1 || m1.NumCells() != 4 {
		t.Errorf("after --replace: %v, %v", m1, err)
	}
}

// The same model on a file mesh of the unit square (the built-in mesh
// written by the mesh command) and on the built-in mesh gives the same
// solution to 1e-12, for a model with a part chosen by a condition and
// for a standard model (Q1 on quadrilaterals too).
func TestFileMeshSameSolution(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct{ model, spec string }{
		{writeFile(t, dir, "parts.fw", partsModel), "span:0,1,0,1:12x12:tri"},
		{"adr", "span:0,1,0,1:10x10:quartered"},
		{"examples/hairpin_dye/model.fw", "span:-1,1,0,1:20x10:tri"},
	} {
		file := filepath.Join(dir, strings.NewReplacer(":", "_", ",", "_").Replace(c.spec)+".vtu")
		if st, _, errs := runCmd("mesh", c.spec, "-o", file); st != exitOK {
			t.Fatalf("mesh: %d %s", st, errs)
		}
		m, err := loadModel(c.model)
		if err != nil {
			t.Fatal(err)
		}
		for _, meth := range m.DefaultMethods() {
			lf, err := lowerModel(m, meth)
			if err != nil {
				t.Fatal(err)
			}
			var sols []*problem.Solution
			for _, spec := range []string{c.spec, file} {
				msh, _, err := buildMesh(m, spec)
				if err != nil {
					t.Fatal(err)
				}
				sol, err := problem.Solve(lf, msh, problem.Options{})
				if err != nil {
					t.Fatal(err)
				}
				sols = append(sols, sol)
			}
			if d := maxAbsDiff(sols[0].X, sols[1].X); d > 1e-12 {
				t.Errorf("%s %s: file mesh and built-in mesh differ by %.2e", c.model, meth, d)
			}
		}
	}
}

// A file written by the mesh command, with a model's parts, is read by
// VTK's own vtkXMLUnstructuredGridReader (where a python3 with the vtk
// module is installed: Debian's python3-vtk9) to the points, cells, part
// numbers and part names written (runtime/mesh's package doc).
func TestVTKReadsMeshCommandFile(t *testing.T) {
	py := ""
	for _, dir := range filepath.SplitList(os.Getenv("PATH")) {
		p := filepath.Join(dir, "python3")
		if dir != "" && exec.Command(p, "-c", "import vtk").Run() == nil {
			py = p
			break
		}
	}
	if py == "" {
		t.Skip("no python3 on PATH can import vtk; install Debian's python3-vtk9 to run this test")
	}
	dir := t.TempDir()
	for _, c := range []struct{ spec, model string }{
		{"span:-1,1,0,1:6x3:tri", "examples/hairpin_dye/model.fw"},
		{"span:0,1,0,1,0,1:2x2x2:hex", ""},
	} {
		out := filepath.Join(dir, strings.NewReplacer(":", "_", ",", "_").Replace(c.spec)+".vtu")
		args := []string{"mesh", c.spec, "--refine", "1", "-o", out}
		if c.model != "" {
			args = append(args, "--model", c.model)
		}
		if st, _, errs := runCmd(args...); st != exitOK {
			t.Fatalf("mesh: %d %s", st, errs)
		}
		m, err := mesh.ReadVTUFile(out)
		if err != nil {
			t.Fatal(err)
		}
		cmd := exec.Command(py, filepath.Join("runtime", "mesh", "testdata", "vtkread.py"), out)
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		raw, err := cmd.Output()
		if err != nil {
			t.Fatalf("vtkread.py: %v\n%s", err, stderr.String())
		}
		var v struct {
			Points [][3]float64
			Cells  [][]int64
			Part   []int64
			Names  []string
		}
		if err := json.Unmarshal(raw, &v); err != nil {
			t.Fatal(err)
		}
		if len(v.Points) != m.NumVertices() {
			t.Fatalf("%s: VTK reads %d points, want %d", c.spec, len(v.Points), m.NumVertices())
		}
		for i, p := range v.Points {
			for k := 0; k < m.Dim; k++ {
				if p[k] != m.Vertex(i)[k] {
					t.Fatalf("%s: point %d is %v in VTK", c.spec, i, p)
				}
			}
		}
		var names []string
		facets := 0
		for _, n := range m.BoundaryNames() {
			if n != mesh.All {
				names = append(names, n)
				facets += len(m.Boundaries[n])
			}
		}
		if !slices.Equal(v.Names, names) {
			t.Errorf("%s: VTK reads parts %q, want %q", c.spec, v.Names, names)
		}
		if len(v.Cells) != m.NumCells()+facets || len(v.Part) != len(v.Cells) {
			t.Fatalf("%s: VTK reads %d cells, want %d cells and %d facet cells", c.spec, len(v.Cells), m.NumCells(), facets)
		}
		for i := 0; i < m.NumCells(); i++ {
			want := append([]int64{int64(cell.VTKType(m.Cell, 1))}, func() []int64 {
				var out []int64
				for _, x := range m.CellVertices(i) {
					out = append(out, int64(x))
				}
				return out
			}()...)
			if !slices.Equal(v.Cells[i], want) {
				t.Fatalf("%s: cell %d is %v in VTK, want %v", c.spec, i, v.Cells[i], want)
			}
		}
		// Facet cells carry their part's number (1, 2, ... in name order).
		k := m.NumCells()
		for id, n := range names {
			for range m.Boundaries[n] {
				if v.Part[k] != int64(id+1) {
					t.Fatalf("%s: facet cell %d has part %d in VTK, want %d (%s)", c.spec, k, v.Part[k], id+1, n)
				}
				k++
			}
		}
	}
}

// The PETSc engine (where MPI and PETSc are installed) computes the
// model's parts as the Go engine does and gives its solution, with flux
// and Robin conditions on parts defined by conditions (facet integrals in
// the C kernels) and facets left free, on 1 and 2 ranks. On 32 × 32
// squares: left 32 facets, west_floor 16, cooled 24 (the right side below
// y = 3/4), so 56 of 128 are free (counted by hand).
func TestEnginePartsAgree(t *testing.T) {
	if err := distributed.Available(); err != nil {
		t.Skip(err)
	}
	p := writeFile(t, t.TempDir(), "fluxparts.fw", `model fluxparts
dimension 2
unknown u: scalar P1
given kappa = 1
equation for u: -div(kappa*grad(u)) = 1
part west_floor = bottom cap {x <= 1/2}
part cooled = right cup top minus {y > 3/4}
at west_floor: flux(u) = 1 + x
at cooled: flux(u) = -2*u
at left: u = 0
`)
	const spec = "span:0,1,0,1:32x32:tri"
	values := func(args ...string) ([]float64, string) {
		st, out, errs := runCmd(append([]string{"solve", p, "--mesh", spec, "--json", "--quiet"}, args...)...)
		if st != exitOK {
			t.Fatalf("%v: %d %s", args, st, errs)
		}
		var s struct {
			Natural string `json:"natural_condition"`
			Fields  []struct{ Values [][]float64 }
		}
		if err := json.Unmarshal([]byte(out), &s); err != nil {
			t.Fatal(err)
		}
		return s.Fields[0].Values[0], s.Natural
	}
	goX, natural := values()
	if natural != "zero flux (no condition) for u on 56 of 128 boundary facets" {
		t.Errorf("natural condition %q", natural)
	}
	for _, ranks := range []string{"1", "2"} {
		x, nat := values("--engine", "petsc", "--ranks", ranks, "--solver", "direct")
		if d := maxAbsDiff(x, goX); d > 1e-10 {
			t.Errorf("%s ranks: the engines differ by %.2e", ranks, d)
		}
		if nat != natural {
			t.Errorf("%s ranks: natural condition %q, Go engine %q", ranks, nat, natural)
		}
	}
}

// verify on a refined file mesh of a domain with a hole (runtime/mesh
// testdata: the unit square without [1/3, 2/3]²), with a value condition
// on a part of the outer boundary and a Robin condition on a part of the
// hole chosen by midpoint conditions, and the natural condition elsewhere:
// the manufactured solution converges at the orders of Q1 and P1 (L² 2,
// H¹ 1, the orders verify expects of degree-1 elements; README).
// Manufacture gives the free facets the exact flux as a part of their own
// (all minus the claimed parts).
func TestVerifyPartsOnFileMesh(t *testing.T) {
	src := `model hole_parts
dimension 2
sides outer, hole
unknown u: scalar Q1
given kappa = 1 + x*y
equation for u: [1, 1/2] . grad(u) - div(kappa*grad(u)) + u = 1
part east = outer cap {x >= 1/2}
part south_rim = hole cap {y <= 1/2}
at east: u = 0
at south_rim: flux(u) = 1 - 2*u
`
	dir := t.TempDir()
	for _, c := range []struct{ element, mesh string }{{"Q1", "hole-quad.vtu"}, {"P1", "hole-tri.vtu"}} {
		p := writeFile(t, dir, c.element+".fw", strings.Replace(src, "Q1", c.element, 1))
		rep := verifyJSON(t, p, "--mesh", filepath.Join("runtime", "mesh", "testdata", c.mesh), "--levels", "4")
		if len(rep.Failed) > 0 || len(rep.Methods) != 1 {
			t.Fatalf("%s: %v", c.mesh, rep.Failed)
		}
		lv := rep.Methods[0].Levels
		if last := lv[len(lv)-1]; last.OrderL2 < 1.8 || last.OrderH1 < 0.9 {
			t.Errorf("%s: orders %.2f, %.2f on the finest pair", c.mesh, last.OrderL2, last.OrderH1)
		}
	}
}
