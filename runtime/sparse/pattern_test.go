package sparse

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// triMesh returns the triangles (3 node numbers each) of an nx×ny grid of
// squares on (nx+1)(ny+1) nodes numbered row by row, each square cut along
// one diagonal.
func triMesh(nx, ny int) [][3]int32 {
	tris := make([][3]int32, 0, 2*nx*ny)
	node := func(i, j int) int32 { return int32(j*(nx+1) + i) }
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			a, b, c, d := node(i, j), node(i+1, j), node(i+1, j+1), node(i, j+1)
			tris = append(tris, [3]int32{a, b, c}, [3]int32{a, c, d})
		}
	}
	return tris
}

// bruteForcePattern is the independent reference: a dense boolean matrix
// with (i, j) set when i and j share an element.
func bruteForcePattern(n int, elems [][]int32) [][]bool {
	p := make([][]bool, n)
	for i := range p {
		p[i] = make([]bool, n)
	}
	for _, e := range elems {
		for _, i := range e {
			for _, j := range e {
				if i >= 0 && j >= 0 {
					p[i][j] = true
				}
			}
		}
	}
	return p
}

func TestPatternFromElements(t *testing.T) {
	tris := triMesh(4, 3)
	n := 5 * 4
	elems := make([][]int32, len(tris))
	for e, tr := range tris {
		elems[e] = tr[:]
	}
	// Add an element with a repeated and a negative (ignored) dof.
	elems = append(elems, []int32{0, 19, 0, -1})
	A := PatternFromElements(n, len(elems), func(e int, buf []int32) []int32 {
		return append(buf, elems[e]...)
	})
	if err := A.Check(); err != nil {
		t.Fatal(err)
	}
	want := bruteForcePattern(n, elems)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			if got := A.Index(i, j) >= 0; got != want[i][j] {
				t.Errorf("(%d,%d): in pattern = %v, want %v", i, j, got, want[i][j])
			}
		}
	}
	// Interior node of a triangulated grid has 7 neighbours including itself
	// (the grid has 6 triangle neighbours per interior node): node (1,1) = 6.
	if got := A.RowPtr[7] - A.RowPtr[6]; got != 7 {
		t.Errorf("interior row length %d, want 7", got)
	}
}

// Assemble the P1 stiffness matrix of -Δ on a triangulated unit square
// through ScatterIndex/AddScatter and compare with a dense assembly in
// gonum that adds entry by entry (independent path).
func TestScatterAssembly(t *testing.T) {
	nx, ny := 5, 4
	tris := triMesh(nx, ny)
	n := (nx + 1) * (ny + 1)
	xy := func(v int32) (float64, float64) {
		return float64(int(v)%(nx+1)) / float64(nx), float64(int(v)/(nx+1)) / float64(ny)
	}
	A := PatternFromElements(n, len(tris), func(e int, buf []int32) []int32 { return append(buf, tris[e][:]...) })
	D := mat.NewDense(n, n, nil)
	var pos []int
	ke := make([]float64, 9)
	for _, tr := range tris {
		// Element stiffness (b_a b_b + c_a c_b)/(4 area).
		var x, y [3]float64
		for a := 0; a < 3; a++ {
			x[a], y[a] = xy(tr[a])
		}
		area := 0.5 * ((x[1]-x[0])*(y[2]-y[0]) - (x[2]-x[0])*(y[1]-y[0]))
		var bb, cc [3]float64
		for a := 0; a < 3; a++ {
			b1, b2 := (a+1)%3, (a+2)%3
			bb[a] = y[b1] - y[b2]
			cc[a] = x[b2] - x[b1]
		}
		for a := 0; a < 3; a++ {
			for b := 0; b < 3; b++ {
				ke[a*3+b] = (bb[a]*bb[b] + cc[a]*cc[b]) / (4 * area)
				D.Set(int(tr[a]), int(tr[b]), D.At(int(tr[a]), int(tr[b]))+ke[a*3+b])
			}
		}
		pos = A.ScatterIndex(tr[:], pos)
		A.AddScatter(pos, ke)
	}
	if !mat.EqualApprox(A.ToDense(), D, 1e-14) {
		t.Fatal("scatter assembly differs from dense assembly")
	}
	// Row sums of a stiffness matrix vanish (constants are in the kernel).
	one := make([]float64, n)
	for i := range one {
		one[i] = 1
	}
	r := make([]float64, n)
	A.MulVec(r, one)
	for i, v := range r {
		if math.Abs(v) > 1e-13 {
			t.Errorf("row sum %d = %v", i, v)
		}
	}
	if !A.IsSymmetric(1e-15) {
		t.Error("stiffness matrix not symmetric")
	}
	pos = A.ScatterIndex([]int32{3, -1}, pos)
	if pos[1] != -1 || pos[2] != -1 || pos[3] != -1 || pos[0] != A.Index(3, 3) {
		t.Errorf("negative dofs: pos = %v", pos)
	}
}

// EliminateRows against a dense computation: the constrained solution is
// x_c = g on fixed dofs and A_ff x_f = b_f − A_fc g on free ones, computed
// with gonum's dense solver. Both modes must give that solution (dense LU
// of the modified matrix, 1e-10 relative: condition number of these
// 12×12 diagonally dominant systems is small), keepSymmetric must keep
// symmetry exactly and build exactly [A_ff 0; 0 I] with b_f − A_fc g.
func TestEliminateRows(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	n := 12
	B := randomCSR(rng, n, n, 0.4).ToDense()
	var S mat.Dense
	S.Add(B, B.T())
	for i := 0; i < n; i++ {
		S.Set(i, i, float64(n)+2) // diagonally dominant: SPD
	}
	fixed := make([]bool, n)
	g := make([]float64, n)
	for _, i := range []int{0, 4, 5, 11} {
		fixed[i] = true
		g[i] = rng.NormFloat64()
	}
	b := make([]float64, n)
	for i := range b {
		b[i] = rng.NormFloat64()
	}
	// Reference: reduced dense system.
	var free []int
	for i := 0; i < n; i++ {
		if !fixed[i] {
			free = append(free, i)
		}
	}
	Aff := mat.NewDense(len(free), len(free), nil)
	rhs := mat.NewVecDense(len(free), nil)
	for a, i := range free {
		s := b[i]
		for j := 0; j < n; j++ {
			if fixed[j] {
				s -= S.At(i, j) * g[j]
			}
		}
		rhs.SetVec(a, s)
		for c, j := range free {
			Aff.Set(a, c, S.At(i, j))
		}
	}
	var xf mat.VecDense
	if err := xf.SolveVec(Aff, rhs); err != nil {
		t.Fatal(err)
	}
	want := make([]float64, n)
	copy(want, g)
	for a, i := range free {
		want[i] = xf.AtVec(a)
	}
	for _, sym := range []bool{false, true} {
		A := FromDense(&S, 0)
		bb := append([]float64(nil), b...)
		A.EliminateRows(fixed, g, bb, sym)
		var x mat.VecDense
		if err := x.SolveVec(A.ToDense(), mat.NewVecDense(n, bb)); err != nil {
			t.Fatal(err)
		}
		for i := 0; i < n; i++ {
			if math.Abs(x.AtVec(i)-want[i]) > 1e-10*(1+math.Abs(want[i])) {
				t.Errorf("keepSymmetric=%v x[%d] = %v, want %v", sym, i, x.AtVec(i), want[i])
			}
		}
		for i := 0; i < n; i++ {
			if fixed[i] {
				for j := 0; j < n; j++ {
					w := 0.0
					if i == j {
						w = 1
					}
					if A.At(i, j) != w {
						t.Errorf("keepSymmetric=%v fixed row %d col %d = %v", sym, i, j, A.At(i, j))
					}
				}
				if bb[i] != g[i] {
					t.Errorf("b[%d] = %v, want %v", i, bb[i], g[i])
				}
			}
		}
		if sym {
			if !A.IsSymmetric(0) {
				t.Error("keepSymmetric result not symmetric")
			}
			for a, i := range free {
				if math.Abs(bb[i]-rhs.AtVec(a)) > 1e-14*(1+math.Abs(rhs.AtVec(a))) {
					t.Errorf("b[%d] = %v, want %v", i, bb[i], rhs.AtVec(a))
				}
			}
			var chol mat.Cholesky
			if !chol.Factorize(mat.NewSymDense(n, A.ToDense().RawMatrix().Data)) {
				t.Error("keepSymmetric result not SPD")
			}
		} else if A.IsSymmetric(1e-12) {
			t.Error("row elimination unexpectedly symmetric (test matrix too weak)")
		}
	}
}
