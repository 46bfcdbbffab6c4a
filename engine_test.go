package main

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"strings"
	"testing"

	"github.com/formwright/formwright/runtime/distributed"
)

// The test binary runs the command when FORMWRIGHT_ENGINE_TEST_ARGS is
// set (its arguments, separated by newlines), so a test can run it in an
// environment of its own.
func init() {
	if a := os.Getenv("FORMWRIGHT_ENGINE_TEST_ARGS"); a != "" {
		os.Exit(run(strings.Split(a, "\n"), os.Stdout, os.Stderr))
	}
}

// TestEngineMissing: where MPI and PETSc are missing (here: an empty
// PATH), solve --engine petsc exits 2 with the command that installs
// them.
func TestEngineMissing(t *testing.T) {
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), "PATH="+t.TempDir(), "FORMWRIGHT_ENGINE_TEST_ARGS=solve\nadr\n--engine\npetsc")
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	err := cmd.Run()
	ee, ok := err.(*exec.ExitError)
	if !ok || ee.ExitCode() != exitBadInput {
		t.Fatalf("exit %v, want status %d; stderr %q", err, exitBadInput, stderr.String())
	}
	if !strings.Contains(stderr.String(), distributed.InstallCommand) {
		t.Errorf("stderr %q does not say %q", stderr.String(), distributed.InstallCommand)
	}
}

// TestEngineFlags: the engine flags are checked before any work.
func TestEngineFlags(t *testing.T) {
	cases := []struct {
		args   []string
		stderr string
	}{
		{[]string{"solve", "adr", "--ranks", "2"}, "belong to --engine petsc"},
		{[]string{"solve", "adr", "--engine", "fortran"}, "the engines are go and petsc"},
		{[]string{"verify", "adr", "--petsc-options", "-ksp_monitor"}, "belong to --engine petsc"},
	}
	if distributed.Available() == nil {
		cases = append(cases, []struct {
			args   []string
			stderr string
		}{
			{[]string{"solve", "adr", "--engine", "petsc", "--ranks", "0"}, "give at least 1"},
			{[]string{"solve", "heat", "--engine", "petsc", "--steps", "2"}, "solves steady models"},
			{[]string{"solve", "adr", "--engine", "petsc", "--solver", "cg+multigrid"}, "unknown preconditioner"},
			{[]string{"solve", "adr", "--engine", "petsc", "--ilu-shift", "0.1"}, "--petsc-options"},
			{[]string{"solve", "bratu", "--engine", "petsc", "--picard-steps", "2"}, "go engine only"},
			{[]string{"solve", "adr", "--engine", "petsc", "--ranks", "9", "--mesh", "span:0,1,0,1:2x2:tri"}, "9 ranks for a mesh of 8 cells"},
		}...)
	}
	for _, c := range cases {
		var out, errb bytes.Buffer
		if st := run(c.args, &out, &errb); st != exitBadInput || !strings.Contains(errb.String(), c.stderr) {
			t.Errorf("%v: status %d, stderr %q; want %d and %q", c.args, st, errb.String(), exitBadInput, c.stderr)
		}
	}
}

// TestEngineSolve: solve --engine petsc on 2 ranks prints the summary of
// every solve with the engine and its ranks, and its nodal values equal
// the go engine's to relative 1e-8 (both direct solves, residuals near
// 1e-14; the go engine is the reference). A solve that cannot reach its
// tolerance exits 1 and prints no result.
func TestEngineSolve(t *testing.T) {
	if err := distributed.Available(); err != nil {
		t.Skip(err)
	}
	// Built drivers go to a cache of the test's own.
	t.Setenv("XDG_CACHE_HOME", t.TempDir())
	values := func(args ...string) (jsonSolve, string) {
		var out, errb bytes.Buffer
		if st := run(append([]string{"solve", "adr", "--mesh", "span:0,1,0,1:20x20:tri", "--quiet"}, args...), &out, &errb); st != exitOK {
			t.Fatalf("%v: status %d: %s", args, st, errb.String())
		}
		var js jsonSolve
		if err := json.Unmarshal(out.Bytes(), &js); err != nil {
			if len(args) > 0 && args[len(args)-1] == "--json" {
				t.Fatal(err)
			}
		}
		return js, out.String()
	}
	// The PETSc engine solves without the recovery of the P1 second
	// derivatives (its driver has no gradient recovery): compare like with like.
	ref, _ := values("--recover=false", "--json")
	got, _ := values("--engine", "petsc", "--ranks", "2", "--json")
	if got.Engine == "" || got.Ranks != 2 || got.Kernels != "generated C" || !(got.Residual < 1e-8) {
		t.Errorf("summary: engine %q, ranks %d, kernels %q, residual %g", got.Engine, got.Ranks, got.Kernels, got.Residual)
	}
	worst, scale := 0.0, 0.0
	for n, v := range ref.Fields[0].Values[0] {
		worst = math.Max(worst, math.Abs(got.Fields[0].Values[0][n]-v))
		scale = math.Max(scale, math.Abs(v))
	}
	if !(worst <= 1e-8*scale) {
		t.Errorf("PETSc and go engines differ by %.2e (relative to %.2e)", worst, scale)
	}
	_, text := values("--engine", "petsc", "--ranks", "2", "--solver", "gmres+amg")
	for _, want := range []string{"engine     PETSc", "2 ranks", "relative residual", "on 2 MPI ranks"} {
		if !strings.Contains(text, want) {
			t.Errorf("summary lacks %q:\n%s", want, text)
		}
	}
	var out, errb bytes.Buffer
	st := run([]string{"solve", "adr", "--engine", "petsc", "--solver", "gmres+none", "--max-iter", "2", "--out", t.TempDir() + "/c.vtu"}, &out, &errb)
	if st != exitNumeric || !strings.Contains(errb.String(), "not converged") || out.Len() != 0 {
		t.Errorf("non-converged solve: status %d, stdout %q, stderr %q", st, out.String(), errb.String())
	}
}

// TestEngineVerify: verify --engine petsc prints the go engine's
// convergence tables, digit for digit (errors to four significant
// digits, orders to two decimals; the go engine is the reference).
func TestEngineVerify(t *testing.T) {
	if err := distributed.Available(); err != nil {
		t.Skip(err)
	}
	t.Setenv("XDG_CACHE_HOME", t.TempDir())
	verify := func(args ...string) string {
		var out, errb bytes.Buffer
		if st := run(append([]string{"verify", "adr", "--levels", "3", "--method", "supg", "--quiet"}, args...), &out, &errb); st != exitOK {
			t.Fatalf("verify %v: status %d: %s", args, st, errb.String())
		}
		return out.String()
	}
	if g, p := verify("--recover=false"), verify("--engine", "petsc", "--ranks", "2"); g != p { // the engine has no recovery
		t.Errorf("verify differs between the engines:\ngo:\n%s\npetsc:\n%s", g, p)
	}
}
