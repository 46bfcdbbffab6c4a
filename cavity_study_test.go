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

// TestCavityTauStudy is a measurement, not a check: it runs only with
// FW_CAVITY_STUDY set to a comma-separated list of the choices below
// (FW_CAVITY_N: mesh, default 64; FW_CAVITY_METH: supg or vms, default
// both). It solves the Re 400 cavity of TestCavityRe400Recovered with
// each choice of τ_M, τ_C and h in place of the stdlib lines, as that test
// does (Newton without the recovery from the Stokes start, then with it),
// and logs the largest deviations from Ghia, Ghia & Shin (1982, Tables I
// and II) with the worst points, signed (computed − Ghia).
//
// Choices (τ_C = h²/(4τ_M) with the same h unless said otherwise):
//   - diam: Codina's τ (tau_codina) with h = diam(K), the stdlib default;
//   - leg: the same with h = √(2 meas(K)) (the leg of the right isosceles
//     triangle of the cell's area; the grid spacing on this mesh);
//   - disc: the same with h = h_disc(meas(K)) (sizes.fw);
//   - shakib-leg: tau_shakib_steady with h = √(2 meas(K));
//   - metric: τ_M of Bazilevs et al. (2007, CMAME 197) with G of the unit
//     simplex scaled by 4 to the [−1,1] reference convention of that paper,
//     (4 u·G u + 9·16 ν² G:G)^(−1/2), C_I = 9 (the 1D value that gives back
//     Shakib–Hughes–Johan, testdata/REFERENCES.md); smooth at u = 0;
//   - metric16: the same with C_I = 1 (the 1D diffusive limit h²/(4ν) of
//     Codina);
//   - diam-tc0: diam with τ_C = 0 (no grad–div term).
//
// Measured (2 shared cores, interpreted kernels; "plain" is without the
// recovery; iterations are Newton without + with the recovery; time for
// both solves of one method). Max |Δu| and max |Δv| with the recovery:
//
//	mesh choice       SUPG u, v        VMS u, v        plain SUPG / VMS (max)  iterations  time SUPG/VMS
//	64²  diam         0.0396 0.0436    0.0427 0.0482   0.0675 / 0.0618         6+22, 6+23  21 s / 35 s
//	64²  leg          0.0416 0.0471    0.0434 0.0498   0.0617 / 0.0581         6+16        15 s / 32 s
//	64²  disc         0.0425 0.0487    0.0438 0.0506   0.0591 / 0.0564         6+14        13 s / 33 s
//	64²  shakib-leg   0.0431 0.0497    0.0442 0.0513   0.0585 / 0.0560         6+12        16 s / 31 s
//	64²  metric16     0.0428 0.0493    0.0442 0.0512   0.0588 / 0.0563         6+12        17 s / 38 s
//	64²  metric       0.0454 0.0530    0.0458 0.0535   0.0565 / 0.0554         6+8         14 s / 36 s
//	64²  diam-tc0     0.0387 0.0422    -               0.0670 / -              6+47        45 s
//	128² diam         0.0195 0.0208    0.0208 0.0228   0.0306 / 0.0284         6+24        160 s / 263 s
//	128² leg          0.0207 0.0227    0.0214 0.0239   0.0284 / 0.0271         6+17        126 s / 178 s
//	128² metric       0.0224 0.0254    -               0.0265 / -              6+7         75 s
//	128² diam-tc0     0.0193 0.0205    0.0207 0.0226   0.0304 / 0.0282         6+55, 6+57  284 s / 449 s
//	256² diam         0.0095 0.0102    -               0.0127 / -              6+23        1290 s
//
// The hypothesis that τ is too large does not hold with the recovery on:
// every smaller τ (shorter h, Shakib's or the metric form) brings the plain
// solution closer to Ghia et al. but the recovered one further away, on
// both meshes; no choice reaches 0.02 at every point. The worst points are
// the same for all choices, and the vortex is too weak at each of them:
// u(0.5, 0.2813) and v(0.8594, 0.5) too small in magnitude (128² diam
// SUPG: +0.0195 and +0.0208). The deviations halve with each halving of
// h (diam SUPG: 0.0436, 0.0208, 0.0102 on 64², 128², 256², and the
// same ratio for the other choices), so at 128² they are a first-order
// discretisation error, not a misplaced τ; the default meets 0.02 on 256²
// (about 21 minutes for SUPG alone).
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
		"diam":       {"given h = diam(K)", "tau for vel = tau_codina(norm(vel), nu, 0, h)", "tau for p = h^2/(4*tau_codina(norm(vel), nu, 0, h))"},
		"leg":        {"given h = sqrt(2*meas(K))", "tau for vel = tau_codina(norm(vel), nu, 0, h)", "tau for p = h^2/(4*tau_codina(norm(vel), nu, 0, h))"},
		"disc":       {"given h = sqrt(4*meas(K)/pi)", "tau for vel = tau_codina(norm(vel), nu, 0, h)", "tau for p = h^2/(4*tau_codina(norm(vel), nu, 0, h))"},
		"shakib-leg": {"given h = sqrt(2*meas(K))", "tau for vel = tau_shakib_steady(norm(vel), nu, h)", "tau for p = h^2/(4*tau_shakib_steady(norm(vel), nu, h))"},
		"metric":     {"given h = sqrt(2*meas(K))", "tau for vel = (4*vel . (G . vel) + 144*nu^2*ddot(G, G))^(-1/2)", "tau for p = h^2/(4*(4*vel . (G . vel) + 144*nu^2*ddot(G, G))^(-1/2))"},
		"diam-tc0":   {"given h = diam(K)", "tau for vel = tau_codina(norm(vel), nu, 0, h)", "tau for p = 0*h"},
		"metric16":   {"given h = sqrt(2*meas(K))", "tau for vel = (4*vel . (G . vel) + 16*nu^2*ddot(G, G))^(-1/2)", "tau for p = h^2/(4*(4*vel . (G . vel) + 16*nu^2*ddot(G, G))^(-1/2))"},
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
			start, sol, err := plainThenRecovered(m, meth, msh, stokesStart(t, m, meth, msh))
			if err != nil {
				t.Errorf("%s %s: %v", name, meth, err)
				continue
			}
			du0, dv0 := ghiaDeviation(start, ghia400.u, ghia400.v)
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
