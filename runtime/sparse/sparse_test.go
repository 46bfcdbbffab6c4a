package sparse

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// randomCSR returns an n×m matrix with about density·m entries per row at
// random positions, values uniform in (-1, 1), from a seeded generator.
func randomCSR(rng *rand.Rand, n, m int, density float64) *CSR {
	D := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			if rng.Float64() < density {
				D.Set(i, j, 2*rng.Float64()-1)
			}
		}
	}
	return FromDense(D, 0)
}

// Reference for every check in this file: gonum's dense mat.Dense
// operations on ToDense(A), an independent implementation. Products of a
// few dozen terms agree to 1e-14 relative (rounding of different summation
// orders, a few ulps).
func TestMulVecAgainstDense(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	A := randomCSR(rng, 37, 23, 0.3)
	if err := A.Check(); err != nil {
		t.Fatal(err)
	}
	x := make([]float64, A.M)
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	got := make([]float64, A.N)
	A.MulVec(got, x)
	var want mat.VecDense
	want.MulVec(A.ToDense(), mat.NewVecDense(A.M, x))
	for i := range got {
		if math.Abs(got[i]-want.AtVec(i)) > 1e-14*(1+math.Abs(want.AtVec(i))) {
			t.Errorf("row %d: got %v want %v", i, got[i], want.AtVec(i))
		}
	}
	// Aᵀ x against gonum's transpose product.
	y := make([]float64, A.N)
	for i := range y {
		y[i] = rng.NormFloat64()
	}
	gotT := make([]float64, A.M)
	A.MulVecTrans(gotT, y)
	var wantT mat.VecDense
	wantT.MulVec(A.ToDense().T(), mat.NewVecDense(A.N, y))
	for j := range gotT {
		if math.Abs(gotT[j]-wantT.AtVec(j)) > 1e-14*(1+math.Abs(wantT.AtVec(j))) {
			t.Errorf("col %d: got %v want %v", j, gotT[j], wantT.AtVec(j))
		}
	}
}

// The parallel product must be bitwise identical to the serial one (same
// summation order per row), for every worker count, including more
// workers than rows and rows of very different lengths.
func TestMulVecParallelBitIdentical(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	A := randomCSR(rng, 301, 301, 0.05)
	// Make a few dense rows so the nonzero-balanced split is uneven.
	for i := 0; i < 5; i++ {
		D := A.ToDense()
		for j := 0; j < A.M; j++ {
			D.Set(i*60, j, rng.NormFloat64())
		}
		A = FromDense(D, 0)
	}
	x := make([]float64, A.M)
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	want := make([]float64, A.N)
	A.MulVec(want, x)
	defer func(v int) { parallelMinNNZ = v }(parallelMinNNZ)
	parallelMinNNZ = 0 // exercise the parallel path on this small matrix
	for _, w := range []int{0, 1, 2, 3, 4, 7, 16, 200} {
		got := make([]float64, A.N)
		for i := range got {
			got[i] = math.NaN()
		}
		A.MulVecParallel(got, x, w)
		for i := range got {
			if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
				t.Fatalf("workers=%d row %d: %v != serial %v", w, i, got[i], want[i])
			}
		}
	}
}

func TestAccessorsAgainstDense(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	A := randomCSR(rng, 20, 20, 0.25)
	D := A.ToDense()
	diag := A.Diagonal(nil)
	for i := 0; i < A.N; i++ {
		if diag[i] != D.At(i, i) {
			t.Errorf("Diagonal[%d] = %v, want %v", i, diag[i], D.At(i, i))
		}
		for j := 0; j < A.M; j++ {
			if A.At(i, j) != D.At(i, j) {
				t.Errorf("At(%d,%d) = %v, want %v", i, j, A.At(i, j), D.At(i, j))
			}
			k := A.Index(i, j)
			if (k >= 0) != (D.At(i, j) != 0) {
				t.Errorf("Index(%d,%d) = %d but dense entry %v", i, j, k, D.At(i, j))
			}
			if k >= 0 && (A.Val[k] != D.At(i, j) || int(A.Col[k]) != j || k < A.RowPtr[i] || k >= A.RowPtr[i+1]) {
				t.Errorf("Index(%d,%d) = %d points at the wrong entry", i, j, k)
			}
		}
	}
	T := A.Transpose()
	if err := T.Check(); err != nil {
		t.Fatal(err)
	}
	if !mat.Equal(T.ToDense(), D.T()) {
		t.Error("Transpose differs from the dense transpose")
	}
}

func TestIsSymmetric(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	B := randomCSR(rng, 15, 15, 0.3).ToDense()
	var S mat.Dense
	S.Add(B, B.T())
	A := FromDense(&S, 0)
	if !A.IsSymmetric(0) {
		t.Fatal("B + Bᵀ reported non-symmetric")
	}
	// Perturb one off-diagonal entry by 1e-8 relative to max|a|: symmetric
	// at tol 1e-6, not at 1e-10.
	for k := A.RowPtr[3]; k < A.RowPtr[4]; k++ {
		if A.Col[k] != 3 {
			A.Val[k] += 1e-8 * mat.Norm(&S, math.Inf(1))
			break
		}
	}
	if !A.IsSymmetric(1e-6) {
		t.Error("perturbation 1e-8 rejected at tol 1e-6")
	}
	if A.IsSymmetric(1e-10) {
		t.Error("perturbation 1e-8 accepted at tol 1e-10")
	}
	// An entry stored on one side only.
	D := A.ToDense()
	D.Set(0, 14, 1)
	D.Set(14, 0, 0)
	if FromDense(D, 0).IsSymmetric(1e-3) {
		t.Error("one-sided entry accepted")
	}
	if randomCSR(rng, 3, 4, 1).IsSymmetric(1) {
		t.Error("rectangular matrix reported symmetric")
	}
}

func TestAdd(t *testing.T) {
	A := PatternFromElements(3, 2, func(e int, buf []int32) []int32 { return append(buf, int32(e), int32(e+1)) })
	A.Add(0, 1, 2.5)
	A.Add(0, 1, 0.5)
	if A.At(0, 1) != 3 || A.At(1, 0) != 0 {
		t.Errorf("Add: %v", A.ToDense())
	}
	defer func() {
		if recover() == nil {
			t.Error("Add outside the pattern did not panic")
		}
	}()
	A.Add(0, 2, 1)
}
