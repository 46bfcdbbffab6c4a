package linsolve

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/formwright/formwright/runtime/sparse"
	"gonum.org/v1/gonum/mat"
)

// Both direct factorisations, under every ordering, against gonum's dense
// LU on the systems of TestSolversAgainstDenseLU plus a saddle-point
// matrix (zero diagonal block: pivoting is required). Tolerance 1e-10
// relative (condition numbers below ~10⁴ here; a backward-stable
// factorisation gives error ≈ κ·1e-16).
func TestDirectFactorisationsAgainstDenseLU(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 32))
	systems := map[string]*sparse.CSR{
		"randSPD40":    randSPD(rng, 40),
		"randDD40":     randDD(rng, 40),
		"laplace2D_12": laplace2D(12),
		"convdiff2D":   convDiff2D(12, 30, 20),
		"convdiff1D":   convDiff1D(50, 80),
		"p1_20":        p1Laplace(20),
		"saddle":       saddlePoint(rng, 15, 6),
	}
	for name, A := range systems {
		b := randVec(rng, A.N)
		ref := denseSolve(A, b)
		orders := map[string][]int{"identity": nil, "rcm": RCM(A), "nd": NestedDissection(A)}
		for oname, perm := range orders {
			for _, tol := range []float64{0, 1} {
				f, err := FactorSparseLU(A, perm, tol)
				if err != nil {
					t.Errorf("%s/%s/tol %v: %v", name, oname, tol, err)
					continue
				}
				x := make([]float64, A.N)
				f.Solve(x, b)
				if e := relErr(x, ref); e > 1e-10 {
					t.Errorf("%s/%s/tol %v sparse LU: relative error %.2e", name, oname, tol, e)
				}
			}
			g, err := FactorBandLU(A, perm)
			if err != nil {
				t.Errorf("%s/%s band: %v", name, oname, err)
				continue
			}
			x := make([]float64, A.N)
			g.Solve(x, b)
			if e := relErr(x, ref); e > 1e-10 {
				t.Errorf("%s/%s band LU: relative error %.2e", name, oname, e)
			}
		}
	}
}

func saddlePoint(rng *rand.Rand, nk, nb int) *sparse.CSR {
	K := randSPD(rng, nk).ToDense()
	D := mat.NewDense(nk+nb, nk+nb, nil)
	for i := 0; i < nk; i++ {
		for j := 0; j < nk; j++ {
			D.Set(i, j, K.At(i, j))
		}
	}
	for i := 0; i < nb; i++ {
		for j := 0; j < nk; j++ {
			if rng.Float64() < 0.4 || j == i {
				v := rng.NormFloat64()
				D.Set(nk+i, j, v)
				D.Set(j, nk+i, v)
			}
		}
	}
	return sparse.FromDense(D, 0)
}

// A tiny diagonal forces an off-diagonal pivot: [[ε, 1], [1, 1]] with
// ε = 1e-20. Without pivoting, elimination computes 1 − 1/ε and loses x₁
// entirely (Golub & Van Loan, §3.4, the classic example); with the
// threshold test (ε < 0.1·1) the solver must swap rows. Exact solution of
// [[ε,1],[1,1]] x = (1, 2): x ≈ (1, 1) to within 1e-16.
func TestSparseLUPivotsAwayFromTinyDiagonal(t *testing.T) {
	bl := newBuilder(2)
	bl.add(0, 1e-20)
	bl.add(1, 1)
	bl.endRow()
	bl.add(0, 1)
	bl.add(1, 1)
	bl.endRow()
	f, err := FactorSparseLU(bl.A, nil, 0)
	if err != nil {
		t.Fatal(err)
	}
	x := make([]float64, 2)
	f.Solve(x, []float64{1, 2})
	if math.Abs(x[0]-1) > 1e-15 || math.Abs(x[1]-1) > 1e-15 {
		t.Errorf("x = %v, want (1, 1)", x)
	}
	var se *SingularError
	bl = newBuilder(3)
	for i := 0; i < 3; i++ {
		bl.add(0, 1)
		bl.add(1, 2)
		bl.endRow()
	}
	if _, err := FactorSparseLU(bl.A, nil, 0); !errors.As(err, &se) {
		t.Errorf("singular matrix: error %v, want *SingularError", err)
	}
}

// Nested dissection is a permutation and, on a 2D mesh, produces less LU
// fill than the banded RCM ordering: O(n log n) against O(n^1.5) (George
// 1973, SIAM J. Numer. Anal. 10, recalled from memory). Measured here:
// nnz(L+U) ND/RCM = 0.69 at 60×60 nodes, 0.31 at 200×200 (see the
// benchmarks); the test asks for < 0.8 at 60×60 and a smaller ratio at
// 60×60 than at 30×30 (the gap must widen with n).
func TestNestedDissectionFill(t *testing.T) {
	A := p1Laplace(60)
	nd := NestedDissection(A)
	seen := make([]bool, A.N)
	for _, p := range nd {
		if seen[p] {
			t.Fatal("not a permutation")
		}
		seen[p] = true
	}
	if len(nd) != A.N {
		t.Fatalf("length %d, want %d", len(nd), A.N)
	}
	fnd, err := FactorSparseLU(A, nd, 0)
	if err != nil {
		t.Fatal(err)
	}
	frcm, err := FactorSparseLU(A, RCM(A), 0)
	if err != nil {
		t.Fatal(err)
	}
	l1, u1 := fnd.NNZ()
	l2, u2 := frcm.NNZ()
	t.Logf("fill nnz(L+U): nd %d, rcm %d, nnz(A) %d", l1+u1, l2+u2, A.NNZ())
	ratio60 := float64(l1+u1) / float64(l2+u2)
	if ratio60 > 0.8 {
		t.Errorf("nested dissection fill %d not below 0.8 of RCM fill %d", l1+u1, l2+u2)
	}
	B := p1Laplace(30)
	fnd, _ = FactorSparseLU(B, NestedDissection(B), 0)
	frcm, _ = FactorSparseLU(B, RCM(B), 0)
	l1, u1 = fnd.NNZ()
	l2, u2 = frcm.NNZ()
	ratio30 := float64(l1+u1) / float64(l2+u2)
	t.Logf("ND/RCM fill ratio: %.3f at 30², %.3f at 60²", ratio30, ratio60)
	if ratio60 >= ratio30 {
		t.Errorf("ND/RCM fill ratio does not decrease with n: %.3f at 30², %.3f at 60²", ratio30, ratio60)
	}
	// Disconnected and tiny graphs.
	for _, M := range []*sparse.CSR{convDiff1D(1, 0), p1Laplace(2), laplace2D(1)} {
		if p := NestedDissection(M); len(p) != M.N {
			t.Errorf("n = %d: ordering %v", M.N, p)
		}
	}
}
