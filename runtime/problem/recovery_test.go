package problem

import (
	"math"
	"testing"

	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/mesh"
)

// p1Numbering numbers one scalar and one vector P1 field on m, so the
// recovery is tested on the layout of a P1/P1 flow problem.
func p1Numbering(t *testing.T, m *mesh.Mesh) *dof.Numbering {
	t.Helper()
	e := element.MustLagrange(m.Cell, 1)
	dm, err := dof.New(m.Cell, m.Coords, m.Cells, []dof.FieldSpec{{Name: "vel", Element: e, Components: m.Dim}, {Name: "p", Element: e, Components: 1}})
	if err != nil {
		t.Fatal(err)
	}
	return dm
}

// interpolate sets every dof to fn(component, x) at its node.
func interpolate(dm *dof.Numbering, fn func(comp int, x []float64) float64) []float64 {
	x := make([]float64, dm.NumDofs)
	for k, f := range dm.Fields {
		xs := dm.NodeCoords(k)
		for n := 0; n < f.NumNodes; n++ {
			for c := 0; c < f.Components; c++ {
				x[dm.Global(k, c, n)] = fn(k*10+c, xs[n*dm.Dim:(n+1)*dm.Dim])
			}
		}
	}
	return x
}

// TestRecoverGradientLinear: the recovered gradient of a linear function
// is its gradient at every node, interior and boundary (the patch average
// of equal cell gradients; the boundary fit of equal values), to round-off
// (1e-12), on the three 2D triangle patterns, a graded interval and a
// tetrahedral mesh. A property of any consistent recovery (common
// practice, no source needed beyond the definition).
func TestRecoverGradientLinear(t *testing.T) {
	meshes := []*mesh.Mesh{
		mesh.Span1(0, 1, 7, 1.4),
		mesh.Span2(-0.5, 1, -0.5, 1.5, 5, 7, mesh.DiagonalUp),
		mesh.Span2(0, 2, 0, 1, 6, 4, mesh.DiagonalDown),
		mesh.Span2(0, 1, 0, 1, 5, 5, mesh.Quartered),
		mesh.Span3(0, 1, 0, 1, 0, 2, 3, 3, 4, mesh.Kuhn),
	}
	slope := func(comp, k int) float64 { return float64(comp+1) * float64(k+2) * math.Pow(-1, float64(k)) / 3 }
	for _, m := range meshes {
		dm := p1Numbering(t, m)
		d := m.Dim
		x := interpolate(dm, func(comp int, x []float64) float64 {
			v := 0.5 * float64(comp)
			for k := 0; k < d; k++ {
				v += slope(comp, k) * x[k]
			}
			return v
		})
		g, err := RecoverGradient(m, dm, x)
		if err != nil {
			t.Fatal(err)
		}
		worst := 0.0
		for k, f := range dm.Fields {
			for n := 0; n < f.NumNodes; n++ {
				for c := 0; c < f.Components; c++ {
					gd := dm.Global(k, c, n)
					for j := 0; j < d; j++ {
						worst = math.Max(worst, math.Abs(g[gd*d+j]-slope(k*10+c, j)))
					}
				}
			}
		}
		if worst > 1e-12 {
			t.Errorf("%v mesh: recovered gradient of a linear function off by %.3g", m.Cell, worst)
		}
	}
}

// TestRecoverGradientQuadratic: for a smooth function on uniform
// triangulations, the recovered gradient is second-order accurate at the
// nodes (the superconvergence of the patch average where patches are
// point-symmetric, Zienkiewicz & Zhu 1992, IJNME 33, recalled from memory;
// at boundary nodes through the least-squares fit to the interior ones).
// Checked on u = sin(2x) e^{y}: the largest nodal error, interior and
// boundary apart, must fall by a factor ≥ 3.6 per halving of h (order ≥
// 1.85) from 16² to 32² and 64² cells of the unit square ("tri" pattern),
// and the recovered Laplacian ½(∂_i g_i + ∂_i g_i) summed, measured in L²
// against the exact one, must fall at order ≥ 1 (measured 1.31, 1.21; one order is lost by
// differentiating the recovered field). The first-order patch average at
// boundary nodes (no fit) would leave the boundary error at order 1.
func TestRecoverGradientQuadratic(t *testing.T) {
	u := func(x []float64) float64 { return math.Sin(2*x[0]) * math.Exp(x[1]) }
	grad := func(x []float64) [2]float64 {
		return [2]float64{2 * math.Cos(2*x[0]) * math.Exp(x[1]), math.Sin(2*x[0]) * math.Exp(x[1])}
	}
	lap := func(x []float64) float64 { return -3 * math.Sin(2*x[0]) * math.Exp(x[1]) }
	var prevIn, prevBd, prevLap float64
	for _, n := range []int{16, 32, 64} {
		m := mesh.Span2(0, 1, 0, 1, n, n, mesh.DiagonalUp)
		dm := p1Numbering(t, m)
		x := interpolate(dm, func(_ int, x []float64) float64 { return u(x) })
		g, err := RecoverGradient(m, dm, x)
		if err != nil {
			t.Fatal(err)
		}
		xs := dm.NodeCoords(1)
		errIn, errBd := 0.0, 0.0
		for nd := 0; nd < dm.Fields[1].NumNodes; nd++ {
			p := xs[2*nd : 2*nd+2]
			gd := dm.Global(1, 0, nd)
			ex := grad(p)
			e := math.Max(math.Abs(g[2*gd]-ex[0]), math.Abs(g[2*gd+1]-ex[1]))
			if p[0] < 1e-12 || p[0] > 1-1e-12 || p[1] < 1e-12 || p[1] > 1-1e-12 {
				errBd = math.Max(errBd, e)
			} else {
				errIn = math.Max(errIn, e)
			}
		}
		// The recovered Laplacian per cell, against the exact one at the
		// centroid, in the cell-mass-weighted L² norm.
		el := 0.0
		for c := 0; c < m.NumCells(); c++ {
			vs := m.Cells[3*c : 3*c+3]
			var J, Ji [4]float64
			for i := 0; i < 2; i++ {
				for j := 0; j < 2; j++ {
					J[i*2+j] = m.Coords[int(vs[j+1])*2+i] - m.Coords[int(vs[0])*2+i]
				}
			}
			det := element.Invert(2, J[:], Ji[:])
			nodes := dm.CellNodes(1, c)
			l := 0.0
			for j := 0; j < 2; j++ { // ∂_j g_j
				g0 := g[dm.Global(1, 0, int(nodes[0]))*2+j]
				for a := 1; a < 3; a++ {
					l += (g[dm.Global(1, 0, int(nodes[a]))*2+j] - g0) * Ji[(a-1)*2+j]
				}
			}
			cx := []float64{(m.Coords[2*vs[0]] + m.Coords[2*vs[1]] + m.Coords[2*vs[2]]) / 3, (m.Coords[2*vs[0]+1] + m.Coords[2*vs[1]+1] + m.Coords[2*vs[2]+1]) / 3}
			el += math.Abs(det) / 2 * (l - lap(cx)) * (l - lap(cx))
		}
		el = math.Sqrt(el)
		t.Logf("%d²: nodal gradient error interior %.3e, boundary %.3e; Laplacian L² error %.3e", n, errIn, errBd, el)
		if prevIn > 0 {
			oi, ob, ol := math.Log2(prevIn/errIn), math.Log2(prevBd/errBd), math.Log2(prevLap/el)
			t.Logf("orders: interior %.2f, boundary %.2f, Laplacian %.2f", oi, ob, ol)
			if oi < 1.85 || ob < 1.85 || ol < 1 {
				t.Errorf("%d²: orders interior %.2f, boundary %.2f (want ≥ 1.85), Laplacian %.2f (want ≥ 1)", n, oi, ob, ol)
			}
		}
		prevIn, prevBd, prevLap = errIn, errBd, el
	}
}
