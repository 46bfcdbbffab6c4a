package main

import (
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/runtime/linsolve"
	"github.com/formwright/formwright/runtime/problem"
)

// benchSkew solves the skew-advection problem of the crosswind_plume
// example (unit square, velocity at 30°, κ = 1e-6, sharp inflow edge; the
// test of Brooks & Hughes 1982) with SUPG on an n×n triangle mesh by
// GMRES(100) with the shifted ILU(0) of problem.AutoILUShift, and reports
// the iteration count. Plain ILU(0) stagnates at 512²: ‖(LU)⁻¹‖ grows from
// 6e3 at 128² to 1e14 at 512² (measured), the instability of Elman 1986,
// while ‖A⁻¹‖ stays about 250–450.
func benchSkew(b *testing.B, n int) {
	var iters int
	for i := 0; i < b.N; i++ {
		it, err := skewSolve(n)
		if err != nil {
			b.Fatal(err)
		}
		iters = it
	}
	b.ReportMetric(float64(iters), "iterations")
	b.ReportMetric(float64((n+1)*(n+1)), "dofs")
}

// skewSolve solves the skew-advection problem on an n×n mesh and returns
// the GMRES iteration count.
func skewSolve(n int) (int, error) {
	m, err := loadModel("examples/crosswind_plume/model.fw")
	if err != nil {
		return 0, err
	}
	msh, _, err := buildMesh(m, fmt.Sprintf("span:0,1,0,1:%dx%d:tri", n, n))
	if err != nil {
		return 0, err
	}
	lf, err := lowerModel(m, compiler.SUPG)
	if err != nil {
		return 0, err
	}
	so := &linsolve.Options{Method: linsolve.MethodGMRES, Precond: linsolve.PrecondILU0, ILUShift: problem.AutoILUShift, RelTol: 1e-8, Restart: 100, MaxIter: 2000}
	sol, err := problem.Solve(lf, msh, problem.Options{Solver: so})
	if err != nil {
		return 0, err
	}
	return sol.Summary.Iterations, nil
}

func BenchmarkSkewAdvectionGMRESILU0_256(b *testing.B) { benchSkew(b, 256) }
func BenchmarkSkewAdvectionGMRESILU0_512(b *testing.B) { benchSkew(b, 512) }

// TestSkewIterationGrowth: halving h must not more than double the GMRES
// iterations (iterations growing no faster than h⁻¹; common practice, no
// source). Measured 24, 36, 57 at 128², 256², 512². Skipped under -short.
func TestSkewIterationGrowth(t *testing.T) {
	if testing.Short() {
		t.Skip("solves 512² problems")
	}
	sizes := []int{128, 256, 512}
	it := make([]int, len(sizes))
	for k, n := range sizes {
		var err error
		if it[k], err = skewSolve(n); err != nil {
			t.Fatalf("%d²: %v", n, err)
		}
		if k > 0 && float64(it[k]) > 2*float64(it[k-1]) {
			t.Errorf("GMRES+ILU(0) iterations %d at %d², %d at %d²: more than doubled", it[k-1], sizes[k-1], it[k], n)
		}
	}
}

// BenchmarkTransientHeatRatios times 20 backward Euler steps of the heat
// model (SUPG, 96² P1 triangles, direct solver) three ways in one run:
// every step set up and factorised anew (separate Solve calls on the
// stepped form, the way SolveTransient worked before it kept its set-up),
// SolveTransient on the interpreted kernels (set up and factorised once),
// and SolveTransient on the compiled kernels. It reports each path's time
// per step and the ratios to the first.
func BenchmarkTransientHeatRatios(b *testing.B) {
	m, err := loadModel("heat")
	if err != nil {
		b.Fatal(err)
	}
	msh, _, err := buildMesh(m, "span:0,1,0,1:96x96:tri")
	if err != nil {
		b.Fatal(err)
	}
	lf, err := lowerModel(m, compiler.SUPG)
	if err != nil {
		b.Fatal(err)
	}
	sf, err := compiler.BackwardEuler(lf)
	if err != nil {
		b.Fatal(err)
	}
	stepped := sf.Step
	const dt, steps = 0.01, 20
	interpreted := problem.Options{Interpreted: true}
	paths := []func() error{
		func() error {
			var x []float64
			for n := 1; n <= steps; n++ {
				sol, err := problem.Solve(stepped, msh, problem.Options{Time: float64(n) * dt, Step: dt, Initial: x, PreviousFixed: true, Interpreted: true})
				if err != nil {
					return err
				}
				x = sol.X
			}
			return nil
		},
		func() error {
			_, err := problem.SolveTransient(sf, msh, problem.TransientOptions{Options: interpreted, Step: dt, Steps: steps})
			return err
		},
		func() error {
			sol, err := problem.SolveTransient(sf, msh, problem.TransientOptions{Step: dt, Steps: steps})
			if err == nil && sol.Summary.KernelPath != "compiled" {
				return fmt.Errorf("no compiled heat kernels")
			}
			return err
		},
	}
	best := []float64{math.Inf(1), math.Inf(1), math.Inf(1)}
	for b.Loop() {
		for i, p := range paths {
			start := time.Now()
			if err := p(); err != nil {
				b.Fatal(err)
			}
			best[i] = math.Min(best[i], time.Since(start).Seconds()*1e3/steps)
		}
	}
	b.ReportMetric(best[0], "anew-ms/step")
	b.ReportMetric(best[1], "kept-interp-ms/step")
	b.ReportMetric(best[2], "kept-compiled-ms/step")
	b.ReportMetric(best[0]/best[1], "anew/kept-interp")
	b.ReportMetric(best[0]/best[2], "anew/kept-compiled")
}

// BenchmarkStokesDirectScaling times the direct solve of the seep-cell
// Stokes example (GLS, P1/P1, 64², 12 675 dofs) with the symmetric
// diagonal scaling of linsolve.Prepare and without it, in one run. The
// pressure block of the stabilised matrix is O(h²/μ) against the viscous
// block, so without scaling the threshold pivoting leaves the diagonal and
// the fill-reducing order is lost.
func BenchmarkStokesDirectScaling(b *testing.B) {
	m, err := loadModel("examples/seep_cell_stokes/model.fw")
	if err != nil {
		b.Fatal(err)
	}
	msh, _, err := buildMesh(m, "")
	if err != nil {
		b.Fatal(err)
	}
	lf, err := lowerModel(m, compiler.GLS)
	if err != nil {
		b.Fatal(err)
	}
	best := []float64{math.Inf(1), math.Inf(1)}
	for b.Loop() {
		for i, unscaled := range []bool{false, true} {
			opts := problem.Options{Solver: &linsolve.Options{Method: linsolve.MethodDirect, Unscaled: unscaled}}
			start := time.Now()
			if _, err := problem.Solve(lf, msh, opts); err != nil {
				b.Fatal(err)
			}
			best[i] = math.Min(best[i], time.Since(start).Seconds())
		}
	}
	b.ReportMetric(best[0], "scaled-s")
	b.ReportMetric(best[1], "unscaled-s")
	b.ReportMetric(best[1]/best[0], "unscaled/scaled")
}
