package problem

import (
	"math"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/mesh"
)

// laplaceForm is −Δu = f in dim dimensions with u = g on "all".
func laplaceForm(dim int, elem string, f, g ir.Expr) *ir.LoweredForm {
	var bil []ir.Term
	for k := 0; k < dim; k++ {
		bil = append(bil, ir.Term{Coef: num(1, 1), Trial: fd(trialU, 0, axis(k)...), Test: fd(testU, 0, axis(k)...)})
	}
	return &ir.LoweredForm{
		Method: "galerkin", Dim: dim,
		Unknowns:  []ir.LoweredUnknown{{Name: "u", Element: mustElement(elem)}},
		Integrals: []ir.Integral{{Bilinear: bil, Linear: []ir.Term{{Coef: f, Test: fd(testU, 0)}}}},
		Dirichlet: []ir.DirichletCondition{{Side: mesh.All, Value: g}},
	}
}

// Patch test (Irons & Razzaque 1972; Strang & Fix 1973, §4.2): when the
// exact solution lies in the discrete space, Galerkin reproduces it. Linear
// u = x + 2y − 3z for P1/Q1 (f = 0); quadratic
// u = x² + 3xy − 2y² + yz − z² + x for P2/Q2 (f = −Δu constant; on
// bilinear/trilinear cells x_k² is still in Q2). Every cell type, boundary
// data from the expression at every boundary node (vertex, edge, face).
// Tolerance 1e-10: round-off of the solve on a few thousand dofs.
func TestPatchAllCells(t *testing.T) {
	x, y, z := coord(0), coord(1), coord(2)
	lin := []ir.Expr{x, add(x, mul(num(2, 1), y)), add(x, mul(num(2, 1), y), mul(num(-3, 1), z))}
	quad := []ir.Expr{
		add(mul(x, x), x),
		add(mul(x, x), mul(num(3, 1), x, y), mul(num(-2, 1), y, y), x),
		add(mul(x, x), mul(num(3, 1), x, y), mul(num(-2, 1), y, y), mul(y, z), mul(num(-1, 1), z, z), x),
	}
	// −Δ of the quadratics: −2; −2+4 = 2; −2+4+2 = 4.
	lapQ := []int64{-2, 2, 4}
	meshes := []*mesh.Mesh{
		mesh.Span1(0, 1, 6, 1.3),
		mesh.Span2(0, 2, 0, 1, 5, 4, mesh.Quartered),
		mesh.Span2(0, 2, 0, 1, 5, 4, mesh.Quads),
		mesh.Span3(0, 1, 0, 1, 0, 2, 3, 3, 4, mesh.Kuhn),
		mesh.Span3(0, 1, 0, 1, 0, 2, 3, 3, 4, mesh.Hexes),
	}
	for _, m := range meshes {
		d := m.Dim
		for deg := 1; deg <= 2; deg++ {
			name := "P"
			if !m.Cell.IsSimplex() {
				name = "Q"
			}
			name += string(rune('0' + deg))
			u, f := lin[d-1], num(0, 1)
			if deg == 2 {
				u, f = quad[d-1], num(lapQ[d-1], 1)
			}
			sol, err := Solve(laplaceForm(d, name, f, u), m, Options{})
			if err != nil {
				t.Fatalf("%v %s: %v", m.Cell, name, err)
			}
			ex, _ := ExactFromExprs(d, []ir.Expr{u})
			xs := sol.Dofs.NodeCoords(0)
			val, grad := make([]float64, 1), make([]float64, d)
			worst := 0.0
			for i, v := range sol.Fields[0].Values[0] {
				ex(xs[i*d:(i+1)*d], 0, val, grad)
				worst = math.Max(worst, math.Abs(v-val[0]))
			}
			if worst > 1e-10 {
				t.Errorf("%v %s: max nodal error %.3e", m.Cell, name, worst)
			}
		}
	}
}

// handP1 is a hand-written P1 triangle kernel for ∫∇u·∇v = ∫ 1·v (the
// closed form of Zienkiewicz, Taylor & Zhu 2005, §4.2), standing in for a
// generated kernel.
type handP1 struct{}

func (handP1) Layout() kernel.Layout {
	e := element.MustLagrange(cell.Triangle, 1)
	return kernel.Layout{Cell: cell.Triangle, Geometry: e, Fields: []kernel.FieldLayout{{Element: e, Components: 1}}}
}

func (handP1) Cell(in *kernel.CellInput, A, b []float64) {
	x := in.Coords
	var bb, cc [3]float64
	for i := 0; i < 3; i++ {
		j, k := (i+1)%3, (i+2)%3
		bb[i], cc[i] = x[2*j+1]-x[2*k+1], x[2*k]-x[2*j]
	}
	area := 0.5 * (bb[0]*cc[1] - bb[1]*cc[0])
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			A[i*3+j] = (bb[i]*bb[j] + cc[i]*cc[j]) / (4 * area)
		}
		b[i] = area / 3
	}
}

// The compiled-kernel path: a KernelSet replaces the interpreted kernels
// and gives the same solution (to round-off: the two kernels sum their
// products in different orders), with KernelPath "compiled".
func TestKernelSetPath(t *testing.T) {
	m := mesh.Span2(0, 1, 0, 1, 12, 12, mesh.DiagonalDown)
	form := laplaceForm(2, "P1", num(1, 1), num(0, 1))
	ref, err := Solve(form, m, Options{})
	if err != nil {
		t.Fatal(err)
	}
	got, err := Solve(form, m, Options{Kernels: &KernelSet{Cell: handP1{}}})
	if err != nil {
		t.Fatal(err)
	}
	if got.Summary.KernelPath != "compiled" || ref.Summary.KernelPath != "interpreted" {
		t.Errorf("kernel paths %q, %q", got.Summary.KernelPath, ref.Summary.KernelPath)
	}
	for i := range ref.X {
		if math.Abs(got.X[i]-ref.X[i]) > 1e-14 {
			t.Fatalf("dof %d: compiled %v, interpreted %v", i, got.X[i], ref.X[i])
		}
	}
	// A kernel for the wrong cell type is a layout error.
	q1 := laplaceForm(2, "Q1", num(1, 1), num(0, 1))
	if _, err := Solve(q1, mesh.Span2(0, 1, 0, 1, 2, 2, mesh.Quads), Options{Kernels: &KernelSet{Cell: handP1{}}}); err == nil {
		t.Error("triangle kernel on quadrilaterals accepted")
	}
}
