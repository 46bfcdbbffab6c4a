package problem_test

import (
	"math"
	"testing"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"
)

// heatForm lowers u_t − k Δu = 0 on the unit square with u = 0 on the
// boundary, through the compiler.
func heatForm(t *testing.T) (*compiler.Model, *compiler.Derivation) {
	return heatFormWith(t, "1", "0")
}

// heatFormWith is heatForm with diffusivity k and source f (expressions).
func heatFormWith(t *testing.T, k, source string) (*compiler.Model, *compiler.Derivation) {
	t.Helper()
	src := `model heat_mode
dimension 2
unknown u: scalar P1
given k = ` + k + `
given initial_u = sin(pi*x)*sin(pi*y)
equation for u: partial(u, t) - k*lap(u) = ` + source + `
at all: u = 0
`
	f, errs := lang.Parse("heat.fw", []byte(src))
	m, cerrs := compiler.Check(f, compiler.CheckOptions{})
	if len(errs)+len(cerrs) > 0 {
		t.Fatal(errs, cerrs)
	}
	d, err := compiler.Derive(m, nil)
	if err != nil {
		t.Fatal(err)
	}
	return m, d
}

// TestBackwardEulerHeatMode: the mode sin(πx) sin(πy) of the heat equation
// decays as e^{−2π²kt}; one backward Euler step multiplies it by
// 1/(1 + 2π²k Δt) (the amplification factor of the implicit Euler method,
// e.g. Hughes 1987 §8.2), so after n steps the centre value is
// (1 + 2π²kΔt)^{−n} up to the spatial error of P1 on a 64² mesh (~2e-4
// relative: the eigenvalue of the P1 discretisation differs from 2π² by
// O(h²)). Halving Δt halves the error against e^{−2π²kt}: first order in
// time, checked within 0.1.
func TestBackwardEulerHeatMode(t *testing.T) {
	m, d := heatForm(t)
	lf, err := d.Lower(compiler.Galerkin)
	if err != nil {
		t.Fatal(err)
	}
	if !lf.IsTransient() {
		t.Fatal("the heat form is not recognised as transient")
	}
	sf, err := compiler.BackwardEuler(lf)
	if err != nil {
		t.Fatal(err)
	}
	init, err := problem.ExactFromExprs(2, compiler.LowerExpr(m, m.Coef("initial_u").Sym))
	if err != nil {
		t.Fatal(err)
	}
	msh, err := mesh.Load("span:0,1,0,1:64x64:tri")
	if err != nil {
		t.Fatal(err)
	}
	const tEnd = 0.05
	lambda := 2 * math.Pi * math.Pi
	var errs []float64
	for _, steps := range []int{5, 10, 20} {
		dt := tEnd / float64(steps)
		sol, err := problem.SolveTransient(sf, msh, problem.TransientOptions{Step: dt, Steps: steps, Initial: []problem.Exact{init}})
		if err != nil {
			t.Fatal(err)
		}
		centre := -1.0
		coords := sol.Dofs.NodeCoords(0)
		for n := 0; n < len(coords)/2; n++ {
			if math.Abs(coords[2*n]-0.5) < 1e-12 && math.Abs(coords[2*n+1]-0.5) < 1e-12 {
				centre = sol.Fields[0].Values[0][n]
			}
		}
		be := math.Pow(1+lambda*dt, -float64(steps))
		if math.Abs(centre-be) > 2e-3*be {
			t.Errorf("%d steps: centre value %.6f, backward Euler factor %.6f", steps, centre, be)
		}
		t.Logf("%d steps: centre %.6f, backward Euler %.6f, exact %.6f", steps, centre, be, math.Exp(-lambda*tEnd))
		errs = append(errs, math.Abs(centre-math.Exp(-lambda*tEnd)))
	}
	for i := 1; i < len(errs); i++ {
		if order := math.Log2(errs[i-1] / errs[i]); math.Abs(order-1) > 0.1 {
			t.Errorf("observed time order %.3f between %d and %d steps, want 1", order, 5<<(i-1), 5<<i)
		}
	}
}

// TestBackwardEulerSplitsPicard: a form that reads previous(...) cannot
// also be time-stepped with the previous field as the old time level, so
// its step comes with a mass form for the old level; a negative step is
// refused.
func TestBackwardEulerSplitsPicard(t *testing.T) {
	src := `model mixed
dimension 1
unknown u: scalar P1
equation for u: partial(u, t) + previous(u)*partial(u, x) = 0
`
	f, _ := lang.Parse("m.fw", []byte(src))
	m, errs := compiler.Check(f, compiler.CheckOptions{})
	if len(errs) > 0 {
		t.Fatal(errs)
	}
	d, _ := compiler.Derive(m, nil)
	lf, err := d.Lower(compiler.Galerkin)
	if err != nil {
		t.Fatal(err)
	}
	sf, err := compiler.BackwardEuler(lf)
	if err != nil {
		t.Fatal(err)
	}
	if sf.Mass == nil || sf.Step.IsTransient() {
		t.Errorf("Picard-iterated transient form: mass form %v, step still transient %v", sf.Mass != nil, sf.Step.IsTransient())
	}
	msh, err := mesh.Load("span:0,1:8")
	if err != nil {
		t.Fatal(err)
	}
	if _, err := problem.SolveTransient(sf, msh, problem.TransientOptions{Step: -1, Steps: 1}); err == nil {
		t.Error("no error for a negative step")
	}
}

// TestTransientReusesFactorisation: SolveTransient sets up once and
// factorises once while the matrix is constant, and its steps equal those
// of separate steady solves of the backward Euler form (the independent
// path: Solve on BackwardEuler(form) with Step dt, set up anew each step)
// to 1e-12.
// With a source that depends on t the matrix is still constant; with a
// diffusivity that depends on t it is not, and every step factorises.
func TestTransientReusesFactorisation(t *testing.T) {
	for _, tc := range []struct {
		k, f     string
		prepared int
	}{{"1", "0", 1}, {"1", "t*x", 1}, {"1 + t", "0", 4}} {
		m, d := heatFormWith(t, tc.k, tc.f)
		lf, err := d.Lower(compiler.Galerkin)
		if err != nil {
			t.Fatal(err)
		}
		init, err := problem.ExactFromExprs(2, compiler.LowerExpr(m, m.Coef("initial_u").Sym))
		if err != nil {
			t.Fatal(err)
		}
		msh, err := mesh.Load("span:0,1,0,1:16x16:tri")
		if err != nil {
			t.Fatal(err)
		}
		const dt, steps = 0.01, 4
		sf, err := compiler.BackwardEuler(lf)
		if err != nil {
			t.Fatal(err)
		}
		stepped := sf.Step
		var got [][]float64
		sol, err := problem.SolveTransient(sf, msh, problem.TransientOptions{Step: dt, Steps: steps, Initial: []problem.Exact{init},
			Observe: func(n int, _ float64, s *problem.Solution) { got = append(got, append([]float64(nil), s.X...)) }})
		if err != nil {
			t.Fatal(err)
		}
		if sol.Summary.Prepared != tc.prepared {
			t.Errorf("k = %s, f = %s: %d factorisations in %d steps, want %d", tc.k, tc.f, sol.Summary.Prepared, steps, tc.prepared)
		}
		x := make([]float64, len(sol.X))
		coords := sol.Dofs.NodeCoords(0)
		u, g := make([]float64, 1), make([]float64, 2)
		for n := range x {
			init(coords[2*n:2*n+2], 0, u, g)
			x[n] = u[0]
		}
		for n := 1; n <= steps; n++ {
			ref, err := problem.Solve(stepped, msh, problem.Options{Time: float64(n) * dt, Step: dt, Initial: x, PreviousFixed: true})
			if err != nil {
				t.Fatal(err)
			}
			for i := range x {
				if math.Abs(got[n-1][i]-ref.X[i]) > 1e-12 {
					t.Fatalf("k = %s, f = %s, step %d, dof %d: %.17g, separate solve %.17g", tc.k, tc.f, n, i, got[n-1][i], ref.X[i])
				}
			}
			x = ref.X
		}
	}
}
