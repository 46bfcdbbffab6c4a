package compiler

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"os/exec"
	"strconv"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
)

// coefPair is one random coefficient written twice: in the model language
// and in sympy's syntax.
type coefPair struct{ fw, py string }

func randomCoef(r *rand.Rand, depth int) coefPair {
	if depth == 0 {
		switch r.IntN(4) {
		case 0:
			return coefPair{"x", "x"}
		case 1:
			return coefPair{"y", "y"}
		}
		n := strconv.Itoa(1 + r.IntN(4))
		return coefPair{n, n}
	}
	a, b := randomCoef(r, depth-1), randomCoef(r, depth-1)
	switch r.IntN(6) {
	case 0:
		return coefPair{"(" + a.fw + " + " + b.fw + ")", "(" + a.py + " + " + b.py + ")"}
	case 1:
		return coefPair{"(" + a.fw + "*" + b.fw + ")", "(" + a.py + "*" + b.py + ")"}
	case 2:
		return coefPair{"sin(" + a.fw + ")", "sin(" + a.py + ")"}
	case 3:
		return coefPair{"exp(" + a.fw + "/4)", "exp(" + a.py + "/4)"}
	case 4:
		return coefPair{"(" + a.fw + ")^2", "(" + a.py + ")**2"}
	}
	return coefPair{"cos(" + a.fw + " - " + b.fw + ")", "cos(" + a.py + " - " + b.py + ")"}
}

// TestAdjointAgainstSympy cross-checks formwright's formal adjoint of
// random variable-coefficient operators against sympy (a general-purpose
// computer algebra library), which forms L* v = Σ (−1)^|α| ∂^α(c_α v) by
// its own differentiation. Both are evaluated at random points with the same
// test function; agreement to 1e-10 relative. Skipped where python3 with
// sympy is not installed.
func TestAdjointAgainstSympy(t *testing.T) {
	if err := exec.Command("python3", "-c", "import sympy").Run(); err != nil {
		t.Skip("python3 with sympy not installed")
	}
	r := rand.New(rand.NewPCG(3, 5))
	var script bytes.Buffer
	script.WriteString("from sympy import *\nx, y = symbols('x y')\nv = sin(2*pi*x)*sin(3*pi*y)\n")
	type point struct{ x, y float64 }
	type opCase struct {
		m   *Model
		pts []point
	}
	var cases []opCase
	for k := 0; k < 12; k++ {
		a1, a2, kk, s, mx := randomCoef(r, 2), randomCoef(r, 2), randomCoef(r, 2), randomCoef(r, 2), randomCoef(r, 1)
		src := fmt.Sprintf(`model rnd
dimension 2
unknown u: scalar P2
given a = [%s, %s]
given k = %s
given s = %s
given m = %s
equation for u: a . grad(u) - div(k*grad(u)) + s*u + m*partial(u, x, y) = 0
`, a1.fw, a2.fw, kk.fw, s.fw, mx.fw)
		m := mustModel(t, src)
		fmt.Fprintf(&script, "a1, a2, k, s, m = %s, %s, %s, %s, %s\n", a1.py, a2.py, kk.py, s.py, mx.py)
		script.WriteString("Ls = -diff(a1*v, x) - diff(a2*v, y) - diff(k*diff(v, x), x) - diff(k*diff(v, y), y) + s*v + diff(m*v, x, y)\n")
		c := opCase{m: m}
		for j := 0; j < 4; j++ {
			p := point{0.05 + 0.9*r.Float64(), 0.05 + 0.9*r.Float64()}
			c.pts = append(c.pts, p)
			fmt.Fprintf(&script, "print(repr(float(N(Ls.subs({x: %.17g, y: %.17g}), 30))))\n", p.x, p.y)
		}
		cases = append(cases, c)
	}
	cmd := exec.Command("python3", "-")
	cmd.Stdin = &script
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("sympy script failed: %v", err)
	}
	vals := strings.Fields(string(out))
	i := 0
	for _, c := range cases {
		adj, err := Adjoint(c.m)
		if err != nil {
			t.Fatal(err)
		}
		low := newLowerer(c.m).Lower(adj[0])[0]
		env := &pointEnv{test: map[[2]int]sinProduct{{0, 0}: {[3]float64{2, 3, 0}}}}
		for _, p := range c.pts {
			want, err := strconv.ParseFloat(vals[i], 64)
			i++
			if err != nil {
				t.Fatal(err)
			}
			env.x = []float64{p.x, p.y}
			got := ir.Eval(low, env)
			if math.Abs(got-want) > 1e-10*math.Max(1, math.Abs(want)) {
				t.Errorf("L*v at (%g, %g): formwright %.15g, sympy %.15g\nmodel:\n%v", p.x, p.y, got, want, c.m.Coefs)
			}
		}
	}
}
