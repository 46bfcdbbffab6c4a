package distributed

import (
	"fmt"
	"strings"
)

// InstallCommand installs what the engine needs on Debian and Ubuntu:
// PETSc's development files (which bring pkg-config's PETSc.pc), hypre
// and Open MPI's mpicc and mpiexec.
const InstallCommand = "apt-get install -y petsc-dev libhypre-dev openmpi-bin"

// SetupError says that a tool or library the engine needs is missing.
type SetupError struct {
	Missing string // what is missing, e.g. "mpicc (not on PATH)"
}

func (e *SetupError) Error() string {
	return fmt.Sprintf("the PETSc engine needs MPI (mpicc, mpiexec) and PETSc: %s; on Debian or Ubuntu install them with: %s", e.Missing, InstallCommand)
}

// BuildError is a failed build of the driver with the kernels.
type BuildError struct {
	Command string
	Stderr  string // the tail of the compiler's output
	Err     error
}

func (e *BuildError) Error() string {
	return fmt.Sprintf("building the PETSc driver failed (%v): %s\n%s", e.Err, e.Command, indent(e.Stderr))
}

func (e *BuildError) Unwrap() error { return e.Err }

// RunError is a run of the driver that ended without a result: an MPI
// start-up failure, bad input files, a PETSc error (an unknown option
// value, say) or a crash. ExitCode is mpiexec's.
type RunError struct {
	Ranks    int
	ExitCode int
	Stderr   string // the tail of the driver's standard error
	Err      error
}

func (e *RunError) Error() string {
	return fmt.Sprintf("the PETSc driver on %s failed (%v):\n%s", ranksText(e.Ranks), e.Err, indent(e.Stderr))
}

func ranksText(n int) string {
	if n == 1 {
		return "1 rank"
	}
	return fmt.Sprintf("%d ranks", n)
}

func (e *RunError) Unwrap() error { return e.Err }

// DegenerateError is a cell whose map has det J ≤ 0: the kernels refuse
// it (FW_KERNEL_DEGENERATE), a numerical failure of the mesh.
type DegenerateError struct {
	Stderr string
}

func (e *DegenerateError) Error() string {
	return "the PETSc driver met a degenerate cell (det J ≤ 0):\n" + indent(e.Stderr)
}

// DivergedError is a PETSc linear solve that stopped without meeting its
// tolerance: Reason is PETSc's (DIVERGED_ITS, DIVERGED_PC_FAILED, ...).
type DivergedError struct {
	Solver     string
	Reason     string
	Iterations int
	Residual   float64 // explicit relative residual of the returned iterate
	Stderr     string
}

func (e *DivergedError) Error() string {
	s := fmt.Sprintf("PETSc %s: not converged (%s) after %d iterations, relative residual %.2e", e.Solver, e.Reason, e.Iterations, e.Residual)
	if strings.TrimSpace(e.Stderr) != "" {
		s += ":\n" + indent(e.Stderr)
	}
	return s
}

// OptionsError is a run the engine cannot make as asked: more ranks than
// cells, a tolerance out of range, a system too large for its files.
type OptionsError struct{ Msg string }

func (e *OptionsError) Error() string { return "the PETSc engine: " + e.Msg }

// UnsupportedError is a form the engine cannot solve yet.
type UnsupportedError struct{ What string }

func (e *UnsupportedError) Error() string {
	return "the PETSc engine does not solve " + e.What + " yet"
}

func indent(s string) string {
	s = strings.TrimRight(s, "\n")
	if s == "" {
		return "  (no output)"
	}
	return "  " + strings.ReplaceAll(s, "\n", "\n  ")
}

// tail keeps the last max bytes written to it.
type tail struct {
	max int
	buf []byte
}

func (t *tail) Write(p []byte) (int, error) {
	t.buf = append(t.buf, p...)
	if len(t.buf) > 2*t.max {
		t.buf = append(t.buf[:0], t.buf[len(t.buf)-t.max:]...)
	}
	return len(p), nil
}

// String returns the kept output, whole lines only, without PETSc's
// line of configure options (a few kilobytes that say nothing about the
// failure) and with lines cut at 300 bytes.
func (t *tail) String() string {
	b := t.buf
	if len(b) > t.max {
		b = b[len(b)-t.max:]
		if i := strings.IndexByte(string(b), '\n'); i >= 0 {
			b = b[i+1:]
		}
	}
	var out []string
	for _, line := range strings.SplitAfter(string(b), "\n") {
		if strings.Contains(line, "PETSC ERROR: Configure options") {
			continue
		}
		if len(line) > 300 {
			line = line[:300] + " …\n"
		}
		out = append(out, line)
	}
	return strings.Join(out, "")
}
