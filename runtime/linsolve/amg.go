package linsolve

import (
	"fmt"
	"math"
	"slices"
	"time"

	"github.com/formwright/formwright/runtime/sparse"
)

// Smoother selects the relaxation of the AMG V-cycle.
type Smoother int

const (
	// SmoothSymGS is multicolour Gauss–Seidel: rows are greedily coloured
	// so that no two rows of a colour are coupled, pre-smoothing sweeps
	// the colours forward and post-smoothing backward, so the V-cycle is
	// symmetric (usable with CG). Rows of one colour are updated in
	// parallel; the result does not depend on the number of workers. The
	// default: on the P1 benchmarks it needs 10 CG iterations where
	// SmoothJacobi needs 12, and solved in 0.8 of its time at 512².
	SmoothSymGS Smoother = iota
	// SmoothJacobi is damped Jacobi, x += ω D⁻¹ (b − A x) with
	// ω = 4/(3ρ(D⁻¹A)), ρ from levelRho: symmetric (usable with CG),
	// fully parallel, and lighter on memory (no colour-ordered copy of
	// the matrix).
	SmoothJacobi
	// SmoothGS is lexicographic Gauss–Seidel, forward in both pre- and
	// post-smoothing (not symmetric: use with GMRES). For advection
	// problems whose dofs are numbered roughly along the flow, the
	// forward sweep follows the flow. Serial.
	SmoothGS
	// SmoothILU0 relaxes with the ILU(0) factors of each level,
	// x += (LU)⁻¹ (b − A x) (not symmetric: use with GMRES). Serial.
	SmoothILU0
)

var smootherNames = [...]string{SmoothSymGS: "sym-gs", SmoothJacobi: "jacobi", SmoothGS: "gs", SmoothILU0: "ilu0"}

func (s Smoother) String() string {
	if s >= 0 && int(s) < len(smootherNames) {
		return smootherNames[s]
	}
	return fmt.Sprintf("Smoother(%d)", int(s))
}

// Defaults of AMGOptions.
const (
	// SymmetryTol is the relative tolerance of the symmetry test of
	// NewAMG: assembled symmetric forms differ from exact symmetry only by
	// the rounding of the kernels' products (common practice, no source;
	// the value of runtime/assemble's test).
	SymmetryTol = 1e-12
	// DefaultStrength is θ of the strength of connection on the finest
	// level; it is halved on each coarser level (Vaněk, Mandel & Brezina
	// 1996, Computing 56, §4: ε = 0.08·(1/2)^(l−1) [memory]).
	DefaultStrength = 0.08
	// DefaultMaxCoarse: a level with at most this many unknowns is solved
	// by sparse LU (common practice, no source for the value).
	DefaultMaxCoarse = 2000
	// DefaultMaxLevels bounds the hierarchy (common practice, no source).
	DefaultMaxLevels = 20
)

// AMGOptions controls the smoothed-aggregation AMG preconditioner. The
// zero value is the symmetric V(1,1) cycle with multicolour Gauss–Seidel
// smoothing, smoothed prolongators and the defaults above.
type AMGOptions struct {
	// Strength is θ of the strength of connection on the finest level:
	// nodes i ≠ j are strongly coupled when ‖A_ij‖ ≥ θ·√(‖A_ii‖‖A_jj‖),
	// ‖·‖ the Frobenius norm of the node blocks, symmetrised (coupled if
	// either direction is strong). 0 means DefaultStrength; negative
	// means θ = 0 (every nonzero coupling is strong).
	Strength float64
	// Smoother and the number of pre- and post-smoothing sweeps (0 means
	// 1 each).
	Smoother  Smoother
	PreSweeps int
	// PostSweeps 0 means PreSweeps.
	PostSweeps int
	// ILUShift > 0 makes SmoothILU0 use the shifted factors of
	// A + ILUShift·diag(A) (see Options.ILUShift).
	ILUShift float64
	// Unsmoothed uses the tentative prolongator itself (plain
	// aggregation) instead of the smoothed one.
	Unsmoothed bool
	// MaxCoarse and MaxLevels: see DefaultMaxCoarse, DefaultMaxLevels.
	MaxCoarse, MaxLevels int
	// NearNull, if not nil, replaces the near-null-space vectors derived
	// from the layout: each has one value per dof.
	NearNull [][]float64
	// Workers > 1 runs the setup products and the cycle's mat-vecs and
	// smoothing on that many goroutines; the results are bitwise the same
	// for every count.
	Workers int
	// OnPhase, if not nil, is called after each level of the setup.
	OnPhase func(PhaseReport)
	// Symmetric declares A symmetric (Prepare sets it for CG), which
	// spares the setup its symmetry test (sparse.CSR.IsSymmetric with
	// SymmetryTol). A symmetric A gets the Lanczos estimate of ρ(D⁻¹A)
	// and needs no symmetrisation of its strength graph.
	Symmetric bool
}

// PhaseReport describes the progress of a long phase of Prepare: the AMG
// setup (one report per level), the sparse LU factorisation (reports at
// every tenth of the columns) and the block preconditioner's setup.
type PhaseReport struct {
	Phase   string // "amg-setup", "factor", "block-setup"
	Step    int    // steps done (levels built, columns factored)
	Steps   int    // total steps, 0 if not known in advance
	Detail  string // e.g. "level 2: 16384 rows, 141312 nonzeros"
	Elapsed time.Duration
}

// amgLevel is one level of the hierarchy: its matrix, the prolongator to
// it from the next coarser level and the restriction (Pᵀ) to it, the
// smoother, and the work vectors of the cycle.
type amgLevel struct {
	A       *sparse.CSR
	rho     float64     // estimate of ρ(D⁻¹A)
	P, R    *sparse.CSR // nil on the coarsest level
	sm      smoother
	x, b, r []float64
}

// AMG is a smoothed-aggregation algebraic multigrid preconditioner (Vaněk,
// Mandel & Brezina 1996, Computing 56, 179–196): one V-cycle per Solve.
//
// Setup, per level: strength of connection on nodes; greedy aggregation
// in the paper's three phases (aggregates of a root and its strongly
// coupled neighbours, then attachment of the left-over nodes to a
// neighbouring aggregate, then new aggregates of what remains); the
// tentative prolongator from the near-null-space vectors restricted to
// each aggregate, orthonormalised by a QR factorisation per aggregate
// (whose R gives the coarse near-null-space); the prolongator smoothed by
// one damped Jacobi step on the filtered matrix A_F (weak couplings
// lumped into the diagonal), P = (I − ω D_F⁻¹ A_F) P_tent with
// ω = 4/(3ρ(D_F⁻¹ A_F)); and the Galerkin coarse matrix A_c = Pᵀ A P
// computed as Pᵀ (A P) by two row-parallel sparse products. ρ is
// estimated by PowerSteps steps of the power method, capped by the
// Gershgorin bound max_i Σ_j |a_ij|/|a_ii| (see spectralRadius; the bound
// alone is sharp for the P1 Laplacian but 4/3 of ρ for Q1, which cost
// iterations). Coarsening stops at MaxCoarse
// unknowns, at MaxLevels, or when a level shrinks by less than a fifth;
// the coarsest level is solved by sparse LU.
//
// Cycle: V(ν₁, ν₂) with the Smoother of AMGOptions, restriction R = Pᵀ.
// With SmoothJacobi or SmoothSymGS and ν₁ = ν₂ the cycle is a symmetric
// positive definite operator for SPD A, a preconditioner for CG. The
// iteration counts of CG with this cycle are nearly independent of the
// mesh size for Poisson problems (Vaněk, Mandel & Brezina 1996; Stüben
// 2001, J. Comput. Appl. Math. 128; Trottenberg, Oosterlee & Schüller,
// Multigrid, 2001 [memory]); the tests check it.
type AMG struct {
	levels []*amgLevel
	coarse *scaledLU
	opts   AMGOptions
	pre    int
	post   int
}

// NewAMG builds the AMG hierarchy of the square matrix A. layout gives the
// fields, components and node coordinates of the dofs (nil: scalar). It
// returns *SingularError if a diagonal entry is zero or the coarsest
// matrix is singular, and *NonFiniteError for NaN/Inf.
func NewAMG(A *sparse.CSR, layout *Layout, opts AMGOptions) (*AMG, error) {
	const name = "amg"
	checkSquare(name, A)
	if layout == nil {
		layout = Scalar(A.N)
	}
	if err := layout.check(A.N); err != nil {
		panic(err.Error())
	}
	node, B, k := layout.nodesAndNullSpace(A.N)
	if opts.NearNull != nil {
		k = len(opts.NearNull)
		B = make([]float64, A.N*k)
		for c, v := range opts.NearNull {
			if len(v) != A.N {
				panic(fmt.Sprintf("linsolve: AMG near-null-space vector %d has length %d, want %d", c, len(v), A.N))
			}
			for i, x := range v {
				B[i*k+c] = x
			}
		}
	}
	theta := opts.Strength
	switch {
	case theta == 0:
		theta = DefaultStrength
	case theta < 0:
		theta = 0
	}
	maxCoarse := opts.MaxCoarse
	if maxCoarse <= 0 {
		maxCoarse = DefaultMaxCoarse
	}
	maxLevels := opts.MaxLevels
	if maxLevels <= 0 {
		maxLevels = DefaultMaxLevels
	}
	h := &AMG{opts: opts, pre: max(1, opts.PreSweeps)}
	h.post = h.pre
	if opts.PostSweeps > 0 {
		h.post = opts.PostSweeps
	}
	W := max(1, opts.Workers)
	// Galerkin products PᵀAP of a symmetric A are symmetric too (up to
	// rounding), so one test serves every level.
	sym := opts.Symmetric || A.IsSymmetric(SymmetryTol)
	start := time.Now()
	report := func(step int, detail string) {
		if opts.OnPhase != nil {
			opts.OnPhase(PhaseReport{Phase: "amg-setup", Step: step, Detail: detail, Elapsed: time.Since(start)})
		}
	}
	cur := A
	for lev := 0; ; lev++ {
		for i := 0; i < cur.N; i++ {
			if d := cur.At(i, i); d == 0 || !finite(d) {
				return nil, &SingularError{Solver: name, Row: i, What: fmt.Sprintf("diagonal entry %v on level %d", d, lev)}
			}
		}
		L := &amgLevel{A: cur, x: make([]float64, cur.N), b: make([]float64, cur.N), r: make([]float64, cur.N)}
		h.levels = append(h.levels, L)
		if cur.N <= maxCoarse || lev == maxLevels-1 {
			break
		}
		L.rho = levelRho(cur, sym, W)
		S := strengthGraph(cur, node, theta, sym, W)
		agg, nAgg := aggregate(S, node, cur.N)
		if nAgg == 0 {
			break
		}
		Pt, Bc, nodeC, kc := tentative(cur.N, agg, nAgg, B, k)
		if Pt.M >= cur.N*4/5 {
			break // coarsening stalls
		}
		P := Pt
		if !opts.Unsmoothed {
			P = smoothProlongator(cur, Pt, S, node, L.rho, W)
		}
		R := P.Transpose()
		Ac := spgemm(R, spgemm(cur, P, W), W)
		L.P, L.R = P, R
		report(lev+1, fmt.Sprintf("level %d: %d rows, %d nonzeros; next %d rows, %d nonzeros", lev, cur.N, cur.NNZ(), Ac.N, Ac.NNZ()))
		cur, node, B, k = Ac, nodeC, Bc, kc
		theta /= 2
	}
	for _, L := range h.levels[:len(h.levels)-1] {
		var err error
		if L.rho == 0 {
			L.rho = levelRho(L.A, sym, W) // a level whose coarsening stalled
		}
		if L.sm, err = newSmoother(opts.Smoother, L.A, W, opts.ILUShift, L.rho); err != nil {
			return nil, err
		}
	}
	last := h.levels[len(h.levels)-1]
	var err error
	if h.coarse, err = factorScaled(last.A, true, nil); err != nil {
		if se, ok := err.(*SingularError); ok {
			return nil, &SingularError{Solver: name, Row: se.Row, What: "coarsest level (" + se.What + ")"}
		}
		return nil, err
	}
	report(len(h.levels), fmt.Sprintf("coarsest level %d: %d rows factored", len(h.levels)-1, last.A.N))
	return h, nil
}

// Levels returns the number of levels and, per level, the number of rows
// and nonzeros.
func (h *AMG) Levels() (rows, nnz []int) {
	for _, L := range h.levels {
		rows = append(rows, L.A.N)
		nnz = append(nnz, L.A.NNZ())
	}
	return rows, nnz
}

// OperatorComplexity is Σ_l nnz(A_l) / nnz(A_0), the usual measure of the
// hierarchy's size (Stüben 2001).
func (h *AMG) OperatorComplexity() float64 {
	s := 0.0
	for _, L := range h.levels {
		s += float64(L.A.NNZ())
	}
	return s / float64(h.levels[0].A.NNZ())
}

// Bytes is the memory the hierarchy holds besides the finest matrix:
// coarse matrices, prolongators and restrictions, smoother data, work
// vectors and the coarsest LU factors.
func (h *AMG) Bytes() int64 {
	var s int64
	for l, L := range h.levels {
		if l > 0 {
			s += csrBytes(L.A)
		}
		s += csrBytes(L.P) + csrBytes(L.R) + int64(24*L.A.N)
		if L.sm != nil {
			s += L.sm.bytes()
		}
	}
	return s + h.coarse.bytes()
}

// Solve applies one V-cycle to r with zero initial guess: dst ≈ A⁻¹ r.
func (h *AMG) Solve(dst, r []float64) {
	L := h.levels[0]
	copy(L.b, r)
	h.cycle(0)
	copy(dst, L.x)
}

func (h *AMG) cycle(l int) {
	L := h.levels[l]
	if l == len(h.levels)-1 {
		h.coarse.Solve(L.x, L.b)
		return
	}
	W := max(1, h.opts.Workers)
	clear(L.x)
	for s := 0; s < h.pre; s++ {
		L.sm.pre(L.x, L.b, s == 0)
	}
	residualTo(L.A, L.r, L.b, L.x, W)
	C := h.levels[l+1]
	mulVec(L.R, C.b, L.r, W)
	h.cycle(l + 1)
	mulAddVec(L.P, L.x, C.x, W)
	for s := 0; s < h.post; s++ {
		L.sm.post(L.x, L.b)
	}
}

// aggregate groups the nodes of A (node[i] is the node of dof i, nodes
// numbered 0.. in dof order) by the three phases of Vaněk, Mandel &
// Brezina (1996, §4): it returns the aggregate of every dof (−1 for dofs
// of isolated nodes, which have no strong coupling, such as eliminated
// Dirichlet rows: the smoother alone treats them) and the number of
// aggregates.
func aggregate(S *sparse.CSR, node []int32, ndof int) ([]int32, int) {
	nn := S.N
	agg := make([]int32, nn)
	for i := range agg {
		agg[i] = -1
	}
	const isolated = -2
	for i := 0; i < nn; i++ {
		if S.RowPtr[i+1] == S.RowPtr[i] {
			agg[i] = isolated
		}
	}
	n := int32(0)
	// Phase 1: a root whose strong neighbours are all free takes them.
	for i := 0; i < nn; i++ {
		if agg[i] != -1 {
			continue
		}
		free := true
		for q := S.RowPtr[i]; q < S.RowPtr[i+1]; q++ {
			if agg[S.Col[q]] != -1 {
				free = false
				break
			}
		}
		if !free {
			continue
		}
		agg[i] = n
		for q := S.RowPtr[i]; q < S.RowPtr[i+1]; q++ {
			agg[S.Col[q]] = n
		}
		n++
	}
	// Phase 2: a free node joins the phase-1 aggregate it is most
	// strongly coupled to (ties: the lower aggregate number).
	phase1 := append([]int32(nil), agg...)
	for i := 0; i < nn; i++ {
		if agg[i] != -1 {
			continue
		}
		best, bestV := int32(-1), -1.0
		for q := S.RowPtr[i]; q < S.RowPtr[i+1]; q++ {
			a := phase1[S.Col[q]]
			if a < 0 {
				continue
			}
			if v := S.Val[q]; v > bestV || v == bestV && a < best {
				best, bestV = a, v
			}
		}
		if best >= 0 {
			agg[i] = best
		}
	}
	// Phase 3: what is left forms aggregates with its free neighbours.
	for i := 0; i < nn; i++ {
		if agg[i] != -1 {
			continue
		}
		agg[i] = n
		for q := S.RowPtr[i]; q < S.RowPtr[i+1]; q++ {
			if j := S.Col[q]; agg[j] == -1 {
				agg[j] = n
			}
		}
		n++
	}
	dofAgg := make([]int32, ndof)
	for i := range dofAgg {
		a := agg[node[i]]
		if a < 0 {
			a = -1
		}
		dofAgg[i] = a
	}
	return dofAgg, int(n)
}

// strengthGraph returns the symmetric graph of strong couplings between
// the nodes of A (no diagonal; Val holds the strength
// ‖A_ij‖/√(‖A_ii‖‖A_jj‖) of the node blocks, Frobenius norms). symmetric
// says A is symmetric, so the directed graph is already symmetric.
func strengthGraph(A *sparse.CSR, node []int32, theta float64, symmetric bool, workers int) *sparse.CSR {
	N := nodeMatrix(A, node)
	nn := N.N
	sq := make([]float64, nn)
	for i := 0; i < nn; i++ {
		sq[i] = math.Sqrt(N.At(i, i))
	}
	scalar := N == A // |a_ij| read from A itself
	// Directed strong couplings, row-parallel.
	D := buildRanges(nn, nn, N.NNZ(), workers, func(lo, hi int, cnt []int) ([]int32, []float64) {
		col := make([]int32, 0, N.RowPtr[hi]-N.RowPtr[lo])
		val := make([]float64, 0, N.RowPtr[hi]-N.RowPtr[lo])
		for i := lo; i < hi; i++ {
			start := len(col)
			r := 1 / sq[i]
			for q := N.RowPtr[i]; q < N.RowPtr[i+1]; q++ {
				j := N.Col[q]
				v := N.Val[q]
				if scalar {
					v = math.Abs(v)
				}
				if int(j) == i || v == 0 {
					continue
				}
				if s := v * r / sq[j]; s >= theta {
					col = append(col, j)
					val = append(val, s)
				}
			}
			cnt[i-lo] = len(col) - start
		}
		return col, val
	})
	if symmetric {
		return D
	}
	return unionSym(D)
}

// nodeMatrix returns the matrix of Frobenius norms of the node blocks of A,
// or A itself when every node holds one dof (the caller takes |a_ij|).
func nodeMatrix(A *sparse.CSR, node []int32) *sparse.CSR {
	nn := 0
	for _, v := range node {
		nn = max(nn, int(v)+1)
	}
	scalar := nn == A.N
	for i, v := range node {
		if int(v) != i {
			scalar = false
			break
		}
	}
	if scalar {
		return A // strengthGraph takes |a_ij|
	}
	// Dofs of a node are contiguous in this package's layouts and in the
	// coarse levels; gather the rows of each node and accumulate squares.
	first := make([]int, nn+1)
	for i := range first {
		first[i] = -1
	}
	for i := len(node) - 1; i >= 0; i-- {
		first[node[i]] = i
	}
	first[nn] = len(node)
	N := &sparse.CSR{N: nn, M: nn, RowPtr: make([]int, nn+1)}
	acc := make([]float64, nn)
	mark := make([]int32, nn)
	for i := range mark {
		mark[i] = -1
	}
	var cols []int32
	for v := 0; v < nn; v++ {
		cols = cols[:0]
		for i := first[v]; i < len(node) && int(node[i]) == v; i++ {
			for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
				w := node[A.Col[q]]
				if mark[w] != int32(v) {
					mark[w] = int32(v)
					acc[w] = 0
					cols = append(cols, w)
				}
				acc[w] += A.Val[q] * A.Val[q]
			}
		}
		slices.Sort(cols)
		for _, w := range cols {
			N.Col = append(N.Col, w)
			N.Val = append(N.Val, math.Sqrt(acc[w]))
		}
		N.RowPtr[v+1] = len(N.Col)
	}
	return N
}

// unionSym returns the pattern union of D and Dᵀ with the larger value of
// the two directions.
func unionSym(D *sparse.CSR) *sparse.CSR {
	T := D.Transpose()
	n := D.N
	if slices.Equal(D.RowPtr, T.RowPtr) && slices.Equal(D.Col, T.Col) {
		// Symmetric pattern (the usual case): the larger value of each pair.
		for q, v := range T.Val {
			T.Val[q] = math.Max(v, D.Val[q])
		}
		return T
	}
	S := &sparse.CSR{N: n, M: n, RowPtr: make([]int, n+1), Col: make([]int32, 0, 2*D.NNZ()), Val: make([]float64, 0, 2*D.NNZ())}
	for i := 0; i < n; i++ {
		p, q := D.RowPtr[i], T.RowPtr[i]
		pe, qe := D.RowPtr[i+1], T.RowPtr[i+1]
		for p < pe || q < qe {
			switch {
			case q >= qe || p < pe && D.Col[p] < T.Col[q]:
				S.Col = append(S.Col, D.Col[p])
				S.Val = append(S.Val, D.Val[p])
				p++
			case p >= pe || T.Col[q] < D.Col[p]:
				S.Col = append(S.Col, T.Col[q])
				S.Val = append(S.Val, T.Val[q])
				q++
			default:
				S.Col = append(S.Col, D.Col[p])
				S.Val = append(S.Val, math.Max(D.Val[p], T.Val[q]))
				p++
				q++
			}
		}
		S.RowPtr[i+1] = len(S.Col)
	}
	return S
}

// tentative builds the tentative prolongator of an aggregation: for each
// aggregate, the rows of the near-null-space matrix B (n×k, row-major) at
// its dofs are factored B_a = Q_a R_a by modified Gram–Schmidt applied
// twice (Giraud, Langou, Rozložník & van den Eshof 2005, Numer. Math. 101:
// "twice is enough"); the orthonormal columns of Q_a are the aggregate's
// columns of P_tent and R_a its rows of the coarse near-null-space. A
// column of B_a dependent on the previous ones (relative norm after
// orthogonalisation below 1e-10, e.g. a rotation on an aggregate of one
// node) is dropped, so every coarse dof has a nonzero column. It returns
// P_tent, the coarse B (nc×k), the coarse node of each coarse dof (its
// aggregate) and k.
func tentative(n int, agg []int32, nAgg int, B []float64, k int) (*sparse.CSR, []float64, []int32, int) {
	// Dofs of each aggregate, in increasing order.
	start := make([]int, nAgg+1)
	for _, a := range agg {
		if a >= 0 {
			start[a+1]++
		}
	}
	for a := 0; a < nAgg; a++ {
		start[a+1] += start[a]
	}
	dofs := make([]int32, start[nAgg])
	next := append([]int(nil), start[:nAgg]...)
	for i, a := range agg {
		if a >= 0 {
			dofs[next[a]] = int32(i)
			next[a]++
		}
	}
	// Per aggregate: Q (m×kept) and R (kept×k).
	colStart := make([]int, nAgg+1) // first coarse dof of each aggregate
	qOf := make([][]float64, nAgg)  // m×kept, column-major
	var Bc []float64
	var nodeC []int32
	const dropTol = 1e-10
	if k == 1 {
		// One vector: Q_a = B_a/‖B_a‖, R_a = ‖B_a‖, without allocation per
		// aggregate.
		return tentative1(n, agg, nAgg, B)
	}
	for a := 0; a < nAgg; a++ {
		ds := dofs[start[a]:start[a+1]]
		m := len(ds)
		var Q []float64 // column-major, kept columns
		var R [][]float64
		for c := 0; c < k; c++ {
			v := make([]float64, m)
			for r, i := range ds {
				v[r] = B[int(i)*k+c]
			}
			norm0 := math.Sqrt(dot(v, v))
			coef := make([]float64, len(R))
			for pass := 0; pass < 2; pass++ {
				for j := range R {
					qj := Q[j*m : (j+1)*m]
					s := dot(qj, v)
					coef[j] += s
					for r := range v {
						v[r] -= s * qj[r]
					}
				}
			}
			nv := math.Sqrt(dot(v, v))
			// Coefficients of column c on the kept columns: R[j][c].
			for j := range R {
				R[j][c] = coef[j]
			}
			if norm0 == 0 || nv <= dropTol*norm0 {
				continue
			}
			for r := range v {
				v[r] /= nv
			}
			Q = append(Q, v...)
			row := make([]float64, k)
			row[c] = nv
			R = append(R, row)
		}
		qOf[a] = Q
		colStart[a+1] = colStart[a] + len(R)
		for _, row := range R {
			Bc = append(Bc, row...)
			nodeC = append(nodeC, int32(a))
		}
	}
	nc := colStart[nAgg]
	P := &sparse.CSR{N: n, M: nc, RowPtr: make([]int, n+1)}
	pos := make([]int, n) // row index of dof i within its aggregate
	for a := 0; a < nAgg; a++ {
		for r, i := range dofs[start[a]:start[a+1]] {
			pos[i] = r
		}
	}
	for i := 0; i < n; i++ {
		if a := agg[i]; a >= 0 {
			m := start[a+1] - start[a]
			Q := qOf[a]
			for j := 0; j < colStart[a+1]-colStart[a]; j++ {
				if v := Q[j*m+pos[i]]; v != 0 {
					P.Col = append(P.Col, int32(colStart[a]+j))
					P.Val = append(P.Val, v)
				}
			}
		}
		P.RowPtr[i+1] = len(P.Col)
	}
	return P, Bc, nodeC, k
}

// tentative1 is tentative for a single near-null-space vector.
func tentative1(n int, agg []int32, nAgg int, B []float64) (*sparse.CSR, []float64, []int32, int) {
	norm := make([]float64, nAgg)
	for i, a := range agg {
		if a >= 0 {
			norm[a] += B[i] * B[i]
		}
	}
	// Aggregates whose vector vanishes get no coarse dof.
	id := make([]int32, nAgg)
	var Bc []float64
	var nodeC []int32
	for a, s := range norm {
		id[a] = -1
		if s > 0 {
			norm[a] = math.Sqrt(s)
			id[a] = int32(len(Bc))
			Bc = append(Bc, norm[a])
			nodeC = append(nodeC, int32(a))
		}
	}
	P := &sparse.CSR{N: n, M: len(Bc), RowPtr: make([]int, n+1), Col: make([]int32, 0, n), Val: make([]float64, 0, n)}
	for i, a := range agg {
		if a >= 0 && id[a] >= 0 && B[i] != 0 {
			P.Col = append(P.Col, id[a])
			P.Val = append(P.Val, B[i]/norm[a])
		}
		P.RowPtr[i+1] = len(P.Col)
	}
	return P, Bc, nodeC, 1
}

func dot(x, y []float64) float64 {
	s := 0.0
	for i, v := range x {
		s += v * y[i]
	}
	return s
}

// smoothProlongator returns P = (I − ω D_F⁻¹ A_F) P_tent, A_F the filtered
// matrix (entries between nodes that are not strongly coupled removed and
// added to the diagonal; Vaněk, Mandel & Brezina 1996, §3), ω =
// 4/(3ρ(D_F⁻¹A_F)). rho is the level's estimate of ρ(D⁻¹A)
// (levelRho), shared with the Jacobi smoother; it is capped by the
// Gershgorin bound of D_F⁻¹A_F. (A_F equals A when no nonzero coupling is
// weak, as for the P1 and Q1 Laplacians.)
func smoothProlongator(A, Pt, S *sparse.CSR, node []int32, rho float64, workers int) *sparse.CSR {
	if S.N == A.N && Pt.NNZ() <= A.N {
		return smoothProlongator1(A, Pt, S, rho, workers)
	}
	return smoothProlongatorGeneral(A, Pt, S, node, rho, workers)
}

// smoothProlongatorGeneral is smoothProlongator through the filtered
// matrix A_F and the general sparse product.
func smoothProlongatorGeneral(A, Pt, S *sparse.CSR, node []int32, rho float64, workers int) *sparse.CSR {
	dF := make([]float64, A.N)
	rhoRow := make([]float64, A.N)
	scalar := S.N == A.N
	AF := buildRanges(A.N, A.M, A.NNZ(), workers, func(lo, hi int, cnt []int) ([]int32, []float64) {
		col := make([]int32, 0, A.RowPtr[hi]-A.RowPtr[lo])
		val := make([]float64, 0, A.RowPtr[hi]-A.RowPtr[lo])
		for i := lo; i < hi; i++ {
			start := len(col)
			ni := node[i]
			sp, se := S.RowPtr[ni], S.RowPtr[ni+1] // scalar case: S's row i is a sorted subset of A's
			lumped := 0.0
			diagPos := -1
			for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
				j := A.Col[q]
				nj := node[j]
				strong := nj == ni
				if !strong && scalar {
					for sp < se && S.Col[sp] < nj {
						sp++
					}
					strong = sp < se && S.Col[sp] == nj
				} else if !strong {
					strong = hasCol(S, int(ni), nj)
				}
				if !strong {
					lumped += A.Val[q]
					continue
				}
				if int(j) == i {
					diagPos = len(col)
				}
				col = append(col, j)
				val = append(val, A.Val[q])
			}
			val[diagPos] += lumped
			d := val[diagPos]
			dF[i] = d
			sum := 0.0
			for _, v := range val[start:] {
				sum += math.Abs(v)
			}
			rhoRow[i] = sum / math.Abs(d)
			cnt[i-lo] = len(col) - start
		}
		return col, val
	})
	gersh := 0.0
	for _, r := range rhoRow {
		gersh = math.Max(gersh, r)
	}
	omega := 4 / (3 * math.Min(rho, gersh))
	AP := spgemm(AF, Pt, workers)
	// P = Pt − ω D⁻¹ (A_F Pt), row by row (the pattern of Pt is contained
	// in that of A_F Pt, since A_F has its diagonal).
	forRows(workers, AP.N, AP.NNZ(), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			c := -omega / dF[i]
			p := Pt.RowPtr[i]
			for q := AP.RowPtr[i]; q < AP.RowPtr[i+1]; q++ {
				v := c * AP.Val[q]
				if p < Pt.RowPtr[i+1] && Pt.Col[p] == AP.Col[q] {
					v += Pt.Val[p]
					p++
				}
				AP.Val[q] = v
			}
		}
	})
	return AP
}

// smoothProlongator1 is smoothProlongator for one dof per node and at most
// one entry per row of P_tent (a single near-null-space vector): it forms
// each row of P directly from the rows of A, without the filtered matrix
// and the general product, with the same operations in the same order
// (so the same bits): row i of A_F P_tent sums a^F_ij·(P_tent)_j over the
// kept columns j in order, the diagonal being a_ii plus the weak entries
// of the row.
func smoothProlongator1(A, Pt, S *sparse.CSR, rho float64, workers int) *sparse.CSR {
	n := A.N
	dF := make([]float64, n)
	rhoRow := make([]float64, n)
	// kept reports whether entry q of row i stays in A_F; sp walks S's row.
	kept := func(i, q int, sp *int) bool {
		j := A.Col[q]
		if int(j) == i {
			return true
		}
		for *sp < S.RowPtr[i+1] && S.Col[*sp] < j {
			*sp++
		}
		return *sp < S.RowPtr[i+1] && S.Col[*sp] == j
	}
	// Pass 1: the diagonal of A_F and the Gershgorin sums of D_F⁻¹A_F.
	forRows(workers, n, A.NNZ(), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			sp := S.RowPtr[i]
			lumped, d := 0.0, 0.0
			for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
				switch {
				case !kept(i, q, &sp):
					lumped += A.Val[q]
				case int(A.Col[q]) == i:
					d = A.Val[q]
				}
			}
			d += lumped
			dF[i] = d
			// The row sum in column order, as smoothProlongatorGeneral has it.
			sum := 0.0
			sp = S.RowPtr[i]
			for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
				switch {
				case !kept(i, q, &sp):
				case int(A.Col[q]) == i:
					sum += math.Abs(d)
				default:
					sum += math.Abs(A.Val[q])
				}
			}
			rhoRow[i] = sum / math.Abs(d)
		}
	})
	gersh := 0.0
	for _, r := range rhoRow {
		gersh = math.Max(gersh, r)
	}
	omega := 4 / (3 * math.Min(rho, gersh))
	// Pass 2: the rows of P.
	return buildRanges(n, Pt.M, A.NNZ(), workers, func(lo, hi int, cnt []int) ([]int32, []float64) {
		col := make([]int32, 0, 2*(A.RowPtr[hi]-A.RowPtr[lo])/3+16)
		val := make([]float64, 0, cap(col))
		var rc []int32 // the row's columns in order of first appearance
		var rv []float64
		for i := lo; i < hi; i++ {
			rc, rv = rc[:0], rv[:0]
			sp := S.RowPtr[i]
			for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
				if !kept(i, q, &sp) {
					continue
				}
				j := A.Col[q]
				if Pt.RowPtr[j] == Pt.RowPtr[j+1] {
					continue
				}
				a := A.Val[q]
				if int(j) == i {
					a = dF[i]
				}
				c, t := Pt.Col[Pt.RowPtr[j]], Pt.Val[Pt.RowPtr[j]]
				k := 0
				for k < len(rc) && rc[k] != c {
					k++
				}
				if k == len(rc) {
					rc, rv = append(rc, c), append(rv, a*t)
				} else {
					rv[k] += a * t
				}
			}
			// Sort the columns (insertion sort, carrying the values).
			for x := 1; x < len(rc); x++ {
				for y := x; y > 0 && rc[y-1] > rc[y]; y-- {
					rc[y-1], rc[y] = rc[y], rc[y-1]
					rv[y-1], rv[y] = rv[y], rv[y-1]
				}
			}
			f := -omega / dF[i]
			hasT := Pt.RowPtr[i] < Pt.RowPtr[i+1]
			for k, c := range rc {
				v := f * rv[k]
				if hasT && c == Pt.Col[Pt.RowPtr[i]] {
					v += Pt.Val[Pt.RowPtr[i]]
				}
				col, val = append(col, c), append(val, v)
			}
			cnt[i-lo] = len(rc)
		}
		return col, val
	})
}

// LanczosSteps is the number of Lanczos steps of the estimate of
// ρ(D⁻¹A) for symmetric A (common practice, no source for the value: the
// largest Ritz value of a Laplacian-like matrix comes within 5–10 % of ρ
// in a few steps; measured at 256² 1.90 for the P1 and 1.42 for the Q1
// Laplacian, whose ρ are 2 and 3/2, and the same CG iteration counts as
// with ten steps).
const LanczosSteps = 6

// spectralRadius estimates ρ(D⁻¹A), d the diagonal of A. For symmetric A
// it is the largest Ritz value of LanczosSteps steps of the Lanczos
// method (Lanczos 1950, J. Res. Nat. Bur. Standards 45; Golub & Van Loan
// 2013, §10.1) on the symmetric D^(−1/2) A D^(−1/2), which has the
// spectrum of D⁻¹A, started from a fixed vector with entries in [0.5,
// 1.5); the Ritz value approaches ρ from below. The result is capped by
// gersh, the Gershgorin bound max_i Σ_j |a_ij|/|a_ii|, which is also the
// estimate for nonsymmetric A. The bound alone is sharp for the P1
// Laplacian but 4/3 of ρ for Q1 (2 against 3/2), which would under-damp
// the prolongator (ω = 2/3 instead of 8/9) and cost iterations.
// Deterministic: the passes are row-parallel, and the inner products sum
// fixed blocks of rows, then the blocks in order.
func spectralRadius(A *sparse.CSR, d []float64, gersh float64, symmetric bool, workers int) float64 {
	if !symmetric {
		return gersh
	}
	n := A.N
	s := make([]float64, n) // D^(−1/2)
	for i, v := range d {
		s[i] = 1 / math.Sqrt(math.Abs(v))
	}
	v := make([]float64, n)
	for i := range v {
		v[i] = 0.5 + float64(uint32(i)*2654435761%1000)/1000 // Knuth's multiplicative hash
	}
	scale(v, 1/math.Sqrt(dot(v, v)))
	vPrev := make([]float64, n)
	u := make([]float64, n)
	w := make([]float64, n)
	// Sums are taken over fixed blocks of sumBlock rows, then over the
	// blocks in order, so they do not depend on the number of workers.
	const sumBlock = 4096
	nb := (n + sumBlock - 1) / sumBlock
	part := make([]float64, nb)
	blockSum := func() float64 {
		t := 0.0
		for _, p := range part {
			t += p
		}
		return t
	}
	rp, col, val := A.RowPtr, A.Col, A.Val
	var alpha, beta []float64
	for i := range u {
		u[i] = s[i] * v[i]
	}
	// v (and u = D^(−1/2) v) are stored unnormalised; vScale is the
	// pending factor, applied as the rows are read.
	vScale := 1.0
	for k := 0; k < LanczosSteps; k++ {
		// w = S v, v normalised, and the block sums of wᵀv, in one pass.
		forRows(workers, nb, A.NNZ(), func(lo, hi int) {
			for b := lo; b < hi; b++ {
				t := 0.0
				for i := b * sumBlock; i < min(n, (b+1)*sumBlock); i++ {
					acc := 0.0
					for q := rp[i]; q < rp[i+1]; q++ {
						acc += val[q] * u[col[q]]
					}
					v[i] *= vScale
					w[i] = s[i] * acc * vScale
					t += w[i] * v[i]
				}
				part[b] = t
			}
		})
		a := blockSum()
		b0 := 0.0
		if k > 0 {
			b0 = beta[k-1]
		}
		// w −= a v + b0 v_prev, u = D^(−1/2) w and the block sums of wᵀw.
		forRows(workers, nb, n, func(lo, hi int) {
			for b := lo; b < hi; b++ {
				t := 0.0
				for i := b * sumBlock; i < min(n, (b+1)*sumBlock); i++ {
					w[i] -= a*v[i] + b0*vPrev[i]
					u[i] = s[i] * w[i]
					t += w[i] * w[i]
				}
				part[b] = t
			}
		})
		alpha = append(alpha, a)
		bk := math.Sqrt(blockSum())
		if !finite(bk) || !finite(a) {
			return gersh
		}
		if bk <= 1e-12*math.Abs(a) {
			break // invariant subspace: T is exact
		}
		beta = append(beta, bk)
		vPrev, v, w = v, w, vPrev
		vScale = 1 / bk
	}
	est := largestTridiagEigen(alpha, beta)
	if !(est > 0) || est > gersh {
		return gersh
	}
	return est
}

// levelRho is spectralRadius of A with its diagonal and Gershgorin bound.
func levelRho(A *sparse.CSR, symmetric bool, workers int) float64 {
	d := A.Diagonal(nil)
	gersh := 0.0
	for i := 0; i < A.N; i++ {
		s := 0.0
		for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
			s += math.Abs(A.Val[q])
		}
		gersh = math.Max(gersh, s/math.Abs(d[i]))
	}
	return spectralRadius(A, d, gersh, symmetric, workers)
}

func scale(x []float64, a float64) {
	for i := range x {
		x[i] *= a
	}
}

// largestTridiagEigen returns the largest eigenvalue of the symmetric
// tridiagonal matrix with diagonal a and off-diagonal b (len(b) ≥
// len(a)−1) by bisection on the Sturm sequence count (Golub & Van Loan
// 2013, §8.4.1), to full precision.
func largestTridiagEigen(a, b []float64) float64 {
	m := len(a)
	lo, hi := math.Inf(1), math.Inf(-1)
	for i := 0; i < m; i++ {
		r := 0.0
		if i > 0 {
			r += math.Abs(b[i-1])
		}
		if i < m-1 {
			r += math.Abs(b[i])
		}
		lo, hi = math.Min(lo, a[i]-r), math.Max(hi, a[i]+r)
	}
	// count(x): number of eigenvalues below x.
	count := func(x float64) int {
		c, q := 0, 1.0
		for i := 0; i < m; i++ {
			bb := 0.0
			if i > 0 {
				bb = b[i-1] * b[i-1]
			}
			q = a[i] - x - bb/q
			if q == 0 {
				q = 1e-300
			}
			if q < 0 {
				c++
			}
		}
		return c
	}
	for k := 0; k < 200 && hi-lo > 1e-12*math.Max(1, math.Abs(hi)); k++ {
		mid := (lo + hi) / 2
		if count(mid) < m {
			lo = mid // the largest eigenvalue is above mid
		} else {
			hi = mid
		}
	}
	return hi
}

// hasCol reports whether row i of S has column j (binary search).
func hasCol(S *sparse.CSR, i int, j int32) bool {
	lo, hi := S.RowPtr[i], S.RowPtr[i+1]
	for lo < hi {
		m := int(uint(lo+hi) >> 1)
		if S.Col[m] < j {
			lo = m + 1
		} else {
			hi = m
		}
	}
	return lo < S.RowPtr[i+1] && S.Col[lo] == j
}
