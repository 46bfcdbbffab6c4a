package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The trust tests: one per class of failure a careless or hostile user
// can provoke. Each runs the command as a user would and checks the exit
// status, the message and that nothing was written or destroyed.

// runCmd runs the command and returns its status, stdout and stderr.
func runCmd(args ...string) (int, string, string) {
	var out, errb bytes.Buffer
	st := run(args, &out, &errb)
	return st, out.String(), errb.String()
}

// neumann is −Δu = 1 with zero flux everywhere and no mean condition: the
// constants are in the kernel of the operator (Brenner & Scott, 3rd ed.,
// §5.2 [memory]) and the data are incompatible (∫f ≠ 0), so there is no
// solution at all.
const neumann = `model neumann
dimension 2
unknown u: scalar P1
equation for u: -lap(u) = 1
at all: flux(u) = 0
`

// TestNoWrongAnswerExitsZero: a singular problem fails with exit 1 and
// writes nothing, with a warning before the solve; whatever the solver.
func TestNoWrongAnswerExitsZero(t *testing.T) {
	path := writeModel(t, neumann)
	out := filepath.Join(t.TempDir(), "u.vtu")
	for _, solver := range []string{"auto", "direct", "gmres+ilu0"} {
		st, _, errs := runCmd("solve", path, "--solver", solver, "--out", out, "--max-iter", "300")
		if st != exitNumeric {
			t.Errorf("%s: status %d, want 1 (stderr %q)", solver, st, errs)
		}
		if !strings.Contains(errs, "fixed only up to a constant") {
			t.Errorf("%s: no warning about the free constant: %q", solver, errs)
		}
		if _, err := os.Stat(out); err == nil {
			t.Fatalf("%s: a result was written for a singular problem", solver)
		}
	}
	st, _, errs := runCmd("derive", path)
	if st != exitOK {
		t.Errorf("derive: status %d", st)
	}
	st, outText, _ := runCmd("derive", path)
	if st != exitOK || !strings.Contains(outText, "u is fixed only up to a constant") {
		t.Errorf("derive does not warn about the free constant: %q %q", outText, errs)
	}
}

// TestBadNumbersAreBadInput: numeric flags outside their range are exit 2,
// never replaced by defaults.
func TestBadNumbersAreBadInput(t *testing.T) {
	for _, args := range [][]string{
		{"solve", "adr", "--tol", "2"},
		{"solve", "adr", "--tol", "-1"},
		{"solve", "adr", "--tol", "NaN"},
		{"solve", "adr", "--max-iter", "-3"},
		{"solve", "adr", "--restart", "-1"},
		{"solve", "adr", "--restart", "100000000"},
		{"solve", "adr", "--time", "NaN"},
		{"solve", "adr", "--time", "Inf"},
		{"solve", "adr", "--solver", "gmres+ilu0", "--ilu-shift", "NaN"},
		{"solve", "adr", "--relax", "NaN"},
		{"solve", "adr", "--workers", "-2"},
		{"solve", "heat", "--dt", "NaN", "--steps", "3"},
		{"solve", "heat", "--dt", "-0.1", "--steps", "3"},
		{"solve", "heat", "--dt", "0.1", "--steps", "-3"},
		{"solve", "heat", "--dt", "1e-12", "--until", "1"},
		{"solve", "heat", "--dt", "0.1", "--until", "NaN"},
		{"verify", "adr", "--tol", "NaN"},
		{"verify", "adr", "--speed", "-1", "--sweep-pe", "kappa"},
		{"verify", "adr", "--base", "-4"},
	} {
		if st, _, errs := runCmd(args...); st != exitBadInput {
			t.Errorf("%v: status %d, want 2 (stderr %q)", args, st, errs)
		}
	}
}

// TestNonFiniteCoefficients: a coefficient that is not finite where the
// kernels evaluate it is exit 1 with the coefficient's name and line.
func TestNonFiniteCoefficients(t *testing.T) {
	path := writeModel(t, `model nf
dimension 2
unknown u: scalar P1
given k = sqrt(x - 1/2) + 1
equation for u: -lap(u) + k*u = 1
at all: u = 0
`)
	st, _, errs := runCmd("solve", path, "--quiet")
	if st != exitNumeric || !strings.Contains(errs, "k (") || !strings.Contains(errs, "model.fw:4:7") || !strings.Contains(errs, "NaN") {
		t.Errorf("status %d, stderr %q; want 1 naming k and its line", st, errs)
	}
}

// TestNoPanicNoHang: hostile input ends with a message, never a stack
// trace: deep nesting, huge and absurd meshes, an endless model file.
func TestNoPanicNoHang(t *testing.T) {
	deep := writeModel(t, "model d\ndimension 1\nunknown u: scalar P1\ngiven a = "+strings.Repeat("(", 5000)+"x"+strings.Repeat(")", 5000)+"\nequation for u: -lap(u) = a\nat all: u = 0\n")
	powers := writeModel(t, "model p\ndimension 1\nunknown u: scalar P1\ngiven a = x"+strings.Repeat("^x", 5000)+"\nequation for u: -lap(u) = a\nat all: u = 0\n")
	for _, args := range [][]string{
		{"derive", deep},
		{"derive", powers},
		{"solve", "adr", "--mesh", "span:-1e308,1e308,0,1:4x4:tri"},
		{"solve", "adr", "--mesh", "span:0,1e-320,0,1:4x4:tri"},
		{"solve", "adr", "--mesh", "span:0,1,0,1:90000x90000:tri"},
		{"solve", "adr", "--mesh", "span:0,1:64:graded=1e9"},
		{"derive", os.DevNull},
	} {
		st, _, errs := runCmd(args...)
		if st != exitBadInput || strings.Contains(errs, "goroutine") || strings.Contains(errs, "internal error") {
			t.Errorf("%v: status %d, stderr %.300q", args[:2], st, errs)
		}
	}
	if _, err := os.Stat("/dev/zero"); err == nil {
		if st, _, errs := runCmd("derive", "/dev/zero"); st != exitBadInput || !strings.Contains(errs, "longer than") {
			t.Errorf("endless model file: status %d, %q", st, errs)
		}
	}
}

// TestNothingDestroyed: no output lands on an input, on another output or
// on a file formwright did not write; a failing command writes nothing.
func TestNothingDestroyed(t *testing.T) {
	dir := t.TempDir()
	model := filepath.Join(dir, "m.fw")
	_, src, _ := readModel("adr")
	os.WriteFile(model, src, 0o644)
	link := filepath.Join(dir, "link.fw")
	os.Symlink(model, link)
	user := filepath.Join(dir, "notes.png")
	os.WriteFile(user, []byte("a user's file"), 0o644)
	userSUPG := filepath.Join(dir, "c_supg.png")
	os.WriteFile(userSUPG, []byte("a user's file"), 0o644)
	mesh := filepath.Join(dir, "square.vtu")
	if st, _, errs := runCmd("solve", "adr", "--mesh", "span:0,1,0,1:4x4:tri", "--out", mesh, "--quiet"); st != exitOK {
		t.Fatalf("writing a mesh-like file: %d %s", st, errs)
	}
	// A target that cannot be read: a directory in its place (a file with
	// mode 0 is readable to root, which the tests may run as).
	unreadable := filepath.Join(dir, "k", "adr_kernels.go")
	os.MkdirAll(unreadable, 0o755)
	for _, c := range []struct {
		name string
		args []string
		keep string
	}{
		{"derive onto the model through a link", []string{"derive", model, "-o", link}, model},
		{"derive onto a user's file", []string{"derive", "adr", "-o", user}, user},
		{"plot onto the mesh input", []string{"solve", model, "--mesh", mesh, "--plot", mesh}, mesh},
		{"out onto the mesh input", []string{"solve", model, "--mesh", mesh, "--out", mesh}, mesh},
		{"per-method plot onto a user's file", []string{"solve", "adr", "--method", "all", "--plot", filepath.Join(dir, "c.png")}, userSUPG},
		{"two outputs on one file", []string{"solve", "adr", "--out", filepath.Join(dir, "x.csv"), "--plot", filepath.Join(dir, "x.csv")}, ""},
		{"gen onto an unreadable file", []string{"gen", "adr", "-o", filepath.Dir(unreadable)}, ""},
		{"derive onto a standard model's source", []string{"derive", "adr", "-o", filepath.Join("stdlib", "models", "heat.fw")}, filepath.Join("stdlib", "models", "heat.fw")},
	} {
		var before []byte
		if c.keep != "" {
			before, _ = os.ReadFile(c.keep)
		}
		st, _, errs := runCmd(c.args...)
		if st != exitBadInput {
			t.Errorf("%s: status %d, want 2 (stderr %q)", c.name, st, errs)
		}
		if c.keep != "" {
			if after, _ := os.ReadFile(c.keep); !bytes.Equal(before, after) {
				t.Errorf("%s: %s was changed", c.name, c.keep)
			}
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "x.csv")); err == nil {
		t.Error("a file was written although its command was refused")
	}
	// A failing command writes nothing: a 3D plot, a missing directory, a
	// failing convergence study.
	for _, c := range []struct {
		args  []string
		wrote string
	}{
		{[]string{"solve", "stokes", "--mesh", "span:0,1,0,1,0,1:2x2x2:tet", "--out", filepath.Join(dir, "s.vtu"), "--plot", filepath.Join(dir, "s.png")}, filepath.Join(dir, "s.vtu")},
		{[]string{"solve", "adr", "--out", filepath.Join(dir, "missing", "c.vtu")}, filepath.Join(dir, "missing")},
		{[]string{"verify", writeModel(t, strings.Replace(string(src), "stabilise galerkin, supg, gls, vms", "stabilise supg", 1)), "--method", "supg", "--levels", "2", "--source", "0", "--plot", filepath.Join(dir, "conv.png"), "--quiet"}, filepath.Join(dir, "conv.png")},
	} {
		if st, _, _ := runCmd(c.args...); st == exitOK {
			t.Errorf("%v: succeeded", c.args[:2])
		}
		if _, err := os.Stat(c.wrote); err == nil {
			t.Errorf("%v: wrote %s", c.args[:2], c.wrote)
		}
	}
}

// TestExactOfEveryUnknown: solve compares with the stated exact solution
// of every unknown, vector unknowns included.
func TestExactOfEveryUnknown(t *testing.T) {
	path := writeModel(t, `model two
dimension 2
unknown w: vector P1
unknown s: scalar P1
given exact_w = [x, y]
given exact_s = x + y
equation for w: -lap(w) = [0, 0]
equation for s: -lap(s) = 0
at all: w = exact_w
at all: s = exact_s
`)
	st, out, errs := runCmd("solve", path, "--quiet")
	if st != exitOK || !strings.Contains(out, "against exact_w") || !strings.Contains(out, "against exact_s") {
		t.Errorf("status %d, stdout %q, stderr %q", st, out, errs)
	}
}

// TestHelpAndUnknownFlags: every command prints its own help with its
// flags (exit 0), and an unknown flag lists the valid ones (exit 2).
func TestHelpAndUnknownFlags(t *testing.T) {
	for _, c := range commands {
		st, out, _ := runCmd(c.name, "--help")
		if st != exitOK || !strings.Contains(out, "usage: formwright "+c.name) {
			t.Errorf("%s --help: status %d, %q", c.name, st, out)
		}
	}
	st, out, _ := runCmd("solve", "--help")
	if !strings.Contains(out, "--tol") || !strings.Contains(out, "default") {
		t.Errorf("solve --help lists no flags with defaults: %q", out)
	}
	st, _, errs := runCmd("solve", "adr", "--tolerance", "1e-8")
	if st != exitBadInput || !strings.Contains(errs, "--tol") {
		t.Errorf("unknown flag: status %d, %q", st, errs)
	}
}

// TestGenNames: a model whose name starts with "_" gets a file the Go
// tool reads, and two models share one package without --prefix.
func TestGenNames(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "kernels")
	a := writeModel(t, "model _hidden\ndimension 1\nunknown u: scalar P1\nequation for u: -lap(u) = 1\nat all: u = 0\n")
	if st, _, errs := runCmd("gen", a, "-o", dir); st != exitOK {
		t.Fatalf("gen _hidden: %d %s", st, errs)
	}
	if st, _, errs := runCmd("gen", "adr", "-o", dir); st != exitOK {
		t.Fatalf("gen adr: %d %s", st, errs)
	}
	files, _ := filepath.Glob(filepath.Join(dir, "*.go"))
	for _, f := range files {
		if strings.HasPrefix(filepath.Base(f), "_") || strings.HasPrefix(filepath.Base(f), ".") {
			t.Errorf("%s is ignored by the Go tool", f)
		}
	}
	if len(files) != 2 {
		t.Errorf("files %v", files)
	}
	// The two files compile together: exported names carry the model's.
	a1, _ := os.ReadFile(files[0])
	a2, _ := os.ReadFile(files[1])
	if !bytes.Contains(a1, []byte("type Hidden")) && !bytes.Contains(a2, []byte("type Hidden")) {
		t.Errorf("no Hidden-prefixed kernel type")
	}
}
