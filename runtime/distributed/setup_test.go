package distributed

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestMissingTools: without mpicc, mpiexec or PETSc on the PATH the
// engine reports a *SetupError that names what is missing and the
// command that installs it, and Solve returns it before doing any work.
func TestMissingTools(t *testing.T) {
	toolMu.Lock()
	saved := toolFound
	toolFound = nil
	toolMu.Unlock()
	defer func() {
		toolMu.Lock()
		toolFound = saved
		toolMu.Unlock()
	}()
	t.Setenv("PATH", t.TempDir())
	err := Available()
	var se *SetupError
	if !errors.As(err, &se) {
		t.Fatalf("Available with an empty PATH: %v, want a *SetupError", err)
	}
	if !strings.Contains(err.Error(), InstallCommand) || !strings.Contains(err.Error(), "pkg-config") {
		t.Errorf("message %q does not name what is missing and %q", err, InstallCommand)
	}
	lf, k := lower(t, model(t, "adr"), "supg")
	if _, _, err := Solve(lf, mustMesh(t, "span:0,1,0,1:4x4:tri"), k, Options{}); !errors.As(err, &se) {
		t.Errorf("Solve with an empty PATH: %v, want a *SetupError", err)
	}
}

// TestBuildError: kernels that do not compile give a *BuildError with
// the compiler's message, and nothing is left in the cache.
func TestBuildError(t *testing.T) {
	needEngine(t)
	lf, k := lower(t, model(t, "adr"), "supg")
	k.Source = append(k.Source, []byte("\nthis is not C;\n")...)
	cache := t.TempDir()
	_, _, err := Solve(lf, mustMesh(t, "span:0,1,0,1:4x4:tri"), k, Options{CacheDir: cache})
	var be *BuildError
	if !errors.As(err, &be) {
		t.Fatalf("got %v, want a *BuildError", err)
	}
	if !strings.Contains(be.Stderr, "error") {
		t.Errorf("the build error carries no compiler message: %q", be.Stderr)
	}
	if left, _ := filepath.Glob(filepath.Join(cache, "*")); len(left) != 0 {
		t.Errorf("the failed build left %v in the cache", left)
	}
}

// TestRunError: a PETSc option PETSc rejects ends the run with a
// *RunError whose stderr tail has PETSc's message; a solve that cannot
// converge in its iteration limit is a *DivergedError naming PETSc's
// reason; the run directories are removed in both cases.
func TestRunError(t *testing.T) {
	needEngine(t)
	tmp := t.TempDir()
	t.Setenv("TMPDIR", tmp)
	lf, k := lower(t, model(t, "adr"), "supg")
	msh := mustMesh(t, "span:0,1,0,1:16x16:tri")
	_, _, err := Solve(lf, msh, k, Options{Ranks: 2, Solver: Solver{Method: MethodGMRES}, PETScOptions: []string{"-pc_type", "no_such_preconditioner"}, CacheDir: testCache})
	var re *RunError
	if !errors.As(err, &re) || !strings.Contains(re.Stderr, "no_such_preconditioner") {
		t.Errorf("got %v, want a *RunError with PETSc's message", err)
	}
	_, _, err = Solve(lf, msh, k, Options{Ranks: 2, Solver: Solver{Method: MethodGMRES, Precond: PrecondNone, MaxIter: 3}, CacheDir: testCache})
	var de *DivergedError
	if !errors.As(err, &de) || de.Reason != "DIVERGED_ITS" || de.Iterations != 3 {
		t.Errorf("got %v, want a *DivergedError after 3 iterations", err)
	}
	if left, _ := os.ReadDir(tmp); len(left) != 0 {
		t.Errorf("run directories left behind: %v", left)
	}
}
