package distributed

import (
	"math"
	"testing"

	"github.com/formwright/formwright/runtime/problem"
)

// gradedSheetQ2 is a Q2 model with boundary integrals on two sides.
// Invented scenario: a heated sheet whose conductivity grows towards one
// corner, swept by a slow drift, losing heat through its right edge in
// proportion to its temperature (a Robin condition) and heated through
// its top edge.
const gradedSheetQ2 = `model graded_sheet
dimension 2
use tau
unknown u: scalar Q2
given k = 1 + x*y
given a = [1/2, 1/4]
given f = 1 + x
given h = diam(K)
equation for u: a . grad(u) - div(k*grad(u)) = f
at left, bottom: u = x*y + y/2
at right: flux(u) = 1 - u
at top: flux(u) = x
stabilise supg
tau for u = tau_codina_degree(norm(a), 1, 0, h, 2)
`

// blockP2Tet is a 3D model on tetrahedra with quadratic elements.
// Invented scenario: a block of a layered material conducting heat
// between two faces held at different temperatures, heated uniformly
// and warmed through its bottom face.
const blockP2Tet = `model layered_block
dimension 3
unknown u: scalar P2
given k = 1 + x + y*z
given f = 1
equation for u: -div(k*grad(u)) = f
at left: u = y + z
at right: u = 1
at bottom: flux(u) = 1/2
stabilise galerkin
`

// TestEqualsGoRuntime: on 1 and 2 ranks, with the direct solver and with
// a Krylov method preconditioned by algebraic multigrid (for Stokes the
// block preconditioner, AMG on the velocity), the PETSc
// solution equals the pure-Go runtime's (direct solver), for the stdlib
// adr model on P1, a Q2 model with Robin and flux conditions, the
// stabilised equal-order stdlib Stokes model with its mean condition
// (with manufactured data, so the solution is not zero) and a 3D model on
// P2 tetrahedra.
//
// The reference is the Go runtime's own solve (an independent assembler
// and solver; the C kernels agree with the Go ones to round-off,
// compiler/gogen's tests). Tolerance: relative 1e-8 in the maximum norm.
// Both direct solves leave relative residuals near 1e-13; the iterative
// ones stop at 1e-12, and the error is at most κ(A) times that, with
// κ(A) below 1e4 on these small meshes (an estimate: κ = O(h⁻²) with h
// ≥ 1/24), so 1e-8 has a margin of 100 while a wrong row, sign or
// boundary value gives differences of order 1.
func TestEqualsGoRuntime(t *testing.T) {
	needEngine(t)
	stokes, _ := manufactured(t, model(t, "stokes"))
	cases := []struct {
		name   string
		model  string
		method string
		mesh   string
		krylov string
	}{
		{"adr P1", "adr", "supg", "span:0,1,0,1:24x24:tri", "gmres+amg"},
		{"Q2 Robin", gradedSheetQ2, "supg", "span:0,1,0,1:8x8:quad", "gmres+amg"},
		{"Stokes P1/P1", "", "gls", "span:0,1,0,1:12x12:tri", "gmres+amg-block"},
		{"3D P2 tet", blockP2Tet, "galerkin", "span:0,1,0,1,0,1:4x4x4:tet", "cg+amg"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			m := stokes
			if c.model != "" {
				m = model(t, c.model)
			}
			lf, k := lower(t, m, c.method)
			msh := mustMesh(t, c.mesh)
			ref, err := problem.Solve(lf, msh, problem.Options{})
			if err != nil {
				t.Fatal(err)
			}
			krylov, err := ParseSolver(c.krylov)
			if err != nil {
				t.Fatal(err)
			}
			krylov.RelTol = 1e-12
			for _, ranks := range []int{1, 2} {
				for _, s := range []Solver{{Method: MethodDirect}, krylov} {
					sol, rep, err := Solve(lf, msh, k, Options{Ranks: ranks, Solver: s, CacheDir: testCache})
					if err != nil {
						t.Fatalf("%d ranks, %v: %v", ranks, s, err)
					}
					if d := relDiff(sol.X, ref.X); !(d <= 1e-8) {
						t.Errorf("%d ranks, %v: relative difference %.2e from the Go runtime (tolerance 1e-8)", ranks, s, d)
					}
					if rep.Mallocs != 0 || rep.Unneeded != 0 {
						t.Errorf("%d ranks: preallocation not exact: %d allocations during assembly, %d entries unused", ranks, rep.Mallocs, rep.Unneeded)
					}
					if int(rep.Nonzeros) != ref.Matrix.NNZ() {
						t.Errorf("%d ranks: %d nonzeros, the Go pattern has %d", ranks, rep.Nonzeros, ref.Matrix.NNZ())
					}
					t.Logf("%d ranks, %-12v %s+%s %3d iterations, residual %.1e, difference %.1e", ranks, s, rep.KSP, rep.PC, rep.Iterations, rep.Residual, relDiff(sol.X, ref.X))
				}
			}
		})
	}
}

// TestPicardEqualsGoRuntime: a form that reads the previous iterate (the
// stdlib Navier–Stokes model, convection by previous(vel), the
// lid-driven cavity at Re 100) is iterated in the driver around the
// parallel linear solve as runtime/problem iterates it: the same number
// of Picard steps and the same solution to relative 1e-8 (both iterate to
// a relative change of 1e-8 with direct solves; the steps agree to
// round-off, so the results differ by far less), and the same mean
// condition on the pressure. Reference: the Go runtime.
func TestPicardEqualsGoRuntime(t *testing.T) {
	needEngine(t)
	lf, k := lower(t, model(t, "navier_stokes"), "supg")
	msh := mustMesh(t, "span:0,1,0,1:12x12:tri")
	ref, err := problem.Solve(lf, msh, problem.Options{})
	if err != nil {
		t.Fatal(err)
	}
	sol, rep, err := Solve(lf, msh, k, Options{Ranks: 2, CacheDir: testCache})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Picard != ref.Summary.NonlinearIters {
		t.Errorf("%d Picard steps, the Go runtime took %d", rep.Picard, ref.Summary.NonlinearIters)
	}
	if d := relDiff(sol.X, ref.X); !(d <= 1e-8) {
		t.Errorf("relative difference %.2e from the Go runtime (tolerance 1e-8)", d)
	}
	if !(rep.MeanResidual < 1e-8) {
		t.Errorf("the equation replaced by the pressure pin holds to %.1e only", rep.MeanResidual)
	}
	t.Logf("%d Picard steps (Go %d), difference %.1e, mean residual %.1e (Go %.1e)", rep.Picard, ref.Summary.NonlinearIters, relDiff(sol.X, ref.X), rep.MeanResidual, ref.Summary.MeanResidual)
}

// TestNewtonEqualsGoRuntime: a Newton step form (the residual and its
// Jacobian, reading the iterate through the kernels' previous input) is
// solved by Newton's method in the driver as runtime/problem solves it:
// for the stdlib Bratu model (1D) and the stdlib Navier–Stokes model
// written without a lag (the lid-driven cavity at Re 100, with its mean
// condition on the pressure), on 2 ranks, the same number of iterations,
// the same residual history while it is above round-off (relative
// 1e-6: both assemble the same residual with kernels that agree to
// round-off and solve directly), and the same solution to relative 1e-8.
// Reference: the Go runtime.
func TestNewtonEqualsGoRuntime(t *testing.T) {
	needEngine(t)
	for _, c := range []struct{ model, method, mesh string }{
		{"bratu", "galerkin", "span:0,1:32"},
		{"navier_stokes_nonlinear", "supg", "span:0,1,0,1:12x12:tri"},
	} {
		t.Run(c.model, func(t *testing.T) {
			lf, k := lower(t, model(t, c.model), c.method)
			if !lf.Newton {
				t.Fatalf("%s does not lower to a Newton step form", c.model)
			}
			msh := mustMesh(t, c.mesh)
			ref, err := problem.Solve(lf, msh, problem.Options{})
			if err != nil {
				t.Fatal(err)
			}
			sol, _, err := Solve(lf, msh, k, Options{Ranks: 2, CacheDir: testCache})
			if err != nil {
				t.Fatal(err)
			}
			got, want := sol.Summary.History, ref.Summary.History
			if len(got) != len(want) || sol.Summary.Nonlinear != "newton" {
				t.Fatalf("%s: %d Newton steps (%q); the Go runtime took %d", c.model, len(got)-1, sol.Summary.Nonlinear, len(want)-1)
			}
			for i := range got {
				if w := want[i]; w.Relative > 1e-10 && math.Abs(got[i].Residual-w.Residual) > 1e-6*w.Residual {
					t.Errorf("step %d: ‖F‖ = %.10e, the Go runtime %.10e", i, got[i].Residual, w.Residual)
				}
			}
			if d := relDiff(sol.X, ref.X); !(d <= 1e-8) {
				t.Errorf("relative difference %.2e from the Go runtime (tolerance 1e-8)", d)
			}
			t.Logf("%s: %d Newton steps, final ‖F‖ %.1e (Go %.1e), difference %.1e", c.model, len(got)-1, got[len(got)-1].Residual, want[len(want)-1].Residual, relDiff(sol.X, ref.X))
		})
	}
}
