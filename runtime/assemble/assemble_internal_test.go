package assemble

import (
	"math"
	"testing"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/mesh"
	"gonum.org/v1/gonum/mat"
)

// p1Laplace is a hand-written P1 triangle kernel for ∫∇u·∇v + ∫ v, by the
// closed form A_ij = (b_i b_j + c_i c_j)/(4|T|), b_i = y_j − y_k,
// c_i = x_k − x_j (Zienkiewicz, Taylor & Zhu 2005, §4.2), and b_i = |T|/3.
type p1Laplace struct{}

func (p1Laplace) Layout() kernel.Layout {
	e := element.MustLagrange(cell.Triangle, 1)
	return kernel.Layout{Cell: cell.Triangle, Geometry: e, Fields: []kernel.FieldLayout{{Element: e, Components: 1}}}
}

func (p1Laplace) Cell(in *kernel.CellInput, A, b []float64) {
	x := in.Coords
	var bb, cc [3]float64
	for i := 0; i < 3; i++ {
		j, k := (i+1)%3, (i+2)%3
		bb[i] = x[2*j+1] - x[2*k+1]
		cc[i] = x[2*k] - x[2*j]
	}
	area := 0.5 * (bb[0]*cc[1] - bb[1]*cc[0])
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			A[i*3+j] = (bb[i]*bb[j] + cc[i]*cc[j]) / (4 * area)
		}
		b[i] = area / 3
	}
}

func setup(t testing.TB, nx int) (*mesh.Mesh, *Assembler) {
	m := mesh.Span2(0, 1, 0, 1, nx, nx, mesh.DiagonalUp)
	dm, err := dof.New(m.Cell, m.Coords, m.Cells, []dof.FieldSpec{{Name: "u", Element: element.MustLagrange(cell.Triangle, 1), Components: 1}})
	if err != nil {
		t.Fatal(err)
	}
	return m, New(m, dm)
}

// On a uniform right-triangle mesh the assembled P1 Laplacian is the
// five-point stencil: 4 on the diagonal, −1 for the four axis neighbours,
// 0 for the two diagonal neighbours (Strang & Fix, An Analysis of the
// Finite Element Method, 1973, §1.3). Tolerance 1e-14: exact sums of
// halves up to rounding.
func TestFivePointStencil(t *testing.T) {
	nx := 6
	m, a := setup(t, nx)
	A := a.NewMatrix()
	b := make([]float64, a.Dofs.NumDofs)
	if err := a.Assemble(p1Laplace{}, nil, A, b, Input{}); err != nil {
		t.Fatal(err)
	}
	total := 0.0
	for _, v := range b {
		total += v
	}
	if math.Abs(total-1) > 1e-14 {
		t.Errorf("Σ b = %v, want the area 1", total)
	}
	for v := 0; v < m.NumVertices(); v++ {
		x, y := m.Vertex(v)[0], m.Vertex(v)[1]
		if x == 0 || y == 0 || x == 1 || y == 1 {
			continue
		}
		for k := A.RowPtr[v]; k < A.RowPtr[v+1]; k++ {
			w := m.Vertex(int(A.Col[k]))
			dx, dy := math.Round((w[0]-x)*float64(nx)), math.Round((w[1]-y)*float64(nx))
			want := 0.0
			switch {
			case dx == 0 && dy == 0:
				want = 4
			case dx*dy == 0:
				want = -1
			}
			if math.Abs(A.Val[k]-want) > 1e-14 {
				t.Errorf("row %d, neighbour (%v,%v): %v, want %v", v, dx, dy, A.Val[k], want)
			}
		}
	}
}

func TestPerCellPathDoesNotAllocate(t *testing.T) {
	_, a := setup(t, 8)
	A := a.NewMatrix()
	b := make([]float64, a.Dofs.NumDofs)
	w := a.newWorker(p1Laplace{}, 0, Input{})
	Ae, be := make([]float64, 9), make([]float64, 3)
	c := 0
	allocs := testing.AllocsPerRun(200, func() {
		a.compute(w, c, Ae, be, nil, nil)
		a.scatterCell(A, b, c, Ae, be)
		c = (c + 1) % a.Dofs.NumCells
	})
	if allocs != 0 {
		t.Errorf("per-cell path allocates %v times", allocs)
	}
}

func TestLayoutMismatch(t *testing.T) {
	m := mesh.Span2(0, 1, 0, 1, 2, 2, mesh.Quads)
	dm, err := dof.New(m.Cell, m.Coords, m.Cells, []dof.FieldSpec{{Name: "u", Element: element.MustLagrange(cell.Quadrilateral, 1), Components: 1}})
	if err != nil {
		t.Fatal(err)
	}
	a := New(m, dm)
	if err := a.Assemble(p1Laplace{}, nil, a.NewMatrix(), make([]float64, dm.NumDofs), Input{}); err == nil {
		t.Error("triangle kernel on a quad mesh accepted")
	}
}

// Constrain on the P1 Laplacian: the constrained system keeps symmetry
// and its solution equals the dense solution of the reduced (free–free)
// system with the boundary values moved to the right-hand side, computed
// independently with gonum's dense LU.
func TestConstrainAgainstReducedDense(t *testing.T) {
	m, a := setup(t, 5)
	A := a.NewMatrix()
	b := make([]float64, a.Dofs.NumDofs)
	if err := a.Assemble(p1Laplace{}, nil, A, b, Input{}); err != nil {
		t.Fatal(err)
	}
	n := a.Dofs.NumDofs
	fixed, values := make([]bool, n), make([]float64, n)
	for v := 0; v < n; v++ {
		x := m.Vertex(v)
		if x[0] == 0 || x[1] == 0 || x[0] == 1 || x[1] == 1 {
			fixed[v], values[v] = true, x[0]+2*x[1]
		}
	}
	D := A.ToDense()
	var free []int
	for i := 0; i < n; i++ {
		if !fixed[i] {
			free = append(free, i)
		}
	}
	red := mat.NewDense(len(free), len(free), nil)
	rhs := mat.NewVecDense(len(free), nil)
	for r, i := range free {
		s := b[i]
		for j := 0; j < n; j++ {
			if fixed[j] {
				s -= D.At(i, j) * values[j]
			}
		}
		rhs.SetVec(r, s)
		for c, j := range free {
			red.Set(r, c, D.At(i, j))
		}
	}
	var want mat.VecDense
	if err := want.SolveVec(red, rhs); err != nil {
		t.Fatal(err)
	}
	if !Constrain(A, b, fixed, values) || !A.IsSymmetric(0) {
		t.Fatal("P1 Laplacian not treated as symmetric")
	}
	var got mat.VecDense
	if err := got.SolveVec(A.ToDense(), mat.NewVecDense(n, b)); err != nil {
		t.Fatal(err)
	}
	for r, i := range free {
		if math.Abs(got.AtVec(i)-want.AtVec(r)) > 1e-12 {
			t.Errorf("dof %d: %v, reduced system gives %v", i, got.AtVec(i), want.AtVec(r))
		}
	}
	for i := 0; i < n; i++ {
		if fixed[i] && math.Abs(got.AtVec(i)-values[i]) > 1e-12 {
			t.Errorf("fixed dof %d = %v, want %v", i, got.AtVec(i), values[i])
		}
	}
}
