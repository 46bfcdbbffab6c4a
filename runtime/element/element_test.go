package element

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/quadrature"
	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

func allElements(t *testing.T) []*Element {
	var es []*Element
	for _, c := range cell.All {
		for _, k := range []int{1, 2} {
			e, err := Lagrange(c, k)
			if err != nil {
				t.Fatal(err)
			}
			es = append(es, e)
		}
	}
	return es
}

// randomPoint returns a point inside the reference cell.
func randomPoint(rng *rand.Rand, c cell.Type) []float64 {
	d := c.Dim()
	x := make([]float64, d)
	for {
		s := 0.0
		for k := range x {
			if c.IsSimplex() {
				x[k] = rng.Float64()
			} else {
				x[k] = 2*rng.Float64() - 1
			}
			s += x[k]
		}
		if !c.IsSimplex() || s <= 1 {
			return x
		}
	}
}

// Expected node counts: dim P_k = C(k+d, d), dim Q_k = (k+1)^d (Ciarlet 1978, ch. 2).
func TestNodeCounts(t *testing.T) {
	want := map[cell.Type][2]int{
		cell.Segment: {2, 3}, cell.Triangle: {3, 6}, cell.Tetrahedron: {4, 10},
		cell.Quadrilateral: {4, 9}, cell.Hexahedron: {8, 27},
	}
	for _, e := range allElements(t) {
		if got := e.NumNodes(); got != want[e.Cell][e.Degree-1] {
			t.Errorf("%v P/Q%d: %d nodes, want %d", e.Cell, e.Degree, got, want[e.Cell][e.Degree-1])
		}
	}
	if _, err := Lagrange(cell.Triangle, 3); err == nil {
		t.Error("Lagrange(triangle, 3): no error")
	}
}

// Partition of unity: Lagrange spaces contain the constants, so Σφ=1 and
// the derivatives of the sum vanish (Ciarlet 1978). Tolerance 1e-13:
// rounding of a sum of at most 27 O(1) terms.
func TestPartitionOfUnity(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, e := range allElements(t) {
		n, d := e.NumNodes(), e.Dim()
		phi, g, h := make([]float64, n), make([]float64, n*d), make([]float64, n*d*d)
		for range 20 {
			xi := randomPoint(rng, e.Cell)
			e.Eval(xi, phi)
			e.EvalGrad(xi, g)
			e.EvalHess(xi, h)
			s := 0.0
			for _, v := range phi {
				s += v
			}
			if math.Abs(s-1) > 1e-13 {
				t.Errorf("%v Q/P%d at %v: Σφ = %v", e.Cell, e.Degree, xi, s)
			}
			for k := 0; k < d; k++ {
				s := 0.0
				for i := 0; i < n; i++ {
					s += g[i*d+k]
				}
				if math.Abs(s) > 1e-13 {
					t.Errorf("%v %d: Σ∂φ/∂ξ_%d = %v", e.Cell, e.Degree, k, s)
				}
				for l := 0; l < d; l++ {
					s := 0.0
					for i := 0; i < n; i++ {
						s += h[(i*d+k)*d+l]
					}
					if math.Abs(s) > 1e-12 {
						t.Errorf("%v %d: ΣHess_%d%d = %v", e.Cell, e.Degree, k, l, s)
					}
				}
			}
		}
	}
}

// Kronecker property φ_i(x_j) = δ_ij of a nodal basis.
func TestKronecker(t *testing.T) {
	for _, e := range allElements(t) {
		n, d := e.NumNodes(), e.Dim()
		nodes := e.RefNodes()
		phi := make([]float64, n)
		for j := 0; j < n; j++ {
			e.Eval(nodes[j*d:(j+1)*d], phi)
			for i := 0; i < n; i++ {
				want := 0.0
				if i == j {
					want = 1
				}
				if math.Abs(phi[i]-want) > 1e-15 {
					t.Errorf("%v %d: φ_%d(x_%d) = %v", e.Cell, e.Degree, i, j, phi[i])
				}
			}
		}
	}
}

// monomial value and derivatives of Π x_k^{p_k}, computed analytically.
func monomial(p []int, x []float64) (v float64, g, h []float64) {
	d := len(p)
	g, h = make([]float64, d), make([]float64, d*d)
	pow := func(x float64, n int) float64 {
		if n < 0 {
			return 0
		}
		return math.Pow(x, float64(n))
	}
	v = 1
	for k := range p {
		v *= pow(x[k], p[k])
	}
	for k := 0; k < d; k++ {
		gk := float64(p[k])
		for m := 0; m < d; m++ {
			if m == k {
				gk *= pow(x[m], p[m]-1)
			} else {
				gk *= pow(x[m], p[m])
			}
		}
		g[k] = gk
		for l := 0; l < d; l++ {
			c := 1.0
			for m := 0; m < d; m++ {
				e := p[m]
				if m == k {
					c *= float64(e)
					e--
				}
				if m == l {
					c *= float64(e)
					e--
				}
				c *= pow(x[m], e)
			}
			h[k*d+l] = c
		}
	}
	return v, g, h
}

// spaceExponents lists the monomials spanning P_k (total degree <= k) or
// Q_k (degree <= k in each variable).
func spaceExponents(e *Element) [][]int {
	d, k := e.Dim(), e.Degree
	var out [][]int
	var rec func(p []int)
	rec = func(p []int) {
		if len(p) == d {
			s := 0
			for _, x := range p {
				s += x
			}
			if !e.Cell.IsSimplex() || s <= k {
				out = append(out, append([]int(nil), p...))
			}
			return
		}
		for a := 0; a <= k; a++ {
			rec(append(p, a))
		}
	}
	rec(nil)
	return out
}

// P_k / Q_k reproduce every polynomial of their space: the nodal
// interpolant of each monomial equals it, with its gradient and Hessian, at
// random points (analytic derivatives as reference). Tolerance 1e-12.
func TestPolynomialReproduction(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, e := range allElements(t) {
		n, d := e.NumNodes(), e.Dim()
		nodes := e.RefNodes()
		phi, g, h := make([]float64, n), make([]float64, n*d), make([]float64, n*d*d)
		for _, p := range spaceExponents(e) {
			u := make([]float64, n)
			for j := 0; j < n; j++ {
				u[j], _, _ = monomial(p, nodes[j*d:(j+1)*d])
			}
			for range 5 {
				xi := randomPoint(rng, e.Cell)
				e.Eval(xi, phi)
				e.EvalGrad(xi, g)
				e.EvalHess(xi, h)
				wv, wg, wh := monomial(p, xi)
				v := 0.0
				for i := 0; i < n; i++ {
					v += u[i] * phi[i]
				}
				if math.Abs(v-wv) > 1e-12 {
					t.Errorf("%v %d monomial %v: value %v want %v", e.Cell, e.Degree, p, v, wv)
				}
				for k := 0; k < d; k++ {
					s := 0.0
					for i := 0; i < n; i++ {
						s += u[i] * g[i*d+k]
					}
					if math.Abs(s-wg[k]) > 1e-12 {
						t.Errorf("%v %d monomial %v: d/dξ%d %v want %v", e.Cell, e.Degree, p, k, s, wg[k])
					}
					for l := 0; l < d; l++ {
						s := 0.0
						for i := 0; i < n; i++ {
							s += u[i] * h[(i*d+k)*d+l]
						}
						if math.Abs(s-wh[k*d+l]) > 1e-11 {
							t.Errorf("%v %d monomial %v: d2/dξ%d dξ%d %v want %v", e.Cell, e.Degree, p, k, l, s, wh[k*d+l])
						}
					}
				}
			}
		}
	}
}

// Gradients and Hessians against gonum's central finite differences
// (independent of the analytic formulas). Central differences of
// polynomials of degree <= 3 per variable (Q2 products) are exact up to
// rounding: error ~ eps/step ~ 1e-10 for gradients, eps/step² ~ 1e-10 for
// the Hessian with step sqrt(Central.Step); tolerance 1e-7.
func TestDerivativesFiniteDifferences(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, e := range allElements(t) {
		n, d := e.NumNodes(), e.Dim()
		phi, g, h := make([]float64, n), make([]float64, n*d), make([]float64, n*d*d)
		grad := make([]float64, d)
		for range 3 {
			xi := randomPoint(rng, e.Cell)
			e.EvalGrad(xi, g)
			e.EvalHess(xi, h)
			for i := 0; i < n; i++ {
				f := func(x []float64) float64 { e.Eval(x, phi); return phi[i] }
				fd.Gradient(grad, f, xi, &fd.Settings{Formula: fd.Central})
				var H mat.SymDense
				fd.Hessian(&H, f, xi, &fd.Settings{Formula: fd.Central})
				for k := 0; k < d; k++ {
					if math.Abs(grad[k]-g[i*d+k]) > 1e-7 {
						t.Errorf("%v %d node %d: ∂/∂ξ%d %v, fd %v", e.Cell, e.Degree, i, k, g[i*d+k], grad[k])
					}
					for l := 0; l < d; l++ {
						if math.Abs(H.At(k, l)-h[(i*d+k)*d+l]) > 1e-7 {
							t.Errorf("%v %d node %d: H%d%d %v, fd %v", e.Cell, e.Degree, i, k, l, h[(i*d+k)*d+l], H.At(k, l))
						}
					}
				}
			}
		}
	}
}

// VTK parametric node coordinates, from the VTK file-format documentation
// (cell figures) and the reference implementation (vtkQuadraticTriangle,
// vtkQuadraticTetra, vtkBiQuadraticQuad, vtkTriQuadraticHexahedron),
// on [0,1]^d; the hexahedron face-centre order is recalled from memory.
// Checking that our node VTKOrder[i] sits at VTK's node i proves the
// permutations.
func TestVTKOrder(t *testing.T) {
	vtk := map[cell.Type][]float64{
		cell.Segment:  {0, 1, 0.5},
		cell.Triangle: {0, 0, 1, 0, 0, 1, .5, 0, .5, .5, 0, .5},
		cell.Tetrahedron: {0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 1,
			.5, 0, 0, .5, .5, 0, 0, .5, 0, 0, 0, .5, .5, 0, .5, 0, .5, .5},
		cell.Quadrilateral: {0, 0, 1, 0, 1, 1, 0, 1, .5, 0, 1, .5, .5, 1, 0, .5, .5, .5},
		cell.Hexahedron: {0, 0, 0, 1, 0, 0, 1, 1, 0, 0, 1, 0, 0, 0, 1, 1, 0, 1, 1, 1, 1, 0, 1, 1,
			.5, 0, 0, 1, .5, 0, .5, 1, 0, 0, .5, 0, .5, 0, 1, 1, .5, 1, .5, 1, 1, 0, .5, 1,
			0, 0, .5, 1, 0, .5, 1, 1, .5, 0, 1, .5,
			0, .5, .5, 1, .5, .5, .5, 0, .5, .5, 1, .5, .5, .5, 0, .5, .5, 1, .5, .5, .5},
	}
	for _, e := range allElements(t) {
		d := e.Dim()
		nodes := e.RefNodes()
		perm := cell.VTKOrder(e.Cell, e.Degree)
		want := vtk[e.Cell]
		for i, our := range perm {
			for k := 0; k < d; k++ {
				w := want[i*d+k]
				if !e.Cell.IsSimplex() {
					w = 2*w - 1 // [0,1] -> [-1,1]
				}
				if nodes[our*d+k] != w {
					t.Errorf("%v degree %d: VTK node %d is our %d at %v, want coord %d = %v", e.Cell, e.Degree, i, our, nodes[our*d:(our+1)*d], k, w)
				}
			}
		}
	}
}

// Nodes on a facet satisfy the facet's plane equation (from the reference
// vertices), and their count is the node count of the facet element.
func TestFacetAndEdgeNodes(t *testing.T) {
	for _, e := range allElements(t) {
		d := e.Dim()
		nodes := e.RefNodes()
		verts := e.Cell.Vertices()
		for f, fv := range e.Cell.Facets() {
			ns := e.FacetNodes(f)
			want := 1
			if d > 1 {
				fe := MustLagrange(e.Cell.FacetType(), e.Degree)
				want = fe.NumNodes()
			}
			if len(ns) != want {
				t.Errorf("%v %d facet %d: %d nodes, want %d", e.Cell, e.Degree, f, len(ns), want)
			}
			// Every node on the facet is an affine (convex) combination of
			// the facet vertices: check by the cell's facet hyperplane.
			// Normal from the reference facet: for simplex facet f, the
			// barycentric λ_f vanishes; for tensor facets one coordinate
			// is ±1.
			for _, i := range ns {
				x := nodes[i*d : (i+1)*d]
				if e.Cell.IsSimplex() {
					lam := 1.0
					for k := 0; k < d; k++ {
						lam -= x[k]
					}
					var l float64
					if f == 0 {
						l = lam
					} else {
						l = x[f-1]
					}
					if math.Abs(l) > 1e-15 {
						t.Errorf("%v %d facet %d: node %d at %v off the facet", e.Cell, e.Degree, f, i, x)
					}
				} else {
					on := false
					for k := 0; k < d; k++ {
						same := true
						for _, v := range fv {
							same = same && verts[v*d+k] == x[k]
						}
						on = on || same
					}
					if !on {
						t.Errorf("%v %d facet %d: node %d at %v off the facet", e.Cell, e.Degree, f, i, x)
					}
				}
			}
		}
		// Entities: one node per vertex, per edge (degree 2); edge nodes are
		// the two vertices and the midpoint.
		for ed, ev := range e.Cell.Edges() {
			ns := e.EdgeNodes(ed)
			if len(ns) != e.Degree+1 {
				t.Errorf("%v %d edge %d: %d nodes", e.Cell, e.Degree, ed, len(ns))
			}
			if e.Degree == 2 {
				mid := ns[2]
				for k := 0; k < d; k++ {
					m := 0.5 * (verts[ev[0]*d+k] + verts[ev[1]*d+k])
					if nodes[mid*d+k] != m {
						t.Errorf("%v edge %d: node %d not the midpoint", e.Cell, ed, mid)
					}
				}
			}
		}
		counts := map[EntityKind]int{}
		for i := 0; i < e.NumNodes(); i++ {
			counts[e.NodeEntity(i).Kind]++
		}
		if counts[Vertex] != e.Cell.NumVertices() {
			t.Errorf("%v %d: %d vertex nodes", e.Cell, e.Degree, counts[Vertex])
		}
		if e.Degree == 2 && d > 1 && counts[Edge] != e.Cell.NumEdges() {
			t.Errorf("%v %d: %d edge nodes", e.Cell, e.Degree, counts[Edge])
		}
	}
}

func TestEvalNoAlloc(t *testing.T) {
	e := MustLagrange(cell.Hexahedron, 2)
	xi := []float64{0.1, 0.2, -0.3}
	phi, g, h := make([]float64, 27), make([]float64, 81), make([]float64, 243)
	if a := testing.AllocsPerRun(50, func() { e.Eval(xi, phi); e.EvalGrad(xi, g); e.EvalHess(xi, h) }); a != 0 {
		t.Errorf("Eval*: %v allocations", a)
	}
	_ = scalar.EqualWithinAbsOrRel
	_ = quadrature.For
}
