package distributed

import (
	"fmt"
	"math"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"
	"github.com/formwright/formwright/runtime/study"
)

// TestStudyOrders: a convergence study by manufactured solutions
// (runtime/study, as verify runs it) on the PETSc engine gives the same
// errors and observed orders as on the Go runtime, for the stdlib adr
// model (SUPG, P1) and the stdlib Stokes model (GLS, P1/P1, pressure
// measured up to a constant) on three levels (4² to 16² and 8² to 32²
// cells), on 2 ranks. The reference
// is the Go runtime's study; the errors agree to relative 1e-7 (both
// solves are direct, with residuals near 1e-13, and the error norms are
// computed by the same code from the two solutions), so the orders agree
// to 1e-6, while the orders themselves are checked against the expected
// ones (L² 2, H¹ 1 for the velocity and for c; L² 1 for the equal-order
// pressure: Hughes, Franca & Balestra 1986 [memory]) by the study.
func TestStudyOrders(t *testing.T) {
	needEngine(t)
	for _, c := range []struct {
		model, method string
		base          int
	}{{"adr", "supg", 4}, {"stokes", "gls", 8}} {
		t.Run(c.model, func(t *testing.T) {
			m := model(t, c.model)
			mf, exact := manufactured(t, m)
			lf, k := lower(t, mf, c.method)
			cfg := study.Config{Model: m.Name, Dim: m.Dim, Levels: 3, Tol: 0.2,
				Methods: []study.Method{{Name: c.method, Form: lf}},
				Mesh: func(l int) (study.Level, error) {
					n := c.base << l
					msh, err := mesh.Load(fmt.Sprintf("span:0,1,0,1:%dx%d:tri", n, n))
					return study.Level{Mesh: msh, N: n, H: 1 / float64(n)}, err
				}}
			for i, u := range m.Unknowns {
				l2, h1, checkH1 := m.ExpectedOrders(i)
				cfg.Fields = append(cfg.Fields, study.Field{Name: u.Name, Element: u.Element, Exact: exact[i],
					ExpectedL2: l2, ExpectedH1: h1, CheckH1: checkH1, UpToConstant: m.HasMean(i)})
			}
			ref, err := study.Run(cfg)
			if err != nil {
				t.Fatal(err)
			}
			cfg.SolveFunc = func(form *ir.LoweredForm, msh *mesh.Mesh, opts problem.Options) (*problem.Solution, error) {
				sol, _, err := Solve(form, msh, k, Options{Ranks: 2, CacheDir: testCache})
				return sol, err
			}
			got, err := study.Run(cfg)
			if err != nil {
				t.Fatal(err)
			}
			if len(got.Failed) > 0 || len(ref.Failed) > 0 {
				t.Errorf("failed checks: PETSc %v, Go %v", got.Failed, ref.Failed)
			}
			for i, tab := range got.Methods {
				for l, lv := range tab.Levels {
					r := ref.Methods[i].Levels[l]
					if math.Abs(lv.L2-r.L2) > 1e-7*r.L2 || math.Abs(lv.H1-r.H1) > 1e-7*r.H1 {
						t.Errorf("%s level %d: errors %.10e, %.10e; Go runtime %.10e, %.10e", tab.Field, l+1, lv.L2, lv.H1, r.L2, r.H1)
					}
					if math.Abs(lv.OrderL2-r.OrderL2) > 1e-6 || math.Abs(lv.OrderH1-r.OrderH1) > 1e-6 {
						t.Errorf("%s level %d: orders %.6f, %.6f; Go runtime %.6f, %.6f", tab.Field, l+1, lv.OrderL2, lv.OrderH1, r.OrderL2, r.OrderH1)
					}
				}
				last := tab.Levels[len(tab.Levels)-1]
				t.Logf("%s: finest orders L2 %.3f, H1 %.3f (Go runtime %.3f, %.3f)", tab.Field, last.OrderL2, last.OrderH1,
					ref.Methods[i].Levels[len(tab.Levels)-1].OrderL2, ref.Methods[i].Levels[len(tab.Levels)-1].OrderH1)
			}
		})
	}
}
