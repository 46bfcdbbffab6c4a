package main

import (
	"fmt"
	"math"
	"os"
	"strings"
	"testing"
	"time"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"
	"github.com/formwright/formwright/stdlib"
)

// TestCavityTauStudy (throwaway, runs only with FW_CAVITY_STUDY set to a
// comma-separated list of choices): the Re 400 cavity with several τ/h
// choices, SUPG and VMS, recovery on.
func TestCavityTauStudy(t *testing.T) {
	which := os.Getenv("FW_CAVITY_STUDY")
	if which == "" {
		t.Skip("set FW_CAVITY_STUDY")
	}
	n := "64"
	if s := os.Getenv("FW_CAVITY_N"); s != "" {
		n = s
	}
	choices := map[string][3]string{
		"diam":        {"given h = diam(K)", "tau for vel = tau_codina(norm(vel), nu, 0, h)", "tau for p = h^2/(4*tau_codina(norm(vel), nu, 0, h))"},
		"leg":         {"given h = sqrt(2*meas(K))", "tau for vel = tau_codina(norm(vel), nu, 0, h)", "tau for p = h^2/(4*tau_codina(norm(vel), nu, 0, h))"},
		"disc":        {"given h = sqrt(4*meas(K)/pi)", "tau for vel = tau_codina(norm(vel), nu, 0, h)", "tau for p = h^2/(4*tau_codina(norm(vel), nu, 0, h))"},
		"shakib-leg":  {"given h = sqrt(2*meas(K))", "tau for vel = tau_shakib_steady(norm(vel), nu, h)", "tau for p = h^2/(4*tau_shakib_steady(norm(vel), nu, h))"},
		"shakib-diam": {"given h = diam(K)", "tau for vel = tau_shakib_steady(norm(vel), nu, h)", "tau for p = h^2/(4*tau_shakib_steady(norm(vel), nu, h))"},
		"metric":      {"given h = sqrt(2*meas(K))", "tau for vel = (4*vel . (G . vel) + 144*nu^2*ddot(G, G))^(-1/2)", "tau for p = h^2/(4*(4*vel . (G . vel) + 144*nu^2*ddot(G, G))^(-1/2))"},
		"diam-tc0":    {"given h = diam(K)", "tau for vel = tau_codina(norm(vel), nu, 0, h)", "tau for p = 0*h"},
		"metric16":    {"given h = sqrt(2*meas(K))", "tau for vel = (4*vel . (G . vel) + 16*nu^2*ddot(G, G))^(-1/2)", "tau for p = h^2/(4*(4*vel . (G . vel) + 16*nu^2*ddot(G, G))^(-1/2))"},
	}
	_, src0, err := stdlib.Model("navier_stokes_nonlinear")
	if err != nil {
		t.Fatal(err)
	}
	base := strings.Replace(string(src0), "given Re = 100", "given Re = 400", 1)
	old := choices["diam"]
	msh, err := mesh.Load("span:0,1,0,1:" + n + "x" + n + ":tri")
	if err != nil {
		t.Fatal(err)
	}
	meths := []compiler.Method{compiler.SUPG, compiler.VMS}
	if s := os.Getenv("FW_CAVITY_METH"); s == "supg" {
		meths = meths[:1]
	} else if s == "vms" {
		meths = meths[1:]
	}
	for _, name := range strings.Split(which, ",") {
		c, ok := choices[name]
		if !ok {
			t.Fatalf("no choice %q", name)
		}
		src := base
		for i := range c {
			if !strings.Contains(src, old[i]) {
				t.Fatalf("model has no line %q", old[i])
			}
			src = strings.Replace(src, old[i], c[i], 1)
		}
		m, err := loadModel(writeModel(t, src))
		if err != nil {
			t.Fatal(err)
		}
		for _, meth := range meths {
			t0 := time.Now()
			plain, _, err := deriveAndLowerWith(m, meth, compiler.DeriveOptions{Recovery: compiler.RecoverOff})
			if err != nil {
				t.Fatal(err)
			}
			start, err := problem.Solve(plain, msh, problem.Options{Initial: stokesStart(t, m, meth, msh), Newton: problem.NewtonOptions{RelTol: 1e-8}})
			if err != nil {
				t.Errorf("%s %s plain: %v", name, meth, err)
				continue
			}
			du0, dv0 := ghiaDeviation(start, ghia400.u, ghia400.v)
			lf, _, err := deriveAndLowerWith(m, meth, compiler.DeriveOptions{})
			if err != nil {
				t.Fatal(err)
			}
			sol, err := problem.Solve(lf, msh, problem.Options{Initial: start.X, Newton: problem.NewtonOptions{RelTol: 1e-8, MaxIter: 60}})
			if err != nil {
				t.Errorf("%s %s recovered: %v", name, meth, err)
				continue
			}
			du, dv := ghiaDeviation(sol, ghia400.u, ghia400.v)
			t.Logf("WORST %s %s: %s", name, meth, worstPoints(sol))
			t.Logf("STUDY %s² %-12s %-4s plain u %.4f v %.4f | recovered u %.4f v %.4f | iters %d+%d | %.0fs",
				n, name, meth, du0, dv0, du, dv, len(start.Summary.History)-1, len(sol.Summary.History)-1, time.Since(t0).Seconds())
		}
	}
}

// worstPoints lists the signed deviations (computed − Ghia) at the three
// worst points of each profile.
func worstPoints(sol *problem.Solution) string {
	var out []string
	for k, tab := range [][][2]float64{ghia400.u, ghia400.v} {
		type d struct{ at, dev float64 }
		var ds []d
		for _, r := range tab {
			var du, dv float64
			if k == 0 {
				du, _ = ghiaDeviation(sol, [][2]float64{r}, nil)
				du0, _ := ghiaDeviation(sol, [][2]float64{{r[0], r[1] + 1e-7}}, nil)
				if du0 > du {
					du = -du
				}
				ds = append(ds, d{r[0], du})
			} else {
				_, dv = ghiaDeviation(sol, nil, [][2]float64{r})
				_, dv0 := ghiaDeviation(sol, nil, [][2]float64{{r[0], r[1] + 1e-7}})
				if dv0 > dv {
					dv = -dv
				}
				ds = append(ds, d{r[0], dv})
			}
		}
		for i := range ds {
			for j := i + 1; j < len(ds); j++ {
				if math.Abs(ds[j].dev) > math.Abs(ds[i].dev) {
					ds[i], ds[j] = ds[j], ds[i]
				}
			}
		}
		for _, x := range ds[:4] {
			out = append(out, fmt.Sprintf("%s(%.4f) %+.4f", "uv"[k:k+1], x.at, x.dev))
		}
	}
	return strings.Join(out, ", ")
}
