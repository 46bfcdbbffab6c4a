package interp

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/kernel"
)

func elementMatrix(t *testing.T, form *ir.LoweredForm, c cell.Type, coords []float64) ([]float64, []float64, int) {
	t.Helper()
	k, err := NewKernel(form, c, Options{})
	if err != nil {
		t.Fatal(err)
	}
	n := k.Layout().N()
	A, b := make([]float64, n*n), make([]float64, n)
	k.Cell(&kernel.CellInput{Coords: coords}, A, b)
	return A, b, n
}

func checkMatrix(t *testing.T, name string, got, want []float64, tol float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d entries, want %d", name, len(got), len(want))
	}
	for i := range want {
		if math.Abs(got[i]-want[i]) > tol {
			t.Errorf("%s: entry %d = %.16g, want %.16g", name, i, got[i], want[i])
		}
	}
}

// P1 on the reference right triangle: stiffness
// [[1,-1/2,-1/2],[-1/2,1/2,0],[-1/2,0,1/2]] and mass (area/12)[[2,1,1],...]
// (Hughes, The Finite Element Method, 1987, §3; any FE text). Tolerance
// 1e-15: sums of a few exactly representable products.
func TestP1TriangleTextbook(t *testing.T) {
	tri := []float64{0, 0, 1, 0, 0, 1}
	A, _, _ := elementMatrix(t, scalarForm(2, ir.P1, laplaceTerms(2), nil), cell.Triangle, tri)
	checkMatrix(t, "stiffness", A, []float64{1, -0.5, -0.5, -0.5, 0.5, 0, -0.5, 0, 0.5}, 1e-15)
	mass := scalarForm(2, ir.P1, []ir.Term{term(num(1, 1), fd(uField, 0), fd(vField, 0))}, nil)
	M, _, _ := elementMatrix(t, mass, cell.Triangle, tri)
	a := 0.5 / 12
	checkMatrix(t, "mass", M, []float64{2 * a, a, a, a, 2 * a, a, a, a, 2 * a}, 1e-15)
}

// 1D P1 on a cell of length h: diffusion (k/h)[[1,-1],[-1,1]] and
// advection ∫ a u' v = (a/2)[[-1,1],[-1,1]] (rows = test functions)
// (Hughes 1987, §1.10 and Brooks & Hughes 1982 §3). Tolerance 1e-14
// relative to the entries' size.
func TestP1IntervalTextbook(t *testing.T) {
	x0, h, k, a := 0.3, 0.125, 0.7, 2.5
	form := scalarForm(1, ir.P1, []ir.Term{
		term(flt(k), fd(uField, 0, 1), fd(vField, 0, 1)),
	}, nil)
	A, _, _ := elementMatrix(t, form, cell.Segment, []float64{x0, x0 + h})
	checkMatrix(t, "diffusion", A, []float64{k / h, -k / h, -k / h, k / h}, 1e-14*k/h)
	form = scalarForm(1, ir.P1, []ir.Term{term(flt(a), fd(uField, 0, 1), fd(vField, 0))}, nil)
	A, _, _ = elementMatrix(t, form, cell.Segment, []float64{x0, x0 + h})
	checkMatrix(t, "advection", A, []float64{-a / 2, a / 2, -a / 2, a / 2}, 1e-14*a)
}

// Q1 Laplacian on the unit square, vertices counter-clockwise from the
// origin: (1/6)[[4,-1,-2,-1],[-1,4,-1,-2],[-2,-1,4,-1],[-1,-2,-1,4]] (the
// common closed form, e.g. Braess, Finite Elements, 2007, §II.8).
func TestQ1SquareTextbook(t *testing.T) {
	sq := []float64{0, 0, 1, 0, 1, 1, 0, 1}
	A, _, _ := elementMatrix(t, scalarForm(2, ir.Q1, laplaceTerms(2), nil), cell.Quadrilateral, sq)
	w := []float64{4, -1, -2, -1, -1, 4, -1, -2, -2, -1, 4, -1, -1, -2, -1, 4}
	for i := range w {
		w[i] /= 6
	}
	checkMatrix(t, "Q1 stiffness", A, w, 1e-15)
}

// Row sums of a stiffness matrix vanish (constants are in the space and
// have zero gradient), on distorted cells of every type and degree. Also
// symmetric. Tolerance 1e-12 relative to the largest entry.
func TestStiffnessRowSumsZero(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	jitter := func(v []float64, s float64) []float64 {
		out := append([]float64(nil), v...)
		for i := range out {
			out[i] += s * (rng.Float64() - 0.5)
		}
		return out
	}
	for _, c := range cell.All {
		for deg := 1; deg <= 2; deg++ {
			name := "P"
			if !c.IsSimplex() {
				name = "Q"
			}
			name += string(rune('0' + deg))
			coords := jitter(c.Vertices(), 0.2)
			A, _, n := elementMatrix(t, scalarForm(c.Dim(), mustElement(name), laplaceTerms(c.Dim()), nil), c, coords)
			amax := 0.0
			for _, v := range A {
				amax = math.Max(amax, math.Abs(v))
			}
			for i := 0; i < n; i++ {
				s := 0.0
				for j := 0; j < n; j++ {
					s += A[i*n+j]
					if math.Abs(A[i*n+j]-A[j*n+i]) > 1e-12*amax {
						t.Errorf("%v %s: not symmetric at (%d,%d)", c, name, i, j)
					}
				}
				if math.Abs(s) > 1e-12*amax {
					t.Errorf("%v %s: row %d sums to %g", c, name, i, s)
				}
			}
		}
	}
}

// The P2 vertex basis functions integrate to zero over a triangle and the
// edge ones to area/3 (Zienkiewicz, Taylor & Zhu 2005, §6; a standard
// fact). With the Hessian term ∫ Δu v and u the P2 interpolant of
// x² + y² (Δu = 4 exactly), A·u must be 4 × those integrals. This checks
// the physical second derivatives on an affine cell.
func TestP2HessianTerm(t *testing.T) {
	tri := []float64{0.1, 0.2, 1.3, 0.1, 0.4, 0.9}
	area := 0.5 * math.Abs((1.3-0.1)*(0.9-0.2)-(0.4-0.1)*(0.1-0.2))
	form := scalarForm(2, ir.P2, []ir.Term{
		term(num(1, 1), fd(uField, 0, 2), fd(vField, 0)),
		term(num(1, 1), fd(uField, 0, 0, 2), fd(vField, 0)),
	}, nil)
	A, _, n := elementMatrix(t, form, cell.Triangle, tri)
	// P2 nodes: vertices, then midpoints of edges (1,2), (2,0), (0,1).
	x := []float64{tri[0], tri[2], tri[4], (tri[2] + tri[4]) / 2, (tri[4] + tri[0]) / 2, (tri[0] + tri[2]) / 2}
	y := []float64{tri[1], tri[3], tri[5], (tri[3] + tri[5]) / 2, (tri[5] + tri[1]) / 2, (tri[1] + tri[3]) / 2}
	for i := 0; i < n; i++ {
		s := 0.0
		for j := 0; j < n; j++ {
			s += A[i*n+j] * (x[j]*x[j] + y[j]*y[j])
		}
		want := 0.0
		if i >= 3 {
			want = 4 * area / 3
		}
		if math.Abs(s-want) > 1e-13 {
			t.Errorf("row %d: %g, want %g", i, s, want)
		}
	}
}

// Facet integrals on the reference triangle's facet 0 (vertices 1, 2: the
// hypotenuse, length √2, outward normal (1,1)/√2): ∫ n_x v_i = (1/√2)(√2/2)
// = 1/2 for its two P1 nodes and 0 for vertex 0; ∫ u v gives the 1D mass
// matrix (L/6)[[2,1],[1,2]] on the facet nodes (Hughes 1987).
func TestFacetKernelTriangle(t *testing.T) {
	form := &ir.LoweredForm{
		Dim: 2, Unknowns: []ir.LoweredUnknown{{Name: "u", Element: ir.P1}},
		Integrals: []ir.Integral{{
			Domain:   ir.Domain{Side: "outlet"},
			Bilinear: []ir.Term{term(num(1, 1), fd(uField, 0), fd(vField, 0))},
			Linear:   []ir.Term{term(&ir.CellQ{Q: ir.Normal, I: 0}, nil, fd(vField, 0))},
		}},
	}
	fks, err := NewFacetKernels(form, cell.Triangle, Options{})
	if err != nil || len(fks) != 1 || fks[0].Side() != "outlet" {
		t.Fatal(fks, err)
	}
	A, b := make([]float64, 9), make([]float64, 3)
	fks[0].Facet(&kernel.FacetInput{CellInput: kernel.CellInput{Coords: []float64{0, 0, 1, 0, 0, 1}}, Facet: 0}, A, b)
	checkMatrix(t, "facet b", b, []float64{0, 0.5, 0.5}, 1e-15)
	L := math.Sqrt2
	checkMatrix(t, "facet mass", A, []float64{0, 0, 0, 0, L / 3, L / 6, 0, L / 6, L / 3}, 1e-15)
}

// Outward normals and facet measures on a hexahedron [0,2]×[0,1]×[0,3]:
// ∫_facet n_k v summed over the nodes is n_k × area, with the face areas
// 3, 3, 6, 6, 2, 2 for x-, x+, y-, y+, z-, z+ (runtime/cell facet order).
func TestFacetKernelHexNormals(t *testing.T) {
	form := &ir.LoweredForm{Dim: 3, Unknowns: []ir.LoweredUnknown{{Name: "u", Element: ir.Q1}}}
	for k := 0; k < 3; k++ {
		form.Integrals = append(form.Integrals, ir.Integral{
			Domain: ir.Domain{Side: "s"},
			Linear: []ir.Term{term(mul(num(int64(k+1), 1), &ir.CellQ{Q: ir.Normal, I: k}), nil, fd(vField, 0))},
		})
	}
	fks, err := NewFacetKernels(form, cell.Hexahedron, Options{})
	if err != nil {
		t.Fatal(err)
	}
	box := append([]float64(nil), cell.Hexahedron.Vertices()...)
	for i := 0; i < 8; i++ {
		box[3*i] = box[3*i] + 1
		box[3*i+1] = (box[3*i+1] + 1) / 2
		box[3*i+2] = 1.5 * (box[3*i+2] + 1)
	}
	want := []float64{-1 * 3, 1 * 3, -2 * 6, 2 * 6, -3 * 2, 3 * 2}
	A, b := make([]float64, 64), make([]float64, 8)
	for f := 0; f < 6; f++ {
		fks[0].Facet(&kernel.FacetInput{CellInput: kernel.CellInput{Coords: box}, Facet: f}, A, b)
		s := 0.0
		for _, v := range b {
			s += v
		}
		if math.Abs(s-want[f]) > 1e-13 {
			t.Errorf("facet %d: Σ∫ k·n_k v = %g, want %g", f, s, want[f])
		}
	}
}

func TestKernelCellDoesNotAllocate(t *testing.T) {
	// SUPG-like coefficients: cell-constant τ with coth, and a varying one.
	h := &ir.CellQ{Q: ir.Diameter}
	alpha := mul(num(5, 1), h)
	tau := mul(h, add(call(ir.Coth, alpha), mul(num(-1, 1), pow(alpha, num(-1, 1)))))
	bil := append(laplaceTerms(2),
		term(tau, fd(uField, 0, 1), fd(vField, 0, 1)),
		term(call(ir.Sin, coord(0)), fd(uField, 0, 0, 1), fd(vField, 0)))
	k, err := NewKernel(scalarForm(2, ir.P2, bil, []ir.Term{term(coord(1), nil, fd(vField, 0))}), cell.Triangle, Options{})
	if err != nil {
		t.Fatal(err)
	}
	n := k.Layout().N()
	A, b := make([]float64, n*n), make([]float64, n)
	in := &kernel.CellInput{Coords: []float64{0, 0, 1, 0, 0, 1}}
	if a := testing.AllocsPerRun(100, func() { k.Cell(in, A, b) }); a != 0 {
		t.Errorf("Kernel.Cell allocates %v times per call", a)
	}
}

func TestInvertedCellGivesNaN(t *testing.T) {
	A, b, _ := elementMatrix(t, scalarForm(2, ir.P1, laplaceTerms(2), nil), cell.Triangle, []float64{0, 0, 0, 1, 1, 0})
	if !math.IsNaN(A[0]) || !math.IsNaN(b[0]) {
		t.Errorf("inverted cell: A[0] = %v, b[0] = %v, want NaN", A[0], b[0])
	}
}

func TestKernelErrors(t *testing.T) {
	if _, err := NewKernel(scalarForm(2, ir.P1, laplaceTerms(2), nil), cell.Quadrilateral, Options{}); err == nil {
		t.Error("P1 on quadrilaterals accepted")
	}
	if _, err := NewKernel(scalarForm(2, ir.Element{Family: 9, Degree: 7}, laplaceTerms(2), nil), cell.Triangle, Options{}); err == nil {
		t.Error("unknown element accepted")
	}
	bad := []ir.Term{term(num(1, 1), fd(uField, 0, 3), fd(vField, 0))}
	if _, err := NewKernel(scalarForm(1, ir.P2, bad, nil), cell.Segment, Options{}); err == nil {
		t.Error("third derivative accepted")
	}
	swapped := []ir.Term{term(num(1, 1), fd(vField, 0), fd(uField, 0))}
	if _, err := NewKernel(scalarForm(1, ir.P1, swapped, nil), cell.Segment, Options{}); err == nil {
		t.Error("test function in the trial slot accepted")
	}
}

var sink float64

func benchKernel(b *testing.B, elem ir.Element, c cell.Type) {
	h := &ir.CellQ{Q: ir.Diameter}
	alpha := mul(num(50, 1), h)
	tau := mul(h, num(1, 2), add(call(ir.Coth, alpha), mul(num(-1, 1), pow(alpha, num(-1, 1)))))
	a := []ir.Expr{num(1, 1), num(1, 2)}
	f := add(num(1, 1), mul(coord(0), coord(1)))
	var bil, lin []ir.Term
	for i := 0; i < 2; i++ {
		di := []uint8{0, 0}
		di[i] = 1
		bil = append(bil, term(num(1, 100), fd(uField, 0, di...), fd(vField, 0, di...)), term(a[i], fd(uField, 0, di...), fd(vField, 0)))
		for j := 0; j < 2; j++ {
			dj := []uint8{0, 0}
			dj[j] = 1
			bil = append(bil, term(mul(tau, a[i], a[j]), fd(uField, 0, dj...), fd(vField, 0, di...)))
		}
		lin = append(lin, term(mul(tau, f, a[i]), nil, fd(vField, 0, di...)))
	}
	lin = append(lin, term(f, nil, fd(vField, 0)))
	k, err := NewKernel(scalarForm(2, elem, bil, lin), c, Options{})
	if err != nil {
		b.Fatal(err)
	}
	n := k.Layout().N()
	A, rhs := make([]float64, n*n), make([]float64, n)
	in := &kernel.CellInput{Coords: []float64{0, 0, 0.01, 0, 0, 0.01}}
	if c == cell.Quadrilateral {
		in.Coords = []float64{0, 0, 0.01, 0, 0.01, 0.01, 0, 0.01}
	}
	for b.Loop() {
		k.Cell(in, A, rhs)
	}
	sink = A[0]
}

func BenchmarkKernelSUPGP1(b *testing.B) { benchKernel(b, ir.P1, cell.Triangle) }
func BenchmarkKernelSUPGP2(b *testing.B) { benchKernel(b, ir.P2, cell.Triangle) }
func BenchmarkKernelSUPGQ1(b *testing.B) { benchKernel(b, ir.Q1, cell.Quadrilateral) }

// Non-affine Hessians: under a bilinear (trilinear) map, x_k² is a
// polynomial of degree ≤ 2 in each reference variable, so the Q2 space
// contains Σ_k x_k² exactly and its Laplacian is 2·dim everywhere. Hence
// Σ_j (∫ Δφ_j φ_i) u_j = 2·dim ∫ φ_i for the nodal values u_j of Σ x_k²
// (an identity of the exact space). Dropping the curvature term
// −Σ_k (∂φ/∂x_k) ∂²x_k/∂ξ² of the map breaks it. Same rule on both sides:
// tolerance 1e-12 relative.
func TestQ2NonAffineHessian(t *testing.T) {
	for _, c := range []cell.Type{cell.Quadrilateral, cell.Hexahedron} {
		d := c.Dim()
		var bil []ir.Term
		for k := 0; k < d; k++ {
			dd := make([]uint8, 3)
			dd[k] = 2
			bil = append(bil, term(num(1, 1), fd(uField, 0, dd...), fd(vField, 0)))
		}
		form := scalarForm(d, ir.Q2, bil, []ir.Term{term(num(int64(2*d), 1), nil, fd(vField, 0))})
		rng := rand.New(rand.NewPCG(3, 4))
		coords := append([]float64(nil), c.Vertices()...)
		for i := range coords {
			coords[i] += 0.3 * (rng.Float64() - 0.5)
		}
		A, b, n := elementMatrix(t, form, c, coords)
		// Nodal values of Σ x_k² at the Q2 nodes mapped by the Q1 map.
		e := elementFor2(c)
		geom := elementFor1(c)
		ref := e.RefNodes()
		phi := make([]float64, geom.NumNodes())
		u := make([]float64, n)
		for i := 0; i < n; i++ {
			geom.Eval(ref[i*d:(i+1)*d], phi)
			for k := 0; k < d; k++ {
				x := 0.0
				for v := range phi {
					x += phi[v] * coords[v*d+k]
				}
				u[i] += x * x
			}
		}
		scale := 0.0
		for _, v := range b {
			scale = math.Max(scale, math.Abs(v))
		}
		for i := 0; i < n; i++ {
			s := 0.0
			for j := 0; j < n; j++ {
				s += A[i*n+j] * u[j]
			}
			if math.Abs(s-b[i]) > 1e-12*scale {
				t.Errorf("%v row %d: ∫Δu φ_i = %.15g, 2d∫φ_i = %.15g", c, i, s, b[i])
			}
		}
	}
}
