package gogen

import (
	"bufio"
	"bytes"
	"encoding/hex"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/interp"
	"github.com/formwright/formwright/runtime/kernel"
)

// The C kernels are compiled warning-free as C99 and as C++11 with the
// flags of the brief, linked with a driver that reads cells from its
// standard input and writes the element matrices and vectors as hex
// floats, and compared with the interpreted kernels (runtime/interp, the
// reference path) within 1e-13 of the largest entry, as the Go kernels
// are (e2e_test.go; common practice, no source).

// cFlags and cxxFlags are the compiler flags the C kernels must pass.
var (
	cFlags   = []string{"-std=c99", "-O2", "-Wall", "-Wextra", "-pedantic", "-Werror"}
	cxxFlags = []string{"-std=c++11", "-Wall", "-Wextra", "-Werror"}
)

// compilers returns a C and a C++ compiler, or skips the test.
func compilers(t *testing.T) (cc, cxx string) {
	t.Helper()
	find := func(names ...string) string {
		for _, n := range names {
			if p, err := exec.LookPath(n); err == nil {
				return p
			}
		}
		return ""
	}
	cc, cxx = find("cc", "gcc", "clang"), find("c++", "g++", "clang++")
	if cc == "" || cxx == "" {
		t.Skip("no C or C++ compiler on PATH (cc, gcc, clang; c++, g++, clang++): the C kernels are not compiled")
	}
	return cc, cxx
}

// cUnit is one generated header and source.
type cUnit struct {
	name   string
	forms  []*ir.LoweredForm
	h, src []byte
	prefix string
	// quick compiles it with -O0 instead of -O2 (same warnings but for the
	// few that need the optimiser), for the element variants.
	quick bool
}

// cBuild writes the units and a driver into dir, checks every source as
// C++ (c++ -fsyntax-only: all of the front end's warnings) and compiles it
// as C with -O2 (whose warnings need the optimiser), the compilers
// running in parallel, links the program and returns its path.
func cBuild(t *testing.T, dir string, units []cUnit) string {
	t.Helper()
	cc, cxx := compilers(t)
	var jobs [][]string
	var objects []string
	for _, u := range units {
		for name, b := range map[string][]byte{u.name + ".h": u.h, u.name + ".c": u.src} {
			if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
				t.Fatal(err)
			}
		}
		src := u.name + ".c"
		flags := cFlags
		if u.quick {
			flags = append(slices.Clone(cFlags), "-O0")
		}
		jobs = append(jobs, append(append([]string{cc}, flags...), "-c", src, "-o", u.name+".o"))
		jobs = append(jobs, append(append([]string{cxx}, cxxFlags...), "-x", "c++", "-fsyntax-only", src))
		objects = append(objects, u.name+".o")
	}
	if err := os.WriteFile(filepath.Join(dir, "driver.c"), cDriver(units), 0o644); err != nil {
		t.Fatal(err)
	}
	jobs = append(jobs, append(append([]string{cc}, cFlags...), "-c", "driver.c", "-o", "driver.o"))
	errs := make([]error, len(jobs))
	sem := make(chan bool, max(1, runtime.NumCPU()))
	var wg sync.WaitGroup
	for i, job := range jobs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			sem <- true
			defer func() { <-sem }()
			cmd := exec.Command(job[0], job[1:]...)
			cmd.Dir = dir
			if out, err := cmd.CombinedOutput(); err != nil {
				errs[i] = fmt.Errorf("%s: %v\n%s", strings.Join(job, " "), err, out)
			}
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			t.Error(err)
		}
	}
	if t.Failed() {
		t.FailNow()
	}
	exe := filepath.Join(dir, "driver")
	link := exec.Command(cc, append(append([]string{"-o", exe, "driver.o"}, objects...), "-lm")...)
	link.Dir = dir
	if out, err := link.CombinedOutput(); err != nil {
		t.Fatalf("link: %v\n%s", err, out)
	}
	return exe
}

// cDriver is the test program: it prints every kernel's layout, then for
// each request on standard input ("kernel facet? side facet ncoords
// coords... hasprev [prev...] time step") the status and A and b.
func cDriver(units []cUnit) []byte {
	var b strings.Builder
	b.WriteString("#include <stdio.h>\n#include <stdlib.h>\n\n")
	for _, u := range units {
		fmt.Fprintf(&b, "#include %q\n", u.name+".h")
	}
	b.WriteString(`
typedef int (*cell_fn)(const struct fw_kernel_input *, double *, double *);
typedef int (*facet_fn)(const struct fw_kernel_input *, int, int, double *, double *);
typedef const struct fw_kernel_layout *(*layout_fn)(void);
struct entry {
	cell_fn cell;
	facet_fn facet;
	layout_fn layout;
};
static const struct entry kernels[] = {
`)
	for _, u := range units {
		for _, fp := range u.forms {
			base := u.prefix + "_" + strings.ToLower(methodIdents[fp.Method])
			fmt.Fprintf(&b, "\t{%s_cell, %s_facet, %s_layout},\n", base, base, base)
		}
	}
	b.WriteString(`};

static void hexstr(const char *s)
{
	printf(" ");
	if (*s == 0) {
		printf("-");
	}
	for (; *s; ++s) {
		printf("%02x", (unsigned char)*s);
	}
}

int main(void)
{
	int n = (int)(sizeof kernels / sizeof kernels[0]);
	for (int k = 0; k < n; ++k) {
		const struct fw_kernel_layout *l = kernels[k].layout();
		printf("L %d", k);
		hexstr(l->method);
		hexstr(l->cell);
		printf(" %d %d %d %d %d %d %d %d %d %d %d", l->dim, l->vertices, l->dofs, l->degree, l->points, l->num_fields, l->num_sides, l->num_facets, l->needs_previous, l->needs_recovered, l->symmetric);
		for (int f = 0; f < l->num_fields; ++f) {
			hexstr(l->fields[f].name);
			hexstr(l->fields[f].element);
			printf(" %d %d %d", l->fields[f].components, l->fields[f].nodes, l->fields[f].offset);
		}
		for (int s = 0; s < l->num_sides; ++s) {
			hexstr(l->sides[s]);
		}
		printf("\n");
	}
	int k, facetKernel, side, facet, nc;
	static double coords[64], prev[4096], rec[4096 * 3], A[4096 * 4096 / 64], b[4096];
	while (scanf("%d %d %d %d %d", &k, &facetKernel, &side, &facet, &nc) == 5) {
		for (int i = 0; i < nc; ++i) {
			if (scanf("%lf", &coords[i]) != 1) {
				return 2;
			}
		}
		int hasPrev, np;
		if (scanf("%d %d", &hasPrev, &np) != 2) {
			return 2;
		}
		for (int i = 0; i < np; ++i) {
			if (scanf("%lf", &prev[i]) != 1) {
				return 2;
			}
		}
		struct fw_kernel_input in;
		in.coords = coords;
		in.previous = hasPrev ? prev : NULL;
		if (scanf("%lf %lf", &in.time, &in.step) != 2) {
			return 2;
		}
		int hasRec, nr;
		if (scanf("%d %d", &hasRec, &nr) != 2) {
			return 2;
		}
		for (int i = 0; i < nr; ++i) {
			if (scanf("%lf", &rec[i]) != 1) {
				return 2;
			}
		}
		in.recovered = hasRec ? rec : NULL;
		int dofs = kernels[k].layout()->dofs;
		for (int i = 0; i < dofs * dofs; ++i) {
			A[i] = 12345.0; /* a kernel that writes nothing leaves this */
		}
		for (int i = 0; i < dofs; ++i) {
			b[i] = 12345.0;
		}
		int st = facetKernel ? kernels[k].facet(&in, side, facet, A, b) : kernels[k].cell(&in, A, b);
		printf("R %d", st);
		for (int i = 0; i < dofs * dofs; ++i) {
			printf(" %a", A[i]);
		}
		for (int i = 0; i < dofs; ++i) {
			printf(" %a", b[i]);
		}
		printf("\n");
	}
	return 0;
}
`)
	return []byte(b.String())
}

// request is one kernel call of the driver.
type request struct {
	kernel       int
	facetKernel  bool
	side, facet  int
	in           kernel.CellInput
	wantA, wantB []float64 // the interpreted kernel's, nil: see check
	check        func(status int, A, b []float64) error
	what         string
}

func (r *request) write(w *bytes.Buffer) {
	fk := 0
	if r.facetKernel {
		fk = 1
	}
	fmt.Fprintf(w, "%d %d %d %d %d", r.kernel, fk, r.side, r.facet, len(r.in.Coords))
	for _, x := range r.in.Coords {
		w.WriteString(" " + strconv.FormatFloat(x, 'g', 17, 64))
	}
	if r.in.Previous == nil {
		w.WriteString(" 0 0")
	} else {
		fmt.Fprintf(w, " 1 %d", len(r.in.Previous))
		for _, x := range r.in.Previous {
			w.WriteString(" " + strconv.FormatFloat(x, 'g', 17, 64))
		}
	}
	fmt.Fprintf(w, " %s %s", strconv.FormatFloat(r.in.Time, 'g', 17, 64), strconv.FormatFloat(r.in.Step, 'g', 17, 64))
	if r.in.Recovered == nil {
		w.WriteString(" 0 0\n")
	} else {
		fmt.Fprintf(w, " 1 %d", len(r.in.Recovered))
		for _, x := range r.in.Recovered {
			w.WriteString(" " + strconv.FormatFloat(x, 'g', 17, 64))
		}
		w.WriteString("\n")
	}
}

// randomCell perturbs the reference cell, scales and shifts it, and keeps
// it only if the P1/Q1 map has a positive Jacobian determinant at the
// vertices (checked with the interpreted kernel of ∫v on a degree-3 rule).
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
			x[i] = s*(v+0.25*(rng.Float64()-0.5)) + shift[i%d]
		}
		if d == 1 && x[1] > x[0] {
			return x
		}
		if d > 1 && kernel.CellVolume(c, x) > 0.05*s*s && positive(c, x) {
			return x
		}
	}
}

func positive(c cell.Type, x []float64) bool {
	e := map[bool]ir.Element{true: ir.P1, false: ir.Q1}[c.IsSimplex()]
	lf := &ir.LoweredForm{Method: "galerkin", Dim: c.Dim(), Unknowns: []ir.LoweredUnknown{{Name: "u", Element: e}},
		Integrals: []ir.Integral{{Linear: []ir.Term{{Coef: ir.Int(source.Pos{}, 1), Test: &ir.FieldD{Field: &ir.Field{Name: "u", Role: ir.Test}}}}}}}
	k, err := interp.NewKernel(lf, c, interp.Options{Degree: 3})
	if err != nil {
		panic(err)
	}
	n := k.Layout().N()
	A, b := make([]float64, n*n), make([]float64, n)
	k.Cell(&kernel.CellInput{Coords: x}, A, b)
	return !math.IsNaN(b[0])
}

// compareEntries checks got against want within 1e-13 of want's largest
// entry.
func compareEntries(got, want []float64) error {
	scale := 0.0
	for _, w := range want {
		scale = math.Max(scale, math.Abs(w))
	}
	for i := range want {
		if !(math.Abs(got[i]-want[i]) <= 1e-13*scale) {
			return fmt.Errorf("entry %d = %.17g, interpreted %.17g (scale %.3g)", i, got[i], want[i], scale)
		}
	}
	return nil
}

// cRequests builds the calls for the forms of the units: per form four
// random cells (cell kernel and every facet of every side), an inverted
// cell, and a side and a facet index out of range.
func cRequests(t *testing.T, units []cUnit, rng *rand.Rand) ([]*request, [][]string) {
	var reqs []*request
	var layouts [][]string // per kernel: the layout line the driver should print
	k := 0
	for _, u := range units {
		for _, lf := range u.forms {
			c := kernel.CellOf(lf)
			name := u.name + " " + lf.Method
			ik, err := interp.NewKernel(lf, c, interp.Options{})
			if err != nil {
				t.Fatal(err)
			}
			ifk, err := interp.NewFacetKernels(lf, c, interp.Options{})
			if err != nil {
				t.Fatal(err)
			}
			layouts = append(layouts, expectedLayout(k, lf, c, ik))
			n := ik.Layout().N()
			for trial := 0; trial < 4; trial++ {
				in := kernel.CellInput{Coords: randomCell(c, rng), Time: rng.Float64(), Step: 0.01 + rng.Float64()}
				if ik.NeedsPrevious() {
					in.Previous = make([]float64, n)
					for i := range in.Previous {
						in.Previous[i] = rng.Float64()*2 - 1
					}
				}
				if lf.ReadsRecovered() {
					in.Recovered = make([]float64, n*c.Dim())
					for i := range in.Recovered {
						in.Recovered[i] = rng.Float64()*2 - 1
					}
				}
				A, b := make([]float64, n*n), make([]float64, n)
				ik.Cell(&in, A, b)
				reqs = append(reqs, &request{kernel: k, in: in, wantA: A, wantB: b, what: fmt.Sprintf("%s cell %d", name, trial)})
				for s, fk := range ifk {
					for f := 0; f < c.NumFacets(); f++ {
						A, b := make([]float64, n*n), make([]float64, n)
						fk.Facet(&kernel.FacetInput{CellInput: in, Facet: f}, A, b)
						reqs = append(reqs, &request{kernel: k, facetKernel: true, side: s, facet: f, in: in, wantA: A, wantB: b,
							what: fmt.Sprintf("%s side %q facet %d, cell %d", name, fk.Side(), f, trial)})
					}
				}
			}
			// An inverted cell (two vertices swapped): NaN and the status.
			bad := randomCell(c, rng)
			d := c.Dim()
			for i := 0; i < d; i++ {
				bad[i], bad[d+i] = bad[d+i], bad[i]
			}
			inv := kernel.CellInput{Coords: bad, Previous: make([]float64, n)}
			reqs = append(reqs, &request{kernel: k, in: inv, what: name + " inverted cell", check: func(st int, A, b []float64) error {
				if st != 1 || !math.IsNaN(A[0]) || !math.IsNaN(b[n-1]) {
					return fmt.Errorf("status %d, A[0] %v, b[n-1] %v; want FW_KERNEL_DEGENERATE and NaN", st, A[0], b[n-1])
				}
				return nil
			}})
			// Indices out of range: the status, and nothing written.
			untouched := func(st int, A, b []float64) error {
				if st != 2 || A[0] != 12345 || b[0] != 12345 {
					return fmt.Errorf("status %d, A[0] %v; want FW_KERNEL_BAD_INDEX and no write", st, A[0])
				}
				return nil
			}
			good := randomCell(c, rng)
			reqs = append(reqs, &request{kernel: k, facetKernel: true, side: len(ifk), in: kernel.CellInput{Coords: good}, what: name + " side out of range", check: untouched})
			reqs = append(reqs, &request{kernel: k, facetKernel: true, side: 0, facet: c.NumFacets(), in: kernel.CellInput{Coords: good}, what: name + " facet out of range", check: untouched})
			k++
		}
	}
	return reqs, layouts
}

// expectedLayout is the layout line of kernel k as the driver prints it,
// from the form and the interpreted kernels.
func expectedLayout(k int, lf *ir.LoweredForm, c cell.Type, ik *interp.Kernel) []string {
	h := func(s string) string {
		if s == "" {
			return "-"
		}
		return hex.EncodeToString([]byte(s))
	}
	l := ik.Layout()
	prev := 0
	if ik.NeedsPrevious() {
		prev = 1
	}
	out := []string{"L", strconv.Itoa(k), h(lf.Method), h(c.String())}
	rec := 0
	if lf.ReadsRecovered() {
		rec = 1
	}
	for _, v := range []int{c.Dim(), c.NumVertices(), l.N(), lf.QuadratureDegree(), ik.Rule().NumPoints(), len(l.Fields), len(lf.Sides()), c.NumFacets(), prev, rec} {
		out = append(out, strconv.Itoa(v))
	}
	out = append(out, "?") // symmetric: the generator's own decision
	off := 0
	for i, f := range l.Fields {
		u := lf.Unknowns[i]
		out = append(out, h(u.Name), h(u.Element.String()), strconv.Itoa(f.Components), strconv.Itoa(f.Element.NumNodes()), strconv.Itoa(off))
		off += f.Components * f.Element.NumNodes()
	}
	for _, s := range lf.Sides() {
		out = append(out, h(s))
	}
	return out
}

// cRun runs the driver on the requests and checks its output.
func cRun(t *testing.T, exe string, reqs []*request, layouts [][]string) {
	t.Helper()
	var in bytes.Buffer
	for _, r := range reqs {
		r.write(&in)
	}
	cmd := exec.Command(exe)
	cmd.Stdin = &in
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("driver: %v", err)
	}
	sc := bufio.NewScanner(bytes.NewReader(out))
	sc.Buffer(make([]byte, 1<<20), 1<<26)
	fails, ri, li := 0, 0, 0
	worst := 0.0
	for sc.Scan() {
		f := strings.Fields(sc.Text())
		switch f[0] {
		case "L":
			want := layouts[li]
			li++
			if len(f) != len(want) {
				t.Errorf("layout %v, want %v", f, want)
				continue
			}
			for i := range want {
				if want[i] != "?" && f[i] != want[i] {
					t.Errorf("layout field %d of kernel %s: %s, want %s", i, f[1], f[i], want[i])
				}
			}
		case "R":
			r := reqs[ri]
			ri++
			st, _ := strconv.Atoi(f[1])
			var vals []float64
			for _, s := range f[2:] {
				v, err := strconv.ParseFloat(s, 64)
				if err != nil {
					t.Fatalf("%s: %v", r.what, err)
				}
				vals = append(vals, v)
			}
			n := len(r.wantB)
			if r.check != nil {
				n = int(math.Sqrt(float64(len(vals))))
				for n*n+n > len(vals) {
					n--
				}
				if err := r.check(st, vals[:n*n], vals[n*n:]); err != nil {
					t.Errorf("%s: %v", r.what, err)
					fails++
				}
				continue
			}
			if st != 0 || len(vals) != n*n+n {
				t.Errorf("%s: status %d, %d values", r.what, st, len(vals))
				fails++
				continue
			}
			for _, p := range [][2][]float64{{vals[:n*n], r.wantA}, {vals[n*n:], r.wantB}} {
				if err := compareEntries(p[0], p[1]); err != nil {
					t.Errorf("%s: %v", r.what, err)
					fails++
				}
				scale := 0.0
				for _, w := range p[1] {
					scale = math.Max(scale, math.Abs(w))
				}
				for i := range p[1] {
					if scale > 0 {
						worst = math.Max(worst, math.Abs(p[0][i]-p[1][i])/scale)
					}
				}
			}
		}
	}
	if ri != len(reqs) || li != len(layouts) {
		t.Errorf("driver answered %d of %d requests and %d of %d layouts", ri, len(reqs), li, len(layouts))
	}
	t.Logf("%d kernel calls, worst relative difference %.3g, %d failures", len(reqs), worst, fails)
}

// TestCKernelsMatchInterpreted compiles the C kernels of every model case
// (every method of every stdlib model and the hostile names with -O2; the
// element and cell variants with -O0, the hexahedra with GLS only, whose
// form has every term of the others, to keep the compile time down) and
// compares them with the interpreted kernels. Under -short it checks a few cases that cover
// unrolled and loop code, facets, transient and Picard forms and hostile
// names.
func TestCKernelsMatchInterpreted(t *testing.T) {
	compilers(t)
	var units []cUnit
	for _, mc := range modelCases(t) {
		if testing.Short() {
			switch mc.name {
			case "adr", "robin", "heatq2", "stokesloop", "navier_stokes", "hostilelocals":
			default:
				continue
			}
		}
		forms, derived := lowerDerived(t, mc.file, []byte(mc.src))
		if mc.name == "adrhex" || mc.name == "adrhex2" {
			var gls []*ir.LoweredForm
			for _, f := range forms {
				if f.Method == "gls" {
					gls = append(gls, f)
				}
			}
			forms = gls
		}
		h, src, err := GenerateC(forms, COptions{Name: mc.name + "_kernels", Prefix: mc.name, ModelFile: mc.file,
			CommandLine: "gen " + mc.file + " --lang c", Derived: derived, loopAbove: mc.loopAbove})
		if err != nil {
			t.Fatalf("%s: %v", mc.file, err)
		}
		quick := true
		switch mc.name {
		case "adr", "stokes", "oseen", "navier_stokes", "heat", "hostile", "hostilelocals":
			quick = false
		}
		units = append(units, cUnit{name: mc.name + "_kernels", forms: forms, h: h, src: src, prefix: mc.name, quick: quick})
	}
	exe := cBuild(t, t.TempDir(), units)
	reqs, layouts := cRequests(t, units, rand.New(rand.NewPCG(20261202, 11)))
	cRun(t, exe, reqs, layouts)
}

// Hostile text cannot break or inject C: side names with quotes,
// backslashes, comment delimiters, trigraphs, control characters and
// non-ASCII letters, a model file name and command line with line breaks
// and preprocessor lines, and model names that are C keywords or macros
// (hostile, hostilelocals) compile warning-free, and the layout reports
// the side names byte for byte.
func TestCHostileText(t *testing.T) {
	compilers(t)
	var units []cUnit
	for _, mc := range modelCases(t) {
		if mc.name != "robin" && mc.name != "hostile" {
			continue
		}
		forms, derived := lowerDerived(t, mc.file, []byte(mc.src))
		if mc.name == "robin" {
			rename := map[string]string{
				"right": "right\"); abort(); (\"\\",
				"top":   "top */ #include <stdio.h> /* ??/\n#error injected\r\t ??= é ☃ \\",
			}
			for i, lf := range forms {
				c := *lf
				c.Integrals = nil
				for _, in := range lf.Integrals {
					if s, ok := rename[in.Domain.Side]; ok {
						in.Domain.Side = s
					}
					c.Integrals = append(c.Integrals, in)
				}
				forms[i] = &c
			}
			derived = nil
		}
		h, src, err := GenerateC(forms, COptions{Name: mc.name + "_kernels", Prefix: mc.name,
			ModelFile: "evil*/\n#error injected\n/*??/.fw", CommandLine: "gen ??/\n#error x \\", Derived: derived})
		if err != nil {
			t.Fatal(err)
		}
		for _, b := range [][]byte{h, src} {
			for _, l := range strings.Split(string(b), "\n") {
				if strings.HasPrefix(strings.TrimSpace(l), "#error") {
					t.Errorf("%s: an injected line: %q", mc.name, l)
				}
			}
		}
		units = append(units, cUnit{name: mc.name + "_kernels", forms: forms, h: h, src: src, prefix: mc.name})
	}
	exe := cBuild(t, t.TempDir(), units)
	reqs, layouts := cRequests(t, units, rand.New(rand.NewPCG(5, 6)))
	cRun(t, exe, reqs, layouts)
}

// Options that would give an invalid or reserved identifier or file name
// are errors.
func TestCOptionErrors(t *testing.T) {
	f, src := stdModel(t, "adr")
	forms := lowerAll(t, f, src)
	for _, o := range []COptions{{Prefix: "int"}, {Prefix: "a__b"}, {Prefix: "_x"}, {Prefix: "1x"}, {Prefix: "fw_x"}, {Prefix: "a b"},
		{Prefix: "k", Name: "a\"b"}, {Prefix: "k", Name: "a/b"}, {Prefix: "k", Methods: []string{"nope"}}} {
		if _, _, err := GenerateC(forms, o); err == nil {
			t.Errorf("GenerateC with %+v: no error", o)
		}
	}
	for file, want := range map[string]string{"stdlib/models/adr.fw": "adr", "My Model-2.fw": "my_model_2", "2d.fw": "model_2d", "int.fw": "model_int", "é.fw": "model", "navier_stokes": "navier_stokes", "_x": "model_x"} {
		if got := CPrefix(file); got != want {
			t.Errorf("CPrefix(%q) = %q, want %q", file, got, want)
		}
	}
}
