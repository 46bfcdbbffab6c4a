package gogen

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// The example examples/c_kernels_assembly: a C program with its own mesh
// loop assembles and solves the plate model with the checked-in C kernels.
const cExampleDir = "../../examples/c_kernels_assembly"

// cExampleFiles generates the example's kernels as gen writes them.
func cExampleFiles(t *testing.T) (h, src []byte) {
	t.Helper()
	model, err := os.ReadFile(filepath.Join(cExampleDir, "plate.fw"))
	if err != nil {
		t.Fatal(err)
	}
	forms, derived := lowerDerived(t, "plate.fw", model)
	h, src, err = GenerateC(forms, COptions{Name: "plate_kernels", Prefix: "plate", ModelFile: "plate.fw",
		CommandLine: "gen plate.fw -o . --lang c", Derived: derived})
	if err != nil {
		t.Fatal(err)
	}
	return h, src
}

// TestCExample checks that the example's generated kernels are up to date
// (run with -update to rewrite them), builds the example with the flags
// its README gives (and -Werror), runs it, and compares what it prints
// with the README's stated result: the largest nodal errors against the
// manufactured solution sin(πx) sin(πy), which `formwright solve` reports
// for the same meshes through the interpreted kernels, the Go assembler
// and a direct solver (an independent path; span:0,1,0,1:NxN:tri has the
// same triangles), to 0.1 %, the rounding of the stated values; and the
// error ratio between successive meshes, 4 within 5 % for the O(h²)
// nodal error of P1 elements on these uniform meshes (common practice,
// no source).
func TestCExample(t *testing.T) {
	h, src := cExampleFiles(t)
	for name, b := range map[string][]byte{"plate_kernels.h": h, "plate_kernels.c": src} {
		p := filepath.Join(cExampleDir, name)
		if *update {
			if err := os.WriteFile(p, b, 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		old, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(old, b) {
			t.Errorf("%s is stale: go test ./compiler/gogen -run TestCExample -update", p)
		}
	}
	cc, _ := compilers(t)
	dir := t.TempDir()
	for _, name := range []string{"main.c", "plate_kernels.h", "plate_kernels.c"} {
		b, err := os.ReadFile(filepath.Join(cExampleDir, name))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	build := exec.Command(cc, "-std=c99", "-O2", "-Wall", "-Wextra", "-pedantic", "-Werror", "-o", "plate", "main.c", "plate_kernels.c", "-lm")
	build.Dir = dir
	if out, err := build.CombinedOutput(); err != nil {
		t.Fatalf("build: %v\n%s", err, out)
	}
	out, err := exec.Command(filepath.Join(dir, "plate")).Output()
	if err != nil {
		t.Fatalf("run: %v", err)
	}
	t.Logf("\n%s", out)
	// Stated in examples/c_kernels_assembly/README.md.
	stated := map[int]float64{16: 3.214e-03, 32: 8.079e-04, 64: 2.021e-04}
	got := map[int]float64{}
	for _, line := range strings.Split(strings.TrimSpace(string(out)), "\n") {
		var n, it int
		var e, c float64
		if _, err := fmt.Sscanf(line, "n = %d: largest nodal error %g, u(0.5, 0.5) = %g (%d CG iterations)", &n, &e, &c, &it); err != nil {
			t.Fatalf("output line %q: %v", line, err)
		}
		got[n] = e
	}
	for n, want := range stated {
		if e, ok := got[n]; !ok || !(abs(e-want) <= 1e-3*want) {
			t.Errorf("n = %d: largest nodal error %.4g, README states %.4g", n, e, want)
		}
	}
	for _, n := range []int{16, 32} {
		if r := got[n] / got[2*n]; !(r > 3.8 && r < 4.2) {
			t.Errorf("error ratio n = %d to %d: %.3f, want about 4 (second order)", n, 2*n, r)
		}
	}
}

func abs(x float64) float64 {
	if x < 0 {
		return -x
	}
	return x
}
