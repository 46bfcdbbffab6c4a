package distributed

import (
	"errors"
	"io"
	"os"
	"os/exec"
	"runtime"
	"strconv"
	"sync"
	"syscall"
)

// Driver exit statuses (driver.c).
const (
	exitInput      = 3
	exitDegenerate = 4
	exitPETSc      = 5
)

// launchArgs are mpiexec's arguments and the environment additions for a
// run on ranks processes. Open MPI refuses to start as root unless told
// twice that it may (OMPI_ALLOW_RUN_AS_ROOT and its confirmation), and
// refuses more processes than cores unless oversubscribed; MPICH needs
// neither. An oversubscribed run is not bound to cores, so the ranks can
// share them. Each rank runs one thread unless OMP_NUM_THREADS says
// otherwise.
func (tc *toolchain) launchArgs(ranks int, exe, dir string, petscOpts []string) (args, env []string) {
	args = []string{"-n", strconv.Itoa(ranks)}
	if tc.openMPI {
		if ranks > runtime.NumCPU() {
			args = append(args, "--oversubscribe", "--bind-to", "none")
		}
		if os.Geteuid() == 0 {
			env = append(env, "OMPI_ALLOW_RUN_AS_ROOT=1", "OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1")
		}
	}
	if _, set := os.LookupEnv("OMP_NUM_THREADS"); !set {
		// One thread per rank: the libraries PETSc links (hypre, BLAS)
		// may start OpenMP threads of their own, which would
		// oversubscribe the cores the ranks already use.
		env = append(env, "OMP_NUM_THREADS=1")
	}
	args = append(args, exe, dir)
	args = append(args, petscOpts...)
	return args, env
}

// launch runs the driver on ranks processes in dir: its standard output
// goes to log (PETSc's own reports: -ksp_monitor, -log_view); the tail of
// its standard error goes into the error of a failed run, or to log after
// a run that worked.
func (tc *toolchain) launch(exe, dir string, ranks int, petscOpts []string, log io.Writer) (stderr string, err error) {
	args, env := tc.launchArgs(ranks, exe, dir, petscOpts)
	cmd := exec.Command(tc.mpiexec, args...)
	cmd.Env = append(os.Environ(), env...)
	errTail := &tail{max: 8192}
	if log == nil {
		log = io.Discard
	}
	cmd.Stdout = log
	cmd.Stderr = errTail
	if err := cmd.Start(); err != nil {
		return "", &RunError{Ranks: ranks, ExitCode: -1, Err: err}
	}
	pending.addProc(cmd.Process)
	err = cmd.Wait()
	pending.removeProc(cmd.Process)
	if err == nil {
		// Warnings of a run that worked (PETSc's about unused options, say).
		io.WriteString(log, errTail.String())
		return errTail.String(), nil
	}
	code := -1
	var ee *exec.ExitError
	if errors.As(err, &ee) {
		code = ee.ExitCode()
	}
	if code == exitDegenerate {
		return "", &DegenerateError{Stderr: errTail.String()}
	}
	return "", &RunError{Ranks: ranks, ExitCode: code, Stderr: errTail.String(), Err: err}
}

// pending holds the run directories and driver processes of solves in
// progress, so that an interrupted command can remove and stop them
// (RemovePending).
var pending = &runs{dirs: map[string]bool{}, procs: map[*os.Process]bool{}}

type runs struct {
	mu    sync.Mutex
	dirs  map[string]bool
	procs map[*os.Process]bool
}

func (r *runs) addDir(d string)          { r.mu.Lock(); r.dirs[d] = true; r.mu.Unlock() }
func (r *runs) removeDir(d string)       { r.mu.Lock(); delete(r.dirs, d); r.mu.Unlock() }
func (r *runs) addProc(p *os.Process)    { r.mu.Lock(); r.procs[p] = true; r.mu.Unlock() }
func (r *runs) removeProc(p *os.Process) { r.mu.Lock(); delete(r.procs, p); r.mu.Unlock() }

// RemovePending stops the driver runs in progress (mpiexec passes the
// signal on to its ranks) and removes their temporary directories. A
// command calls it when it is interrupted, so nothing is left behind.
func RemovePending() {
	pending.mu.Lock()
	defer pending.mu.Unlock()
	for p := range pending.procs {
		p.Signal(syscall.SIGTERM)
	}
	for d := range pending.dirs {
		os.RemoveAll(d)
	}
}
