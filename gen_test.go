package main

import (
	"bufio"
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// generateLines returns the formwright gen commands of a package's
// //go:generate directives.
func generateLines(t *testing.T, dir string) [][]string {
	f, err := os.Open(filepath.Join(dir, "doc.go"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var out [][]string
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := sc.Text()
		if !strings.HasPrefix(line, "//go:generate go run ") {
			continue
		}
		fields := strings.Fields(line)
		// //go:generate go run <root> gen ...
		out = append(out, fields[4:])
	}
	return out
}

// TestGeneratedKernelsUpToDate regenerates every checked-in kernel file
// from its //go:generate line and requires byte-identical output (run
// with -update, or "go generate ./...", to rewrite them).
func TestGeneratedKernelsUpToDate(t *testing.T) {
	dirs := []string{"stdlib/kernels", "runtime/distributed/internal/benchkernels"}
	ex, _ := filepath.Glob("examples/*/kernels")
	dirs = append(dirs, ex...)
	root, _ := os.Getwd()
	for _, dir := range dirs {
		lines := generateLines(t, dir)
		if len(lines) == 0 {
			t.Errorf("%s: no //go:generate lines", dir)
		}
		for _, args := range lines {
			t.Run(dir+" "+args[1], func(t *testing.T) {
				t.Chdir(filepath.Join(root, dir))
				if *update {
					var o, e bytes.Buffer
					if st := run(args, &o, &e); st != exitOK {
						t.Fatalf("%v: status %d: %s", args, st, e.String())
					}
					return
				}
				files, err := genFromArgs(args)
				if err != nil {
					t.Fatal(err)
				}
				for _, f := range files {
					old, err := os.ReadFile(f.Path)
					if err != nil {
						t.Fatalf("%v (run go test -run TestGeneratedKernelsUpToDate -update)", err)
					}
					if !bytes.Equal(old, f.Src) {
						t.Errorf("%s/%s is stale: regenerate with go generate ./%s", dir, f.Path, dir)
					}
				}
			})
		}
	}
}

// TestGenRefusesTransientPicard: a model that is both transient and
// Picard-iterated has no single stepped form to generate; gen says so,
// exits 2 and writes nothing.
func TestGenRefusesTransientPicard(t *testing.T) {
	path := writeModel(t, taylorGreen)
	dir := filepath.Join(t.TempDir(), "k")
	var out, errb bytes.Buffer
	st := run([]string{"gen", path, "-o", dir}, &out, &errb)
	if st != exitBadInput || !strings.Contains(errb.String(), "transient and Picard-iterated") {
		t.Errorf("status %d, stderr %q; want 2 and the reason", st, errb.String())
	}
	if _, err := os.Stat(dir); !os.IsNotExist(err) {
		t.Errorf("gen created %s", dir)
	}
}

// TestGenBuiltin: a user's own model, generated with --builtin, lands in
// the command's own kernel package and, once the command is rebuilt (go
// run does that), solve uses its compiled kernels.
func TestGenBuiltin(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the command")
	}
	path := writeModel(t, `model builtin_check_model
dimension 1
unknown u: scalar P1
given k = 1/3
equation for u: -k*lap(u) + u = 1
at all: u = 0
`)
	var out, errb bytes.Buffer
	if st := run([]string{"gen", path, "--builtin"}, &out, &errb); st != exitOK {
		t.Fatalf("gen --builtin: status %d: %s", st, errb.String())
	}
	file := filepath.Join("stdlib", "kernels", "local", "builtin_check_model_kernels.go")
	t.Cleanup(func() { os.Remove(file) })
	if _, err := os.Stat(file); err != nil {
		t.Fatalf("gen --builtin wrote no %s: %v", file, err)
	}
	cmd := exec.Command("go", "run", ".", "solve", path, "--quiet")
	got, err := cmd.CombinedOutput()
	if err != nil || !strings.Contains(string(got), "kernels    compiled") {
		t.Errorf("solve after gen --builtin: %v\n%s", err, got)
	}
}

// TestGenCRecovery: gen --lang c derives adr (P1, stabilised, with
// diffusion: the recovery applies) with the recovered second derivatives
// like the Go kernels, and its layouts say so (needs_recovered 1), while
// --recover=false gives C kernels that read no recovered gradient. The C
// kernels' values with a recovered gradient are checked against the
// interpreted kernels in compiler/gogen (TestCKernelsMatchInterpreted).
func TestGenCRecovery(t *testing.T) {
	dir := t.TempDir()
	if st, _, errs := runCmd("gen", "adr", "--lang", "c", "-o", dir); st != exitOK {
		t.Fatalf("gen --lang c: status %d: %s", st, errs)
	}
	src, err := os.ReadFile(filepath.Join(dir, "adr_kernels.c"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(src), "in->recovered") {
		t.Errorf("the C kernels of adr read no recovered gradient")
	}
	plain := t.TempDir()
	if st, _, errs := runCmd("gen", "adr", "--lang", "c", "--recover=false", "-o", plain); st != exitOK {
		t.Fatalf("gen --lang c --recover=false: status %d: %s", st, errs)
	}
	src, err = os.ReadFile(filepath.Join(plain, "adr_kernels.c"))
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(string(src), "in->recovered") {
		t.Errorf("the C kernels derived with --recover=false read the recovered gradient")
	}
}
