package gogen

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"

	"golang.org/x/tools/go/packages"
)

// checkProgram is the main package of the temporary module: for every
// model it lowers the forms again, finds the generated kernels through
// runtime/compiled by form hash, and compares their element matrices and
// vectors with the interpreted kernels (runtime/interp, the independent
// reference path) on seeded random cells, for the cell kernel and every
// facet of every boundary side.
//
// Tolerance: |generated − interpreted| ≤ 1e-13 · max(|interpreted|) per
// matrix or vector (normwise relative). Both paths sum the same products
// in different orders (and the generated kernels integrate some terms in
// advance), so they differ by round-off, a few ulps of the largest
// entry; 1e-13 leaves a margin of about 10³ (common practice, no source).
const checkProgram = `package main

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"strings"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/compiled"
	"github.com/formwright/formwright/runtime/interp"
	"github.com/formwright/formwright/stdlib"
%s)

var cases = []struct{ file, src string }{
%s}

// randomCell perturbs the reference cell, scales and shifts it, and keeps
// it only if every corner has a positive Jacobian (non-degenerate).
func randomCell(c cell.Type, rng *rand.Rand) []float64 {
	ref := c.Vertices()
	d := c.Dim()
	for {
		s := 0.1 + rng.Float64()
		var shift [3]float64
		for k := range shift {
			shift[k] = rng.Float64()*2 - 1
		}
		x := make([]float64, len(ref))
		for i, v := range ref {
			x[i] = s*(v+0.25*(rng.Float64()-0.5)) + shift[i%%d]
		}
		if c.IsSimplex() && d == 1 && x[1] > x[0] {
			return x
		}
		if kernel.CellVolume(c, x) > 0.05*s*s && okCorners(c, x) {
			return x
		}
	}
}

func okCorners(c cell.Type, x []float64) bool {
	k, err := interp.NewKernel(&ir.LoweredForm{Method: "galerkin", Dim: c.Dim(), Unknowns: []ir.LoweredUnknown{{Name: "u", Element: map[bool]ir.Element{true: ir.P1, false: ir.Q1}[c.IsSimplex()]}},
		Integrals: []ir.Integral{{Linear: []ir.Term{{Coef: ir.Int(source.Pos{}, 1), Test: &ir.FieldD{Field: &ir.Field{Name: "u", Role: ir.Test}}}}}}}, c, interp.Options{Degree: 3})
	if err != nil {
		panic(err)
	}
	n := k.Layout().N()
	A, b := make([]float64, n*n), make([]float64, n)
	k.Cell(&kernel.CellInput{Coords: x}, A, b)
	return !math.IsNaN(b[0])
}

func compare(what string, got, want []float64) (float64, bool) {
	scale := 0.0
	for _, w := range want {
		scale = math.Max(scale, math.Abs(w))
	}
	worst := 0.0
	for i := range want {
		e := math.Abs(got[i] - want[i])
		if !(e <= 1e-13*scale) {
			fmt.Printf("FAIL %%s: entry %%d = %%.17g, interpreted %%.17g (scale %%.3g)\n", what, i, got[i], want[i], scale)
			return e, false
		}
		if scale > 0 {
			worst = math.Max(worst, e/scale)
		}
	}
	return worst, true
}

func main() {
	rng := rand.New(rand.NewPCG(20261201, 7))
	fails, checks, worst := 0, 0, 0.0
	for _, cs := range cases {
		f, errs := lang.Parse(cs.file, []byte(cs.src))
		m, cerrs := compiler.Check(f, compiler.CheckOptions{Load: stdlib.Module})
		if len(errs)+len(cerrs) > 0 {
			fmt.Println("FAIL", cs.file, "does not check")
			fails++
			continue
		}
		d, err := compiler.Derive(m, nil)
		if err != nil {
			fmt.Println("FAIL", cs.file, err)
			fails++
			continue
		}
		for _, fm := range d.Forms {
			lf, err := d.Lower(fm.Method)
			if err == nil && lf.IsTransient() {
				var sf *ir.SteppedForm
				if sf, err = compiler.BackwardEuler(lf); err == nil {
					lf = sf.Step
				}
			}
			if err != nil {
				fmt.Println("FAIL", cs.file, err)
				fails++
				continue
			}
			name := cs.file + " " + lf.Method
			k, ok := compiled.Lookup(ir.FormHash(lf))
			if !ok {
				fmt.Println("FAIL", name, "no kernel registered under", ir.FormHash(lf))
				fails++
				continue
			}
			ik, err := interp.NewKernel(lf, k.Cell, interp.Options{})
			if err != nil {
				fmt.Println("FAIL", name, err)
				fails++
				continue
			}
			if ik.Rule().Degree < k.Degree {
				fmt.Println("FAIL", name, "degree", k.Degree, "vs", ik.Rule().Degree)
				fails++
			}
			gk := k.NewCell()
			n := gk.Layout().N()
			if n != ik.Layout().N() {
				fmt.Println("FAIL", name, "layout size", n, ik.Layout().N())
				fails++
				continue
			}
			ifk, err := interp.NewFacetKernels(lf, k.Cell, interp.Options{})
			if err != nil {
				fmt.Println("FAIL", name, err)
				fails++
				continue
			}
			var gfk []kernel.FacetKernel
			if k.NewFacets != nil {
				gfk = k.NewFacets()
			}
			if len(gfk) != len(ifk) {
				fmt.Println("FAIL", name, "facet kernels", len(gfk), "vs", len(ifk))
				fails++
				continue
			}
			A1, b1 := make([]float64, n*n), make([]float64, n)
			A2, b2 := make([]float64, n*n), make([]float64, n)
			for trial := 0; trial < 4; trial++ {
				in := kernel.CellInput{Coords: randomCell(k.Cell, rng), Time: rng.Float64(), Step: 0.01 + rng.Float64()}
				if ik.NeedsPrevious() {
					in.Previous = make([]float64, n)
					for i := range in.Previous {
						in.Previous[i] = rng.Float64()*2 - 1
					}
				}
				if lf.ReadsRecovered() {
					in.Recovered = make([]float64, n*lf.Dim)
					for i := range in.Recovered {
						in.Recovered[i] = rng.Float64()*2 - 1
					}
				}
				for i := range A2 {
					A2[i] = math.NaN() // kernels overwrite
				}
				ik.Cell(&in, A1, b1)
				gk.Cell(&in, A2, b2)
				for _, x := range [][2][]float64{{A2, A1}, {b2, b1}} {
					checks++
					w, ok := compare(fmt.Sprintf("%%s cell %%d", name, trial), x[0], x[1])
					if !ok {
						fails++
					}
					worst = math.Max(worst, w)
				}
				for s := range ifk {
					if gfk[s].Side() != ifk[s].Side() {
						fmt.Println("FAIL", name, "side", gfk[s].Side(), "vs", ifk[s].Side())
						fails++
						continue
					}
					for fct := 0; fct < k.Cell.NumFacets(); fct++ {
						fin := kernel.FacetInput{CellInput: in, Facet: fct}
						ifk[s].Facet(&fin, A1, b1)
						gfk[s].Facet(&fin, A2, b2)
						for _, x := range [][2][]float64{{A2, A1}, {b2, b1}} {
							checks++
							w, ok := compare(fmt.Sprintf("%%s side %%s facet %%d", name, ifk[s].Side(), fct), x[0], x[1])
							if !ok {
								fails++
							}
							worst = math.Max(worst, w)
						}
					}
				}
			}
			// An inverted cell (two vertices swapped): both kernels fill
			// A and b with NaN.
			bad := randomCell(k.Cell, rng)
			d := k.Cell.Dim()
			for i := 0; i < d; i++ {
				bad[i], bad[d+i] = bad[d+i], bad[i]
			}
			badIn := kernel.CellInput{Coords: bad, Previous: make([]float64, n)}
			ik.Cell(&badIn, A1, b1)
			gk.Cell(&badIn, A2, b2)
			if !math.IsNaN(A1[0]) || !math.IsNaN(A2[0]) || !math.IsNaN(b2[n-1]) {
				fmt.Println("FAIL", name, "inverted cell: generated", A2[0], b2[n-1], "interpreted", A1[0])
				fails++
			}
			// Zero allocation per element.
			fixedIn := &kernel.CellInput{Coords: randomCellFixed(k.Cell), Previous: make([]float64, n)}
			allocs := testingAllocs(func() { gk.Cell(fixedIn, A2, b2) })
			if allocs != 0 {
				fmt.Println("FAIL", name, "allocates", allocs)
				fails++
			}
			for _, fk := range gfk {
				fin := &kernel.FacetInput{CellInput: *fixedIn, Facet: k.Cell.NumFacets() - 1}
				if a := testingAllocs(func() { fk.Facet(fin, A2, b2) }); a != 0 {
					fmt.Println("FAIL", name, "facet kernel", fk.Side(), "allocates", a)
					fails++
				}
			}
		}
	}
	fmt.Printf("checked %%d matrices and vectors, worst relative difference %%.3g, %%d failures\n", checks, worst, fails)
	_ = strings.TrimSpace
	if fails > 0 {
		os.Exit(1)
	}
}

var fixed = map[cell.Type][]float64{}

func randomCellFixed(c cell.Type) []float64 {
	if x, ok := fixed[c]; ok {
		return x
	}
	x := randomCell(c, rand.New(rand.NewPCG(1, 2)))
	fixed[c] = x
	return x
}
`

// allocsFile measures allocations with testing.AllocsPerRun.
const allocsFile = `package main

import "testing"

func testingAllocs(f func()) float64 { return testing.AllocsPerRun(100, f) }
`

// TestGeneratedMatchesInterpreted generates the kernels of every model
// case, writes them with one check program into a temporary directory
// inside this module (so the go command resolves nothing new and needs
// neither network nor module downloads), type-checks the generated
// packages with go/packages, runs go vet on them, and runs the program,
// which compares every generated element matrix and vector with the
// interpreted kernel's (see checkProgram). Under -short it checks a few
// cases that cover unrolled and loop code, facets and transient forms.
func TestGeneratedMatchesInterpreted(t *testing.T) {
	cases := modelCases(t)
	if testing.Short() {
		var short []modelCase
		for _, mc := range cases {
			switch mc.name {
			case "adr", "robin", "heatq2", "stokesloop":
				short = append(short, mc)
			}
		}
		cases = short
	} else {
		// The project's example models too (read-only; they are the models
		// whose generated kernels the command ships).
		root := repoRoot(t)
		examples, _ := filepath.Glob(filepath.Join(root, "examples", "*", "model.fw"))
		sort.Strings(examples)
		for _, p := range examples {
			src, err := os.ReadFile(p)
			if err != nil {
				t.Fatal(err)
			}
			name := filepath.Base(filepath.Dir(p))
			cases = append(cases, modelCase{"ex" + strings.ReplaceAll(name, "_", ""), "examples/" + name + "/model.fw", string(src), 0})
		}
	}
	dir, modPath := moduleTempDir(t)
	write := func(name string, b []byte) {
		p := filepath.Join(dir, name)
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	var imports, caseList strings.Builder
	var pkgs []string
	for _, mc := range cases {
		forms := lowerAll(t, mc.file, []byte(mc.src))
		src, err := Generate(forms, Options{Package: mc.name, ModelFile: mc.file, CommandLine: "gen " + mc.file + " -o . --package " + mc.name,
			Output: filepath.Join(dir, mc.name, "kernels.go"), loopAbove: mc.loopAbove})
		if err != nil {
			t.Fatalf("%s: %v", mc.file, err)
		}
		write(filepath.Join(mc.name, "kernels.go"), src)
		fmt.Fprintf(&imports, "\t_ %q\n", modPath+"/"+mc.name)
		fmt.Fprintf(&caseList, "\t{%s, %s},\n", strconv.Quote(mc.file), strconv.Quote(mc.src))
		pkgs = append(pkgs, "./"+mc.name)
	}
	write("main.go", []byte(fmt.Sprintf(checkProgram, imports.String(), caseList.String())))
	write("allocs.go", []byte(allocsFile))

	env := goEnv()
	// Type-check the generated packages.
	cfg := &packages.Config{Mode: packages.NeedName | packages.NeedTypes | packages.NeedSyntax | packages.NeedTypesInfo, Dir: dir, Env: env}
	loaded, err := packages.Load(cfg, pkgs...)
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range loaded {
		for _, e := range p.Errors {
			t.Errorf("type-check %s: %v", p.PkgPath, e)
		}
	}
	if t.Failed() {
		t.FailNow()
	}
	run := func(args ...string) string {
		cmd := exec.Command("go", args...)
		cmd.Dir = dir
		cmd.Env = env
		out, err := cmd.CombinedOutput()
		if err != nil {
			t.Errorf("go %s: %v\n%s", strings.Join(args, " "), err, out)
		}
		return string(out)
	}
	run(append([]string{"vet"}, pkgs...)...)
	out := run("run", ".")
	t.Log(strings.TrimSpace(out))
	if !strings.Contains(out, " 0 failures") {
		t.Errorf("check program did not report success")
	}
}

// moduleTempDir makes a temporary directory inside this package's
// directory, removed when the test ends, and returns it and its import
// path. Its name starts with "_", so the go command's ./... patterns
// (go vet ./..., go test ./...) skip it while it exists.
func moduleTempDir(t *testing.T) (dir, importPath string) {
	t.Helper()
	wd, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	dir, err = os.MkdirTemp(wd, "_e2e")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(dir) })
	return dir, "github.com/formwright/formwright/compiler/gogen/" + filepath.Base(dir)
}

// goEnv is the environment of the go commands the tests run: the test's
// own (GOFLAGS, GOWORK, the caches), with the module proxy off, so that a
// child command can only use what building this test already needed.
func goEnv() []string {
	return append(os.Environ(), "GOPROXY=off")
}
