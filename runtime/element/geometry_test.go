package element

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/quadrature"
	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"
)

// nodeCoords maps the reference nodes of e by f to physical coordinates.
func nodeCoords(e *Element, f func(xi []float64) []float64) []float64 {
	d := e.Dim()
	ref := e.RefNodes()
	var out []float64
	for i := 0; i < e.NumNodes(); i++ {
		out = append(out, f(ref[i*d:(i+1)*d])...)
	}
	return out
}

func onePoint(c cell.Type, xi []float64) quadrature.Rule {
	return quadrature.Rule{Cell: c, Degree: 0, Points: append([]float64(nil), xi...), Weights: []float64{1}}
}

// forward evaluates x(ξ) and J(ξ) of the geometry element directly from
// Eval/EvalGrad (the definition of the map), for the Newton inverse below.
func forward(g *Element, coords, xi []float64) ([]float64, *mat.Dense) {
	d, n := g.Dim(), g.NumNodes()
	phi, dphi := make([]float64, n), make([]float64, n*d)
	g.Eval(xi, phi)
	g.EvalGrad(xi, dphi)
	x := make([]float64, d)
	J := mat.NewDense(d, d, nil)
	for a := 0; a < n; a++ {
		for i := 0; i < d; i++ {
			x[i] += coords[a*d+i] * phi[a]
			for j := 0; j < d; j++ {
				J.Set(i, j, J.At(i, j)+coords[a*d+i]*dphi[a*d+j])
			}
		}
	}
	return x, J
}

// inverse solves x(ξ) = x by Newton's method with gonum's dense solver.
func inverse(g *Element, coords, x, start []float64) []float64 {
	d := g.Dim()
	xi := append([]float64(nil), start...)
	for it := 0; it < 50; it++ {
		y, J := forward(g, coords, xi)
		r := mat.NewVecDense(d, nil)
		for i := range y {
			r.SetVec(i, y[i]-x[i])
		}
		var s mat.VecDense
		if err := s.SolveVec(J, r); err != nil {
			panic(err)
		}
		nrm := 0.0
		for i := 0; i < d; i++ {
			xi[i] -= s.AtVec(i)
			nrm += math.Abs(s.AtVec(i))
		}
		if nrm < 1e-15 {
			break
		}
	}
	return xi
}

// checkMapFD compares physical gradients and Hessians from Map with gonum
// central differences of x -> φ_a(ξ(x)), ξ(x) by Newton inversion: an
// independent route through the inverse map that never uses the formula
// J^{-T}[H - Σ ∂N/∂x_k ∂²x_k] J^{-1}. Truncation error of central
// differences is O(step²·|∂⁴f|) with step ~ 2.4e-3 (gonum's default for
// Hessians), so the tolerance is 2e-5 relative to the size of the entries.
func checkMapFD(t *testing.T, name string, e, g *Element, coords []float64, rng *rand.Rand) {
	t.Helper()
	d := e.Dim()
	for range 4 {
		xi0 := randomPoint(rng, e.Cell)
		tab := e.SampleWith(g, onePoint(e.Cell, xi0))
		pg := tab.NewPointGeometry()
		if err := tab.Map(coords, 0, pg); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		phi := make([]float64, e.NumNodes())
		for a := 0; a < e.NumNodes(); a++ {
			f := func(x []float64) float64 {
				e.Eval(inverse(g, coords, x, xi0), phi)
				return phi[a]
			}
			grad := make([]float64, d)
			fd.Gradient(grad, f, pg.X, &fd.Settings{Formula: fd.Central})
			var H mat.SymDense
			fd.Hessian(&H, f, pg.X, &fd.Settings{Formula: fd.Central})
			scale := 1.0
			for k := 0; k < d*d; k++ {
				scale = max(scale, math.Abs(pg.Hess[a*d*d+k]))
			}
			for i := 0; i < d; i++ {
				if math.Abs(grad[i]-pg.Grad[a*d+i]) > 1e-6*max(1, math.Abs(grad[i])) {
					t.Errorf("%s node %d at ξ=%v: ∂φ/∂x%d = %v, fd %v", name, a, xi0, i, pg.Grad[a*d+i], grad[i])
				}
				for j := 0; j < d; j++ {
					if math.Abs(H.At(i, j)-pg.Hess[(a*d+i)*d+j]) > 2e-5*scale {
						t.Errorf("%s node %d at ξ=%v: H%d%d = %v, fd %v", name, a, xi0, i, j, pg.Hess[(a*d+i)*d+j], H.At(i, j))
					}
				}
			}
		}
	}
}

func TestMapCurvedFD(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	// Curved P2 triangle: unit triangle, midpoint of edge (1,2) pushed out by (0.15, 0.1).
	p2 := MustLagrange(cell.Triangle, 2)
	tri := nodeCoords(p2, func(x []float64) []float64 { return []float64{x[0], x[1]} })
	tri[3*2], tri[3*2+1] = 0.65, 0.6
	checkMapFD(t, "curved P2 triangle", p2, p2, tri, rng)
	// Q1 trapezoid: bilinear map with non-zero mixed second derivative.
	q1 := MustLagrange(cell.Quadrilateral, 1)
	checkMapFD(t, "Q1 trapezoid", q1, q1, []float64{0, 0, 4, 0, 3, 2, 0.5, 2.5}, rng)
	// Q2 field on the Q1 trapezoid geometry (SampleWith).
	checkMapFD(t, "Q2 on Q1 trapezoid", MustLagrange(cell.Quadrilateral, 2), q1, []float64{0, 0, 4, 0, 3, 2, 0.5, 2.5}, rng)
	// Curved P2 tetrahedron: edge (0,1) midpoint moved.
	p2t := MustLagrange(cell.Tetrahedron, 2)
	tet := nodeCoords(p2t, func(x []float64) []float64 { return []float64{2 * x[0], x[1] + 0.2*x[0], 1.5 * x[2]} })
	tet[4*3+1] -= 0.1
	checkMapFD(t, "curved P2 tetrahedron", p2t, p2t, tet, rng)
	// Distorted Q1 hexahedron.
	q1h := MustLagrange(cell.Hexahedron, 1)
	hex := nodeCoords(q1h, func(x []float64) []float64 { return []float64{x[0], x[1], x[2]} })
	hex[6*3] += 0.3
	hex[6*3+2] += 0.2
	hex[1*3+1] -= 0.2
	checkMapFD(t, "distorted Q1 hexahedron", q1h, q1h, hex, rng)
}

// Affine triangle: J = [v1-v0 | v2-v0] constant (hand computation), the
// physical Hessians of P1 vanish, and the P2 interpolants of x², xy, y²
// have the exact physical gradients and Hessians (P2 on an affine cell
// reproduces quadratics in x).
func TestMapAffineTriangle(t *testing.T) {
	v := []float64{1, 1, 3, 2, 1.5, 4}
	wantJ := []float64{2, 0.5, 1, 3} // [x1-x0, x2-x0; y1-y0, y2-y0]
	rule := quadrature.For(cell.Triangle, 4)
	p1 := MustLagrange(cell.Triangle, 1)
	tab := p1.Sample(rule)
	pg := tab.NewPointGeometry()
	area := 0.0
	for q := 0; q < rule.NumPoints(); q++ {
		if err := tab.Map(v, q, pg); err != nil {
			t.Fatal(err)
		}
		for k := range wantJ {
			if math.Abs(pg.J[k]-wantJ[k]) > 1e-15 {
				t.Errorf("q=%d J=%v want %v", q, pg.J, wantJ)
			}
		}
		if math.Abs(pg.DetJ-5.5) > 1e-14 {
			t.Errorf("det J %v want 5.5", pg.DetJ)
		}
		for _, h := range pg.Hess {
			if math.Abs(h) > 1e-15 {
				t.Errorf("P1 physical Hessian %v, want 0", pg.Hess)
				break
			}
		}
		area += pg.Weight
	}
	// Shoelace area of the triangle: det/2 = 2.75.
	if math.Abs(area-2.75) > 1e-14 {
		t.Errorf("area %v want 2.75", area)
	}

	p2 := MustLagrange(cell.Triangle, 2)
	coords := nodeCoords(p2, func(x []float64) []float64 {
		return []float64{v[0] + wantJ[0]*x[0] + wantJ[1]*x[1], v[1] + wantJ[2]*x[0] + wantJ[3]*x[1]}
	})
	tab2 := p2.Sample(rule)
	pg2 := tab2.NewPointGeometry()
	type quadFn struct {
		f    func(x, y float64) float64
		g    func(x, y float64) [2]float64
		hess [4]float64
	}
	fns := []quadFn{
		{func(x, y float64) float64 { return x * x }, func(x, y float64) [2]float64 { return [2]float64{2 * x, 0} }, [4]float64{2, 0, 0, 0}},
		{func(x, y float64) float64 { return x * y }, func(x, y float64) [2]float64 { return [2]float64{y, x} }, [4]float64{0, 1, 1, 0}},
		{func(x, y float64) float64 { return y * y }, func(x, y float64) [2]float64 { return [2]float64{0, 2 * y} }, [4]float64{0, 0, 0, 2}},
	}
	for q := 0; q < rule.NumPoints(); q++ {
		if err := tab2.Map(coords, q, pg2); err != nil {
			t.Fatal(err)
		}
		for fi, fn := range fns {
			var g [2]float64
			var h [4]float64
			for a := 0; a < 6; a++ {
				u := fn.f(coords[2*a], coords[2*a+1])
				for i := 0; i < 2; i++ {
					g[i] += u * pg2.Grad[a*2+i]
				}
				for k := 0; k < 4; k++ {
					h[k] += u * pg2.Hess[a*4+k]
				}
			}
			wg := fn.g(pg2.X[0], pg2.X[1])
			for i := 0; i < 2; i++ {
				if math.Abs(g[i]-wg[i]) > 1e-13 {
					t.Errorf("fn %d grad %v want %v", fi, g, wg)
				}
			}
			for k := 0; k < 4; k++ {
				if math.Abs(h[k]-fn.hess[k]) > 1e-13 {
					t.Errorf("fn %d hess %v want %v", fi, h, fn.hess)
				}
			}
		}
	}
}

// Metric tensor on a scaled and rotated cell, closed form derived by hand:
// x = c + R diag(s) ξ gives J = R diag(s), J^{-1} = diag(1/s) R^T, so
// G = J^{-T}J^{-1} = R diag(1/s²) R^T and g = J^{-T}(1,..,1) = R (1/s).
// Rectangle hx×hy on [-1,1]²: s = (hx/2, hy/2). Right triangle with legs
// hx, hy on the unit simplex: s = (hx, hy).
func TestMetricRotated(t *testing.T) {
	th := 0.7
	R := [4]float64{math.Cos(th), -math.Sin(th), math.Sin(th), math.Cos(th)}
	for _, tc := range []struct {
		c      cell.Type
		hx, hy float64
		sx, sy float64
	}{
		{cell.Quadrilateral, 0.3, 0.05, 0.15, 0.025},
		{cell.Triangle, 0.3, 0.05, 0.3, 0.05},
	} {
		e := MustLagrange(tc.c, 1)
		coords := nodeCoords(e, func(x []float64) []float64 {
			a, b := tc.sx*x[0], tc.sy*x[1]
			return []float64{2 + R[0]*a + R[1]*b, -1 + R[2]*a + R[3]*b}
		})
		rule := quadrature.For(tc.c, 1)
		tab := e.Sample(rule)
		pg := tab.NewPointGeometry()
		if err := tab.Map(coords, 0, pg); err != nil {
			t.Fatal(err)
		}
		is := [2]float64{1 / (tc.sx * tc.sx), 1 / (tc.sy * tc.sy)}
		for i := 0; i < 2; i++ {
			for j := 0; j < 2; j++ {
				want := R[i*2+0]*is[0]*R[j*2+0] + R[i*2+1]*is[1]*R[j*2+1]
				if math.Abs(pg.G[i*2+j]-want) > 1e-12*math.Abs(is[1]) {
					t.Errorf("%v G[%d%d] = %v want %v", tc.c, i, j, pg.G[i*2+j], want)
				}
			}
			wg := R[i*2]/tc.sx + R[i*2+1]/tc.sy
			if math.Abs(pg.GVec[i]-wg) > 1e-12*math.Abs(1/tc.sy) {
				t.Errorf("%v g[%d] = %v want %v", tc.c, i, pg.GVec[i], wg)
			}
		}
	}
}

// ∫1 over physical cells equals their measure. References: shoelace and
// prism formulas; tetrahedron volume |det|/6; Archimedes' quadrature of
// the parabola (segment area = 2/3 chord × height) for the curved P2
// triangle whose hypotenuse midpoint is pushed out by (δ,δ): height δ√2,
// chord √2, area 1/2 + 4δ/3.
func TestIntegrateOne(t *testing.T) {
	integrate := func(e, g *Element, coords []float64, degree int) float64 {
		tab := e.SampleWith(g, quadrature.For(e.Cell, degree))
		pg := tab.NewPointGeometry()
		s := 0.0
		for q := 0; q < tab.NumPoints(); q++ {
			if err := tab.Map(coords, q, pg); err != nil {
				t.Fatal(err)
			}
			s += pg.Weight
		}
		return s
	}
	delta := 0.2
	p2 := MustLagrange(cell.Triangle, 2)
	curved := nodeCoords(p2, func(x []float64) []float64 { return []float64{x[0], x[1]} })
	curved[6] += delta
	curved[7] += delta
	q1 := MustLagrange(cell.Quadrilateral, 1)
	h1 := MustLagrange(cell.Hexahedron, 1)
	trap := []float64{0, 0, 4, 0, 3, 2, 1, 2}
	prism := []float64{0, 0, 0, 4, 0, 0, 3, 2, 0, 1, 2, 0, 0, 0, 3, 4, 0, 3, 3, 2, 3, 1, 2, 3}
	for _, tc := range []struct {
		name   string
		e, g   *Element
		coords []float64
		deg    int
		want   float64
	}{
		{"interval", MustLagrange(cell.Segment, 1), MustLagrange(cell.Segment, 1), []float64{-1, 2.5}, 1, 3.5},
		{"curved P2 triangle", p2, p2, curved, 2, 0.5 + 4*delta/3},
		{"trapezoid Q1", q1, q1, trap, 2, 6},
		{"trapezoid Q2 field, Q1 map", MustLagrange(cell.Quadrilateral, 2), q1, trap, 2, 6},
		{"tetrahedron", MustLagrange(cell.Tetrahedron, 1), MustLagrange(cell.Tetrahedron, 1), []float64{0, 0, 0, 2, 0, 0, 0, 3, 0, 0, 0, 4}, 1, 4},
		{"trapezoidal prism Q1", h1, h1, prism, 3, 18},
	} {
		if got := integrate(tc.e, tc.g, tc.coords, tc.deg); math.Abs(got-tc.want) > 1e-13*tc.want {
			t.Errorf("%s: ∫1 = %.16g, want %.16g", tc.name, got, tc.want)
		}
	}
	if got := Measure(cell.Hexahedron, prism); math.Abs(got-18) > 1e-13 {
		t.Errorf("Measure(prism) = %v want 18", got)
	}
	if got := Measure(cell.Quadrilateral, trap); math.Abs(got-6) > 1e-14 {
		t.Errorf("Measure(trapezoid) = %v want 6", got)
	}
}

func TestMapInvertedAndAllocs(t *testing.T) {
	e := MustLagrange(cell.Triangle, 2)
	tab := e.SampleWith(MustLagrange(cell.Triangle, 1), quadrature.For(cell.Triangle, 4))
	pg := tab.NewPointGeometry()
	err := tab.Map([]float64{0, 0, 0, 1, 1, 0}, 0, pg) // clockwise
	var je *JacobianError
	if !errors.As(err, &je) || je.Det != -1 {
		t.Errorf("clockwise triangle: err = %v, want JacobianError with det -1", err)
	}
	v := []float64{0, 0, 1, 0, 0, 1}
	if a := testing.AllocsPerRun(100, func() {
		for q := 0; q < tab.NumPoints(); q++ {
			if tab.Map(v, q, pg) != nil {
				panic("map")
			}
		}
	}); a != 0 {
		t.Errorf("Map: %v allocations per run", a)
	}
	h := MustLagrange(cell.Hexahedron, 2)
	th := h.Sample(quadrature.For(cell.Hexahedron, 4))
	ph := th.NewPointGeometry()
	hc := h.RefNodes()
	if a := testing.AllocsPerRun(20, func() { _ = th.Map(hc, 3, ph) }); a != 0 {
		t.Errorf("Map Q2 hex: %v allocations per run", a)
	}
}

// NoHessians leaves Hess untouched and gives the same gradients.
func TestNoHessians(t *testing.T) {
	e := MustLagrange(cell.Quadrilateral, 2)
	coords := nodeCoords(e, func(x []float64) []float64 { return []float64{x[0] + 0.1*x[1]*x[1], 2 * x[1]} })
	a := e.Sample(quadrature.For(cell.Quadrilateral, 3))
	b := e.Sample(quadrature.For(cell.Quadrilateral, 3))
	b.NoHessians = true
	pa, pb := a.NewPointGeometry(), b.NewPointGeometry()
	for i := range pb.Hess {
		pb.Hess[i] = 7
	}
	for q := 0; q < a.NumPoints(); q++ {
		if a.Map(coords, q, pa) != nil || b.Map(coords, q, pb) != nil {
			t.Fatal("map failed")
		}
		for i := range pa.Grad {
			if pa.Grad[i] != pb.Grad[i] {
				t.Fatalf("gradients differ")
			}
		}
		for _, h := range pb.Hess {
			if h != 7 {
				t.Fatalf("Hess written with NoHessians")
			}
		}
	}
}
