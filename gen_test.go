package main

import (
	"bufio"
	"bytes"
	"os"
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
