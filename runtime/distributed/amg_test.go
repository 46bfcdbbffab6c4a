package distributed

import (
	"fmt"
	"testing"
)

// porousPlate is a diffusion-dominated model with a varying coefficient.
// Invented scenario: groundwater head in a square aquifer whose
// permeability rises tenfold from one corner to the other, fed by uniform
// recharge and drained at its edges.
const porousPlate = `model aquifer
dimension 2
unknown u: scalar P1
given k = 1 + 9*x*y
given a = [1/10, 1/20]
given f = 1
equation for u: a . grad(u) - div(k*grad(u)) = f
at all: u = 0
stabilise galerkin
`

// TestAMGIterations: algebraic multigrid keeps the iteration count of a
// diffusion-dominated problem nearly independent of the mesh size, the
// property both kinds are built for: smoothed aggregation (Vaněk, Mandel
// & Brezina 1996, "Algebraic multigrid by smoothed aggregation for second
// and fourth order elliptic problems", Computing 56 [memory]) and
// classical AMG (Stüben 2001, "A review of algebraic multigrid", J.
// Comput. Appl. Math. 128 [memory]), both with convergence rates bounded
// independently of h for such problems. Checked: from 128² to 512² cells
// (h divided by 4) the iterations of GMRES to 1e-10 grow by at most 1.5×
// (the bound the task set; one-level preconditioners such as ILU(0) grow
// by about 4× here, with κ = O(h⁻²)). On 2 ranks, with the default AMG;
// BenchmarkAMGIterations reports both kinds.
func TestAMGIterations(t *testing.T) {
	if testing.Short() {
		t.Skip("three solves up to 263 169 unknowns (a few seconds)")
	}
	needEngine(t)
	amgIterations(t, []string{"amg"})
}

// BenchmarkAMGIterations reports the iterations and times of both kinds
// of AMG from 128² to 512² cells:
//
//	go test ./runtime/distributed -run '^$' -bench AMGIterations -benchtime 1x -v
func BenchmarkAMGIterations(b *testing.B) {
	needEngine(b)
	for i := 0; i < b.N; i++ {
		amgIterations(b, []string{"amg", "sa-amg", "ilu0"})
	}
}

func amgIterations(t testing.TB, preconds []string) {
	lf, k := lower(t, model(t, porousPlate), "galerkin")
	for _, pre := range preconds {
		s, err := ParseSolver("gmres+" + pre)
		if err != nil {
			t.Fatal(err)
		}
		var its []int
		for _, n := range []int{128, 256, 512} {
			msh := mustMesh(t, fmt.Sprintf("span:0,1,0,1:%dx%d:tri", n, n))
			_, rep, err := Solve(lf, msh, k, Options{Ranks: 2, Solver: s, CacheDir: testCache})
			if err != nil {
				t.Fatalf("%s, %d²: %v", pre, n, err)
			}
			its = append(its, rep.Iterations)
			t.Logf("%s (%s), %d²: %d iterations, residual %.1e, set-up %.2f s, solve %.2f s", pre, rep.PC, n, rep.Iterations, rep.Residual, rep.Times["pc_setup"], rep.Times["solve"])
		}
		if r := float64(its[2]) / float64(its[0]); r > 1.5 && pre != "ilu0" {
			t.Errorf("%s: iterations %v grow %.2f× from 128² to 512² (at most 1.5×)", pre, its, r)
		}
	}
}
