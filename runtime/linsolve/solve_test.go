package linsolve

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/formwright/formwright/runtime/sparse"
	"gonum.org/v1/gonum/mat"
)

// Every solver against gonum's dense LU (independent reference) on random
// SPD and nonsymmetric diagonally dominant matrices and on a 2D 5-point
// Laplacian and 1D/2D upwinded convection–diffusion matrices. Tolerance:
// relative error 1e-10; the solvers run to relative residual 1e-13, and
// these matrices have condition numbers below ~10³ (Laplacian m = 12:
// (2·13/π)² ≈ 70), so error ≤ κ·residual stays well under 1e-10.
func TestSolversAgainstDenseLU(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	type sys struct {
		name string
		A    *sparse.CSR
		spd  bool
	}
	systems := []sys{
		{"randSPD40", randSPD(rng, 40), true},
		{"laplace2D_12", laplace2D(12), true},
		{"randDD40", randDD(rng, 40), false},
		{"convdiff1D_60_a50", convDiff1D(60, 50), false},
		{"convdiff2D_12_a30", convDiff2D(12, 30, 20), false},
	}
	methods := []Method{MethodCG, MethodGMRES, MethodBiCGStab, MethodDirect}
	preconds := []PrecondKind{PrecondNone, PrecondJacobi, PrecondILU0}
	for _, s := range systems {
		b := randVec(rng, s.A.N)
		ref := denseSolve(s.A, b)
		for _, m := range methods {
			if m == MethodCG && !s.spd {
				continue
			}
			for _, p := range preconds {
				if m == MethodDirect && p != PrecondNone {
					continue
				}
				x := make([]float64, s.A.N)
				opts := Options{Method: m, Precond: p, RelTol: 1e-13, Restart: 20, MaxIter: 2000}
				res, err := Solve(s.A, b, x, opts)
				label := s.name + "/" + m.String() + "/" + p.String()
				if err != nil {
					t.Errorf("%s: %v", label, err)
					continue
				}
				if e := relErr(x, ref); e > 1e-10 {
					t.Errorf("%s: relative error %.2e > 1e-10", label, e)
				}
				if res.Solver != m.String() {
					t.Errorf("%s: Result.Solver = %q", label, res.Solver)
				}
				// Result.Residual must be the explicit residual.
				if rr := explicitRelres(s.A, b, x); math.Abs(rr-res.Residual) > 1e-3*rr+1e-16 {
					t.Errorf("%s: Result.Residual %.3e, explicit %.3e", label, res.Residual, rr)
				}
				if m != MethodDirect && res.Residual > 1e-13 {
					t.Errorf("%s: residual %.2e above tolerance", label, res.Residual)
				}
			}
		}
	}
}

// Saad & Schultz (1986): without restart, GMRES finds the exact solution
// in at most n steps. The cyclic shift A e_j = e_{j+1 mod n}, b = e_1 is the
// extreme case (Nachtigal, Reddy & Trefethen 1992, SIAM J. Matrix Anal.
// Appl. 13 — recalled from memory; the property is derived here): the
// Krylov space K_k = span{e_1..e_k} and A K_k ⊥ e_1 for k < n, so the best
// residual stays exactly 1 until step n, where it drops to zero.
func TestGMRESCyclicShiftExactAtN(t *testing.T) {
	const n = 10
	bl := newBuilder(n)
	for i := 0; i < n; i++ {
		bl.add((i+n-1)%n, 1) // row i has a 1 in column i-1: A e_{i-1} = e_i
		bl.endRow()
	}
	A := bl.A
	b := make([]float64, n)
	b[0] = 1
	x := make([]float64, n)
	var hist []float64
	res, err := GMRES(A, b, x, nil, Options{RelTol: 1e-12, Restart: n, MaxIter: n, Progress: func(it int, r float64) {
		if it != len(hist)+1 {
			t.Errorf("progress iteration %d out of order", it)
		}
		hist = append(hist, r)
	}})
	if err != nil {
		t.Fatal(err)
	}
	if res.Iterations != n || len(hist) != n {
		t.Fatalf("iterations %d (progress calls %d), want exactly %d", res.Iterations, len(hist), n)
	}
	for k := 0; k < n-1; k++ {
		if math.Abs(hist[k]-1) > 1e-14 {
			t.Errorf("step %d: residual %v, want 1 (stagnation)", k+1, hist[k])
		}
	}
	// Exact solution x = A⁻¹ e_1 = e_n.
	for i, v := range x {
		want := 0.0
		if i == n-1 {
			want = 1
		}
		if math.Abs(v-want) > 1e-14 {
			t.Errorf("x[%d] = %v, want %v", i, v, want)
		}
	}
}

// Same property on a random nonsymmetric system: with restart ≥ n, GMRES
// reaches relative residual 1e-12 (rounding level for this well-conditioned
// matrix) within n steps, with and without ILU(0) right preconditioning.
func TestGMRESWithinNSteps(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 14))
	const n = 15
	A := randDD(rng, n)
	b := randVec(rng, n)
	for _, p := range []PrecondKind{PrecondNone, PrecondILU0} {
		x := make([]float64, n)
		res, err := Solve(A, b, x, Options{Method: MethodGMRES, Precond: p, RelTol: 1e-12, Restart: n, MaxIter: n})
		if err != nil {
			t.Fatalf("%v: %v", p, err)
		}
		if res.Iterations > n {
			t.Errorf("%v: %d iterations > n = %d", p, res.Iterations, n)
		}
		if e := relErr(x, denseSolve(A, b)); e > 1e-10 {
			t.Errorf("%v: relative error %.2e", p, e)
		}
	}
}

// Saad (2003, §10.3): for a tridiagonal matrix, Gaussian elimination
// produces no fill, so ILU(0) is the exact LU factorisation. Reference:
// gonum's dense LU. The matrix is column diagonally dominant, so partial
// pivoting does not interchange rows (checked) and the factors must agree
// (1e-14 relative: same operations, possibly in a different order).
func TestILU0TridiagonalIsExactLU(t *testing.T) {
	rng := rand.New(rand.NewPCG(15, 16))
	const n = 20
	D := mat.NewDense(n, n, nil)
	for i := 0; i < n; i++ {
		if i > 0 {
			D.Set(i, i-1, rng.Float64()-0.5)
		}
		if i < n-1 {
			D.Set(i, i+1, rng.Float64()-0.5)
		}
		D.Set(i, i, 2+rng.Float64())
	}
	A := sparse.FromDense(D, 0)
	p, err := NewILU0(A)
	if err != nil {
		t.Fatal(err)
	}
	var lu mat.LU
	lu.Factorize(D)
	for i, pv := range lu.RowPivots(nil) {
		if pv != i {
			t.Fatalf("gonum LU pivoted (row %d <- %d); test matrix not suitable", i, pv)
		}
	}
	var L mat.TriDense
	var U mat.TriDense
	lu.LTo(&L)
	lu.UTo(&U)
	F := p.Factors()
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			want := U.At(i, j)
			if j < i {
				want = L.At(i, j)
			}
			got := F.At(i, j)
			if math.Abs(got-want) > 1e-14*(1+math.Abs(want)) {
				t.Errorf("factor (%d,%d) = %v, gonum %v", i, j, got, want)
			}
		}
	}
	// Hence M⁻¹ = A⁻¹: one preconditioner solve solves the system.
	b := randVec(rng, n)
	x := make([]float64, n)
	p.Solve(x, b)
	if e := relErr(x, denseSolve(A, b)); e > 1e-13 {
		t.Errorf("ILU0 solve differs from dense solve by %.2e", e)
	}
}

// Defining property of ILU(0) (Saad 2003, §10.3.2): (LU)_ij = a_ij on the
// pattern of A, and the fill outside the pattern is dropped, so LU ≠ A for
// the 2D Laplacian (whose exact factors fill the band).
func TestILU0MatchesOnPattern(t *testing.T) {
	A := laplace2D(6)
	p, err := NewILU0(A)
	if err != nil {
		t.Fatal(err)
	}
	n := A.N
	F := p.Factors().ToDense()
	L := mat.NewDense(n, n, nil)
	U := mat.NewDense(n, n, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			switch {
			case j < i:
				L.Set(i, j, F.At(i, j))
			case j == i:
				L.Set(i, i, 1)
				U.Set(i, j, F.At(i, j))
			default:
				U.Set(i, j, F.At(i, j))
			}
		}
	}
	var LU mat.Dense
	LU.Mul(L, U)
	dropped := 0
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			if A.Index(i, j) >= 0 {
				if math.Abs(LU.At(i, j)-A.At(i, j)) > 1e-14 {
					t.Errorf("(LU)_%d,%d = %v, a = %v", i, j, LU.At(i, j), A.At(i, j))
				}
			} else if LU.At(i, j) != 0 {
				dropped++
			}
		}
	}
	if dropped == 0 {
		t.Error("no fill dropped: LU = A exactly, unexpected for the 2D Laplacian")
	}
}

func TestNotConverged(t *testing.T) {
	A := laplace2D(16)
	rng := rand.New(rand.NewPCG(17, 18))
	b := randVec(rng, A.N)
	for _, m := range []Method{MethodCG, MethodGMRES, MethodBiCGStab} {
		x := make([]float64, A.N)
		res, err := Solve(A, b, x, Options{Method: m, RelTol: 1e-10, MaxIter: 3, Restart: 2})
		var nc *NotConvergedError
		if !errors.As(err, &nc) {
			t.Fatalf("%v: error %v, want *NotConvergedError", m, err)
		}
		rr := explicitRelres(A, b, x)
		if nc.Solver != m.String() || nc.Iter != 3 || nc.Tol != 1e-10 || math.Abs(nc.Residual-rr) > 1e-12*rr {
			t.Errorf("%v: got %+v, want Iter 3, Tol 1e-10, Residual %v (explicit)", m, *nc, rr)
		}
		if res.Residual != nc.Residual {
			t.Errorf("%v: Result.Residual %v differs from error's %v", m, res.Residual, nc.Residual)
		}
		want := m.String() + ": not converged after 3 iterations (relative residual "
		if msg := err.Error(); !strings.HasPrefix(msg, want) || !strings.HasSuffix(msg, " > tolerance 1e-10)") {
			t.Errorf("message %q", msg)
		}
	}
	e := &NotConvergedError{Solver: "gmres", Iter: 500, Residual: 3.2e-4, Tol: 1e-10}
	if got := e.Error(); got != "gmres: not converged after 500 iterations (relative residual 3.2e-04 > tolerance 1e-10)" {
		t.Errorf("message %q", got)
	}
}

func TestBreakdown(t *testing.T) {
	// CG on the indefinite diag(1, −1), b = (1, 1): p = r = b, pᵀAp = 0.
	bl := newBuilder(2)
	bl.add(0, 1)
	bl.endRow()
	bl.add(1, -1)
	bl.endRow()
	x := make([]float64, 2)
	_, err := CG(bl.A, []float64{1, 1}, x, nil, Options{})
	var bd *BreakdownError
	if !errors.As(err, &bd) || bd.Solver != "cg" || bd.Iter != 1 {
		t.Errorf("cg: error %v, want *BreakdownError at iteration 1", err)
	}
	// BiCGStab on the swap [[0,1],[1,0]], b = e1: r̂ = e1, v = A e1 = e2,
	// r̂ᵀv = 0.
	bl = newBuilder(2)
	bl.add(1, 1)
	bl.endRow()
	bl.add(0, 1)
	bl.endRow()
	x = make([]float64, 2)
	_, err = BiCGStab(bl.A, []float64{1, 0}, x, nil, Options{})
	if !errors.As(err, &bd) || bd.Solver != "bicgstab" || bd.Iter != 1 {
		t.Errorf("bicgstab: error %v, want *BreakdownError at iteration 1", err)
	}
	// GMRES handles the same system (exact in 2 steps).
	x = make([]float64, 2)
	if _, err := GMRES(bl.A, []float64{1, 0}, x, nil, Options{}); err != nil || math.Abs(x[1]-1) > 1e-15 || math.Abs(x[0]) > 1e-15 {
		t.Errorf("gmres on swap: x = %v, err = %v", x, err)
	}
	// Zero pivots: ILU(0) and the direct solver on a singular matrix.
	bl = newBuilder(2)
	bl.add(0, 1)
	bl.add(1, 1)
	bl.endRow()
	bl.add(0, 1)
	bl.add(1, 1)
	bl.endRow()
	var se *SingularError
	if _, err := NewILU0(bl.A); !errors.As(err, &se) || se.Row != 1 {
		t.Errorf("ilu0: error %v, want *SingularError row 1", err)
	}
	x = make([]float64, 2)
	if _, err := Solve(bl.A, []float64{1, 2}, x, Options{Method: MethodDirect}); !errors.As(err, &se) || se.Solver != "direct" {
		t.Errorf("direct: error %v, want *SingularError", err)
	}
}

func TestNaNGivesError(t *testing.T) {
	A := laplace2D(4)
	A.Val[7] = math.NaN()
	b := make([]float64, A.N)
	for i := range b {
		b[i] = 1
	}
	for _, m := range []Method{MethodCG, MethodGMRES, MethodBiCGStab, MethodDirect} {
		x := make([]float64, A.N)
		_, err := Solve(A, b, x, Options{Method: m})
		var nf *NonFiniteError
		if !errors.As(err, &nf) || nf.Solver != m.String() || nf.Iter != 0 {
			t.Errorf("%v: error %v, want *NonFiniteError at iteration 0", m, err)
		}
	}
	// Called directly on the operator (no input scan) the iteration itself
	// must detect the NaN at its first product, the initial residual
	// (NaN·0 = NaN, so even x₀ = 0 exposes it): iteration 0.
	type solver func(Operator, []float64, []float64, Preconditioner, Options) (Result, error)
	for name, f := range map[string]solver{"cg": CG, "gmres": GMRES, "bicgstab": BiCGStab} {
		x := make([]float64, A.N)
		_, err := f(A, b, x, nil, Options{})
		var nf *NonFiniteError
		if !errors.As(err, &nf) || nf.Solver != name || nf.Iter != 0 {
			t.Errorf("%s: error %v, want *NonFiniteError at iteration 0", name, err)
		}
	}
	if _, err := NewILU0(A); err == nil {
		t.Error("ilu0 accepted a NaN matrix")
	}
	// A NaN appearing later: an operator that turns non-finite at its
	// third product (first two: initial residual and iteration 1).
	for name, f := range map[string]solver{"cg": CG, "gmres": GMRES, "bicgstab": BiCGStab} {
		L := laplace2D(4)
		op := &nanAfter{A: L, left: 2}
		x := make([]float64, L.N)
		_, err := f(op, b, x, nil, Options{})
		var nf *NonFiniteError
		if !errors.As(err, &nf) || nf.Solver != name || nf.Iter < 1 {
			t.Errorf("%s: error %v, want *NonFiniteError at iteration >= 1", name, err)
		}
	}
}

// The direct solver must pivot: a saddle-point matrix [[K, Bᵀ], [B, 0]]
// has zero diagonal entries. Reference: gonum dense LU, 1e-10 relative.
func TestDirectPivotingSaddlePoint(t *testing.T) {
	rng := rand.New(rand.NewPCG(19, 20))
	nk, nb := 12, 5
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
	A := sparse.FromDense(D, 0)
	b := randVec(rng, A.N)
	f, err := FactorBandLU(A, RCM(A))
	if err != nil {
		t.Fatal(err)
	}
	x := make([]float64, A.N)
	f.Solve(x, b)
	if e := relErr(x, denseSolve(A, b)); e > 1e-10 {
		t.Errorf("relative error %.2e", e)
	}
	// Identity ordering too.
	f, err = FactorBandLU(A, nil)
	if err != nil {
		t.Fatal(err)
	}
	f.Solve(x, b)
	if e := relErr(x, denseSolve(A, b)); e > 1e-10 {
		t.Errorf("identity ordering: relative error %.2e", e)
	}
}

// RCM on a 2D grid numbered at random. A level-structure ordering puts
// neighbours in the same or adjacent levels, so the bandwidth is below the
// sum of two consecutive level widths; on the m×m 5-point grid levels are
// (anti)diagonals of at most m nodes, giving bandwidth < 2m, while the
// random numbering has bandwidth close to n.
func TestRCMReducesBandwidth(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	m := 20
	L := laplace2D(m)
	n := L.N
	shuffle := rng.Perm(n)
	// B = Q L Qᵀ with a random permutation Q.
	D := mat.NewDense(n, n, nil)
	for i := 0; i < n; i++ {
		for k := L.RowPtr[i]; k < L.RowPtr[i+1]; k++ {
			D.Set(shuffle[i], shuffle[L.Col[k]], L.Val[k])
		}
	}
	B := sparse.FromDense(D, 0)
	kl0, _ := Bandwidths(B, nil)
	perm := RCM(B)
	seen := make([]bool, n)
	for _, p := range perm {
		if seen[p] {
			t.Fatal("RCM is not a permutation")
		}
		seen[p] = true
	}
	kl, ku := Bandwidths(B, perm)
	if kl >= 2*m || ku >= 2*m {
		t.Errorf("RCM bandwidths %d, %d ≥ 2m = %d (random numbering: %d)", kl, ku, 2*m, kl0)
	}
	if kl0 < n/2 {
		t.Errorf("random numbering bandwidth %d unexpectedly small", kl0)
	}
	// Disconnected graph: two blocks; every node numbered once.
	bl := newBuilder(4)
	bl.add(0, 1)
	bl.add(2, 1)
	bl.endRow()
	bl.add(1, 1)
	bl.endRow()
	bl.add(0, 1)
	bl.add(2, 1)
	bl.endRow()
	bl.add(3, 1)
	bl.endRow()
	if p := RCM(bl.A); len(p) != 4 {
		t.Errorf("RCM on disconnected graph: %v", p)
	}
}

func TestParse(t *testing.T) {
	for _, m := range []Method{MethodCG, MethodGMRES, MethodBiCGStab, MethodDirect} {
		got, err := ParseMethod(strings.ToUpper(m.String()))
		if err != nil || got != m {
			t.Errorf("ParseMethod(%q) = %v, %v", m.String(), got, err)
		}
	}
	for _, p := range []PrecondKind{PrecondNone, PrecondJacobi, PrecondILU0, PrecondAMG, PrecondAMGBlock} {
		got, err := ParsePrecond(p.String())
		if err != nil || got != p {
			t.Errorf("ParsePrecond(%q) = %v, %v", p.String(), got, err)
		}
	}
	if _, err := ParseMethod("lu"); err == nil {
		t.Error("ParseMethod accepted lu")
	}
	if _, err := ParsePrecond("ilu1"); err == nil {
		t.Error("ParsePrecond accepted ilu1")
	}
	if p, err := ParsePrecond("AMG-Block"); err != nil || p != PrecondAMGBlock {
		t.Errorf("ParsePrecond(AMG-Block) = %v, %v", p, err)
	}
}

// Workers > 1 uses the parallel product, which is bitwise identical to the
// serial one, so the whole iteration must be too.
func TestWorkersBitIdentical(t *testing.T) {
	A := convDiff2D(60, 10, 5) // nnz ≈ 17700: above the parallel threshold
	rng := rand.New(rand.NewPCG(23, 24))
	b := randVec(rng, A.N)
	x1 := make([]float64, A.N)
	x2 := make([]float64, A.N)
	r1, err1 := Solve(A, b, x1, Options{Precond: PrecondILU0})
	r2, err2 := Solve(A, b, x2, Options{Precond: PrecondILU0, Workers: 2})
	if err1 != nil || err2 != nil {
		t.Fatal(err1, err2)
	}
	if r1 != r2 {
		t.Errorf("results differ: %+v vs %+v", r1, r2)
	}
	for i := range x1 {
		if math.Float64bits(x1[i]) != math.Float64bits(x2[i]) {
			t.Fatalf("x[%d] differs", i)
		}
	}
}

// b = 0 gives x = 0 immediately, whatever the initial guess.
func TestZeroRHS(t *testing.T) {
	A := laplace2D(3)
	for _, m := range []Method{MethodCG, MethodGMRES, MethodBiCGStab, MethodDirect} {
		x := []float64{1, 2, 3, 4, 5, 6, 7, 8, 9}
		res, err := Solve(A, make([]float64, 9), x, Options{Method: m})
		if err != nil || res.Iterations != 0 {
			t.Errorf("%v: %+v %v", m, res, err)
		}
		for _, v := range x {
			if v != 0 {
				t.Errorf("%v: x = %v", m, x)
				break
			}
		}
	}
}

// nanAfter returns correct products for the first left calls, then NaN.
type nanAfter struct {
	A    *sparse.CSR
	left int
}

func (o *nanAfter) Dim() int { return o.A.N }
func (o *nanAfter) Apply(dst, x []float64) {
	o.A.MulVec(dst, x)
	if o.left == 0 {
		dst[0] = math.NaN()
		return
	}
	o.left--
}

// Direct solver on a finite-element pattern (P1 Laplacian, 30×30 nodes,
// boundary rows eliminated symmetrically) against gonum's dense LU, 1e-10
// relative (condition number ~10³ for h = 1/29).
func TestDirectP1AgainstDenseLU(t *testing.T) {
	if testing.Short() {
		t.Skip("dense reference LU of a 900×900 matrix")
	}
	A := p1Laplace(30)
	rng := rand.New(rand.NewPCG(25, 26))
	b := randVec(rng, A.N)
	x := make([]float64, A.N)
	res, err := Solve(A, b, x, Options{Method: MethodDirect})
	if err != nil {
		t.Fatal(err)
	}
	if e := relErr(x, denseSolve(A, b)); e > 1e-10 {
		t.Errorf("relative error %.2e", e)
	}
	if res.Residual > 1e-12 {
		t.Errorf("residual %.2e", res.Residual)
	}
	kl, ku := Bandwidths(A, RCM(A))
	if kl > 2*30 || ku > 2*30 {
		t.Errorf("RCM bandwidths %d, %d exceed 2m = 60", kl, ku)
	}
}

// No allocation inside the iteration loops: the allocation count of a
// solve must not depend on the number of iterations (MaxIter 5 vs 40 on a
// problem that needs more than 40).
func TestNoAllocationPerIteration(t *testing.T) {
	A := laplace2D(30)
	rng := rand.New(rand.NewPCG(27, 28))
	b := randVec(rng, A.N)
	M, err := NewILU0(A)
	if err != nil {
		t.Fatal(err)
	}
	x := make([]float64, A.N)
	type solver func(Operator, []float64, []float64, Preconditioner, Options) (Result, error)
	for name, f := range map[string]solver{"cg": CG, "gmres": GMRES, "bicgstab": BiCGStab} {
		count := func(maxIter int) float64 {
			return testing.AllocsPerRun(3, func() {
				for i := range x {
					x[i] = 0
				}
				f(A, b, x, M, Options{RelTol: 1e-300, MaxIter: maxIter, Restart: 10})
			})
		}
		if a5, a40 := count(5), count(40); a5 != a40 {
			t.Errorf("%s: %v allocations at 5 iterations, %v at 40", name, a5, a40)
		}
	}
}

// Jacobi: dst_i = r_i / a_ii (to 2 ulps: the preconditioner multiplies by
// the stored reciprocal); a zero diagonal is a *SingularError.
func TestJacobi(t *testing.T) {
	A := convDiff1D(5, 3)
	p, err := NewJacobi(A)
	if err != nil {
		t.Fatal(err)
	}
	r := []float64{1, 2, 3, 4, 5}
	dst := make([]float64, 5)
	p.Solve(dst, r)
	for i := range r {
		if want := r[i] / A.At(i, i); math.Abs(dst[i]-want) > 4.5e-16*math.Abs(want) {
			t.Errorf("dst[%d] = %v, want %v", i, dst[i], r[i]/A.At(i, i))
		}
	}
	A.Val[A.Index(2, 2)] = 0
	var se *SingularError
	if _, err := NewJacobi(A); !errors.As(err, &se) || se.Row != 2 {
		t.Errorf("error %v, want *SingularError at row 2", err)
	}
}

func TestBandLUTooLarge(t *testing.T) {
	defer func(v int64) { MaxBandBytes = v }(MaxBandBytes)
	MaxBandBytes = 1 << 10
	var te *TooLargeError
	if _, err := FactorBandLU(laplace2D(10), nil); !errors.As(err, &te) || te.Bytes != 100*(2*10+10+1)*8 {
		t.Errorf("error %v, want *TooLargeError of %d bytes", err, 100*31*8)
	}
}

// TestBiCGStabRightHandSideOnDirichletRows: after Dirichlet row
// elimination with zero source the right-hand side lives only on the
// identity rows, which converge at once; the residual then leaves the
// support of r̂ = r₀ and r̂ᵀr = 0 exactly. BiCGStab restarts with r̂ = r
// instead of reporting a breakdown, and the solution matches gonum's dense
// LU (common practice, no source, for the restart).
func TestBiCGStabRightHandSideOnDirichletRows(t *testing.T) {
	const m = 14
	A := convDiff2D(m, 40, 25)
	fixed := make([]bool, A.N)
	values := make([]float64, A.N)
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			if i == 0 || j == 0 || i == m-1 || j == m-1 {
				fixed[j*m+i] = true
				values[j*m+i] = 1
			}
		}
	}
	b := make([]float64, A.N)
	A.EliminateRows(fixed, values, b, false)
	ref := denseSolve(A, b)
	for _, p := range []PrecondKind{PrecondNone, PrecondJacobi, PrecondILU0} {
		x := make([]float64, A.N)
		if _, err := Solve(A, b, x, Options{Method: MethodBiCGStab, Precond: p, RelTol: 1e-12, MaxIter: 1000}); err != nil {
			t.Errorf("%v: %v", p, err)
			continue
		}
		if e := relErr(x, ref); e > 1e-9 {
			t.Errorf("%v: relative error %.2e", p, e)
		}
	}
}

// TestShiftedILU0: ILU(0) with shift s of a tridiagonal matrix is the exact
// LU factorisation of A + s·diag(A) (no fill is dropped on a tridiagonal
// pattern; Manteuffel 1980 for the shifted factorisation), compared with
// gonum's dense solve of the shifted matrix.
func TestShiftedILU0(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	const n, s = 25, 0.1
	D := mat.NewDense(n, n, nil)
	S := mat.NewDense(n, n, nil)
	for i := 0; i < n; i++ {
		if i > 0 {
			v := rng.Float64() - 0.5
			D.Set(i, i-1, v)
			S.Set(i, i-1, v)
		}
		if i < n-1 {
			v := rng.Float64() - 0.5
			D.Set(i, i+1, v)
			S.Set(i, i+1, v)
		}
		d := 2 + rng.Float64()
		D.Set(i, i, d)
		S.Set(i, i, (1+s)*d)
	}
	p, err := NewILU0Shifted(sparse.FromDense(D, 0), s)
	if err != nil {
		t.Fatal(err)
	}
	b := randVec(rng, n)
	x := make([]float64, n)
	p.Solve(x, b)
	if e := relErr(x, denseSolve(sparse.FromDense(S, 0), b)); e > 1e-13 {
		t.Errorf("shifted ILU(0) solve differs from the dense solve of A + s·diag(A) by %.2e", e)
	}
	// And Solve with the option converges on the original system.
	A := sparse.FromDense(D, 0)
	y := make([]float64, n)
	if _, err := Solve(A, b, y, Options{Method: MethodGMRES, Precond: PrecondILU0, ILUShift: s, RelTol: 1e-12}); err != nil {
		t.Fatal(err)
	}
	if e := relErr(y, denseSolve(A, b)); e > 1e-10 {
		t.Errorf("GMRES with shifted ILU(0): error %.2e", e)
	}
}

// TestPreparedReuse: one Prepared solver serves several right-hand sides,
// each solved to the dense-LU reference (gonum), with the same results as
// a fresh Solve for that right-hand side.
func TestPreparedReuse(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	A := convDiff2D(10, 30, 20)
	for _, opts := range []Options{
		{Method: MethodDirect},
		{Method: MethodGMRES, Precond: PrecondILU0, ILUShift: 0.1, RelTol: 1e-13, Restart: 30, MaxIter: 2000},
		{Method: MethodBiCGStab, Precond: PrecondJacobi, RelTol: 1e-13, MaxIter: 2000},
	} {
		p, err := Prepare(A, opts)
		if err != nil {
			t.Fatal(err)
		}
		for k := 0; k < 3; k++ {
			b := randVec(rng, A.N)
			x, y := make([]float64, A.N), make([]float64, A.N)
			if _, err := p.Solve(b, x); err != nil {
				t.Fatalf("%v: %v", opts.Method, err)
			}
			if _, err := Solve(A, b, y, opts); err != nil {
				t.Fatal(err)
			}
			if e := relErr(x, denseSolve(A, b)); e > 1e-10 {
				t.Errorf("%v rhs %d: relative error %.2e against dense LU", opts.Method, k, e)
			}
			for i := range x {
				if x[i] != y[i] {
					t.Fatalf("%v rhs %d: prepared and fresh solves differ at %d: %v vs %v", opts.Method, k, i, x[i], y[i])
				}
			}
		}
	}
}

// TestDirectScaling: the direct solver scales a matrix whose coupled
// diagonal spans more than ScaleSpread (a saddle-point system with an
// O(ε) pressure block) and leaves other matrices alone; decoupled
// (Dirichlet) rows do not count. The solutions match gonum's dense LU
// either way.
func TestDirectScaling(t *testing.T) {
	lap := laplace2D(6) // diagonal 4 everywhere
	f, err := factorScaled(lap, true, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range f.s {
		if s != 1 {
			t.Fatal("Laplacian scaled, but its diagonal does not spread")
		}
	}
	// [K B; Bᵀ −εI] with K the Laplacian, B a coupling, ε = 1e-7, and a
	// decoupled identity row at the end.
	n := lap.N
	var ents [][3]float64
	for i := 0; i < n; i++ {
		for k := lap.RowPtr[i]; k < lap.RowPtr[i+1]; k++ {
			ents = append(ents, [3]float64{float64(i), float64(lap.Col[k]), lap.Val[k]})
		}
	}
	m := n / 2
	for j := 0; j < m; j++ {
		ents = append(ents, [3]float64{float64(2 * j), float64(n + j), 1}, [3]float64{float64(n + j), float64(2 * j), 1},
			[3]float64{float64(n + j), float64(n + j), -1e-7})
	}
	ents = append(ents, [3]float64{float64(n + m), float64(n + m), 1})
	D := mat.NewDense(n+m+1, n+m+1, nil)
	for _, e := range ents {
		D.Set(int(e[0]), int(e[1]), D.At(int(e[0]), int(e[1]))+e[2])
	}
	A := sparse.FromDense(D, 0)
	f, err = factorScaled(A, true, nil)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(f.s[n]-1/math.Sqrt(1e-7)) > 1e-6 || f.s[n+m] != 1 {
		t.Errorf("saddle point: scale of the pressure row %g, of the decoupled row %g", f.s[n], f.s[n+m])
	}
	b := randVec(rand.New(rand.NewPCG(1, 2)), A.N)
	for _, uns := range []bool{false, true} {
		x := make([]float64, A.N)
		if _, err := Solve(A, b, x, Options{Method: MethodDirect, Unscaled: uns}); err != nil {
			t.Fatal(err)
		}
		if e := relErr(x, denseSolve(A, b)); e > 1e-9 {
			t.Errorf("unscaled=%v: relative error %.2e against dense LU", uns, e)
		}
	}
}
