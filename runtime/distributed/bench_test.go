package distributed

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"os/exec"
	"runtime"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"

	// The compiled Go kernels of the benchmark's models, so that the
	// Go runtime assembles with generated kernels as the driver does.
	_ "github.com/formwright/formwright/examples/crosswind_plume/kernels"
	_ "github.com/formwright/formwright/runtime/distributed/internal/benchkernels"
)

// The engine benchmark: time to solution and memory per unknown of the
// pure-Go runtime, PETSc on 1 rank and PETSc on 2 ranks, on a 3D
// diffusion problem and a 2D advection-dominated one near 10⁶ unknowns,
// assembly and solve separated. Each run is a process of its own (this
// test binary started again), so each peak resident set (getrusage's
// ru_maxrss) is that run's alone:
//
//	go test ./runtime/distributed -run '^$' -bench Engines -benchtime 1x -v -timeout 60m
//
// The size-named benchmarks near 10⁶ unknowns are the ones to quote; the
// small ones check the machinery in seconds.

// benchChildEnv, when set, makes the test binary a benchmark child: it
// holds "MODEL N ENGINE CACHEDIR".
const benchChildEnv = "FORMWRIGHT_DISTRIBUTED_BENCH_CHILD"

// benchModels are the models of the benchmark: the model file (relative
// to this package), the method and the mesh spec for n cells per side.
var benchModels = map[string]struct{ file, method, mesh string }{
	// 3D, diffusion only: n³ cubes of 6 tetrahedra, (n+1)³ unknowns.
	"diffusion3d": {"internal/benchkernels/kiln_block.fw", "galerkin", "span:0,1,0,1,0,1:%[1]dx%[1]dx%[1]d:tet"},
	// 2D, advection-dominated (κ = 10⁻⁶, SUPG): the crosswind plume
	// example, n² squares of 2 triangles, (n+1)² unknowns.
	"advection2d": {"../../examples/crosswind_plume/model.fw", "supg", "span:0,1,0,1:%[1]dx%[1]d:tri"},
}

// childResult is one run of the benchmark.
type childResult struct {
	Engine     string
	Dofs       int
	Solver     string
	Iterations int
	Residual   float64
	// Seconds: the whole solve call (Total); formwright's work before
	// assembly (Prepare: dofs and pattern for the Go runtime; dofs,
	// partition and part files for PETSc); assembly with the value
	// conditions; the preconditioner set-up or factorisation (Setup,
	// PETSc only: the Go runtime's is inside Solve); the solve; and for
	// PETSc the whole mpiexec run.
	Total, Prepare, Assembly, Setup, Solve, Mpiexec float64
	// MaxRSS is this process's peak resident set in bytes; RankRSS each
	// rank's (PETSc).
	MaxRSS  int64
	RankRSS []int64
	Norm    float64 // ‖x‖∞, kept as the benchmark's sink
}

var benchSink float64

func phaseSeconds(ph []problem.Phase, names ...string) float64 {
	s := 0.0
	for _, p := range ph {
		for _, n := range names {
			if p.Name == n {
				s += p.Wall.Seconds()
			}
		}
	}
	return s
}

// benchChild runs one engine on one model and prints a childResult as
// JSON.
func benchChild(spec string) int {
	f := strings.Fields(spec)
	if len(f) != 4 {
		fmt.Fprintf(os.Stderr, "bad %s %q\n", benchChildEnv, spec)
		return 2
	}
	bm := benchModels[f[0]]
	n, _ := strconv.Atoi(f[1])
	engine, cache := f[2], f[3]
	fail := func(err error) int { fmt.Fprintln(os.Stderr, err); return 1 }
	src, err := os.ReadFile(bm.file)
	if err != nil {
		return fail(err)
	}
	m, err := checkModel(string(src))
	if err != nil {
		return fail(err)
	}
	lf, k, err := lowerC(m, bm.method)
	if err != nil {
		return fail(err)
	}
	msh, err := mesh.Load(fmt.Sprintf(bm.mesh, n))
	if err != nil {
		return fail(err)
	}
	res := childResult{Engine: engine}
	start := time.Now()
	var sol *problem.Solution
	if engine == "go" {
		sol, err = problem.Solve(lf, msh, problem.Options{})
		if err != nil {
			return fail(err)
		}
		ph := sol.Summary.Phases
		res.Prepare = phaseSeconds(ph, "dofs", "kernels", "pattern", "dirichlet-data")
		res.Assembly = phaseSeconds(ph, "assembly+dirichlet")
		res.Solve = phaseSeconds(ph, "solve")
		res.Solver = sol.Summary.KernelPath + " kernels, " + sol.Summary.Solver
	} else {
		ranks, _ := strconv.Atoi(strings.TrimPrefix(engine, "petsc"))
		var rep *Report
		sol, rep, err = Solve(lf, msh, k, Options{Ranks: ranks, CacheDir: cache})
		if err != nil {
			return fail(err)
		}
		res.Prepare = phaseSeconds(rep.Phases, "dofs", "partition", "write")
		res.Mpiexec = phaseSeconds(rep.Phases, "mpiexec")
		res.Assembly = rep.Times["assembly"] + rep.Times["constrain"]
		res.Setup = rep.Times["pc_setup"]
		res.Solve = rep.Times["solve"]
		res.RankRSS = rep.MaxRSS
		res.Solver = sol.Summary.Solver
	}
	res.Total = time.Since(start).Seconds()
	res.Dofs, res.Iterations, res.Residual = sol.Summary.Dofs, sol.Summary.Iterations, sol.Summary.Residual
	for _, v := range sol.X {
		res.Norm = math.Max(res.Norm, math.Abs(v))
	}
	var ru syscall.Rusage
	syscall.Getrusage(syscall.RUSAGE_SELF, &ru)
	res.MaxRSS = ru.Maxrss * 1024 // kilobytes on Linux
	json.NewEncoder(os.Stdout).Encode(res)
	return 0
}

// benchmarkEngines runs the three engines on a model with n cells per
// side, each in a process of its own, and reports the times, ratios and
// memory per unknown.
func benchmarkEngines(b *testing.B, name string, n int) {
	needEngine(b)
	bm := benchModels[name]
	src, err := os.ReadFile(bm.file)
	if err != nil {
		b.Fatal(err)
	}
	// Build the driver before timing: a model is built once and cached.
	_, k := lower(b, model(b, string(src)), bm.method)
	tc, err := findToolchain()
	if err != nil {
		b.Fatal(err)
	}
	if _, _, err := tc.build(k, testCache, b.TempDir()); err != nil {
		b.Fatal(err)
	}
	for i := 0; i < b.N; i++ {
		var runs []childResult
		for _, engine := range []string{"go", "petsc1", "petsc2"} {
			cmd := exec.Command(os.Args[0], "-test.run=^$")
			cmd.Env = append(os.Environ(), fmt.Sprintf("%s=%s %d %s %s", benchChildEnv, name, n, engine, testCache))
			var out, stderr bytes.Buffer
			cmd.Stdout, cmd.Stderr = &out, &stderr
			if err := cmd.Run(); err != nil {
				b.Fatalf("%s: %v: %s", engine, err, stderr.String())
			}
			var r childResult
			if err := json.Unmarshal(out.Bytes(), &r); err != nil {
				b.Fatalf("%s: %v: %q", engine, err, out.String())
			}
			runs = append(runs, r)
			benchSink += r.Norm
		}
		goRun := runs[0]
		b.Logf("%s, %d unknowns (the Go runtime with GOMAXPROCS %d)", name, goRun.Dofs, runtime.GOMAXPROCS(0))
		b.Logf("%-7s %8s %8s %8s %8s %8s %8s %7s %6s %9s %9s  %s", "engine", "total s", "ratio", "prepare", "assemb.", "setup", "solve", "mpiexec", "iters", "B/unknown", "B/unk.+fw", "solver")
		for _, r := range runs {
			perUnknown := float64(r.MaxRSS) / float64(r.Dofs)
			withFW := perUnknown
			if r.RankRSS != nil {
				sum := int64(0)
				for _, v := range r.RankRSS {
					sum += v
				}
				perUnknown = float64(sum) / float64(r.Dofs)
				withFW = float64(sum+r.MaxRSS) / float64(r.Dofs)
			}
			b.Logf("%-7s %8.2f %8.2f %8.2f %8.2f %8.2f %8.2f %7.2f %6d %9.0f %9.0f  %s", r.Engine, r.Total, goRun.Total/r.Total, r.Prepare, r.Assembly, r.Setup, r.Solve, r.Mpiexec, r.Iterations, perUnknown, withFW, r.Solver)
			b.ReportMetric(r.Total, r.Engine+"-s")
			b.ReportMetric(perUnknown, r.Engine+"-B/unknown")
		}
		b.Logf("ratio: Go runtime's total time over the engine's (> 1: faster than the Go runtime); B/unknown: peak resident bytes per unknown of the Go process, or summed over the PETSc ranks; B/unk.+fw adds formwright's own process, which holds the mesh while the ranks run")
	}
}

func BenchmarkEngines3DDiffusion16(b *testing.B)  { benchmarkEngines(b, "diffusion3d", 16) }
func BenchmarkEngines2DAdvection128(b *testing.B) { benchmarkEngines(b, "advection2d", 128) }

// The sizes to quote: 101³ = 1 030 301 and 1001² = 1 002 001 unknowns.
func BenchmarkEngines3DDiffusion1M(b *testing.B) { benchmarkEngines(b, "diffusion3d", 100) }
func BenchmarkEngines2DAdvection1M(b *testing.B) { benchmarkEngines(b, "advection2d", 1000) }
