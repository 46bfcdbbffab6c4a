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
	// SmoothJacobi is damped Jacobi, x += ω D⁻¹ (b − A x) with
	// ω = 4/(3ρ(D⁻¹A)), ρ from spectralRadius: symmetric (usable with CG)
	// and fully parallel; it streams through memory, which made it the
	// fastest in time on the P1 benchmarks although it needs a few more
	// iterations than SmoothSymGS (BenchmarkSolveP1Ratios).
	SmoothJacobi Smoother = iota
	// SmoothSymGS is multicolour Gauss–Seidel: rows are greedily coloured
	// so that no two rows of a colour are coupled, pre-smoothing sweeps
	// the colours forward and post-smoothing backward, so the V-cycle is
	// symmetric (usable with CG). Rows of one colour are updated in
	// parallel; the result does not depend on the number of workers.
	SmoothSymGS
	// SmoothGS is lexicographic Gauss–Seidel, forward in both pre- and
	// post-smoothing (not symmetric: use with GMRES). For advection
	// problems whose dofs are numbered roughly along the flow, the
	// forward sweep follows the flow. Serial.
	SmoothGS
	// SmoothILU0 relaxes with the ILU(0) factors of each level,
	// x += (LU)⁻¹ (b − A x) (not symmetric: use with GMRES). Serial.
	SmoothILU0
)

var smootherNames = [...]string{SmoothJacobi: "jacobi", SmoothSymGS: "sym-gs", SmoothGS: "gs", SmoothILU0: "ilu0"}

func (s Smoother) String() string {
	if s >= 0 && int(s) < len(smootherNames) {
		return smootherNames[s]
	}
	return fmt.Sprintf("Smoother(%d)", int(s))
}

// Defaults of AMGOptions.
const (
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
// zero value is the symmetric V(1,1) cycle with damped Jacobi smoothing,
// smoothed prolongators and the defaults above.
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
	// spares the setup the symmetrisation of the strength graph.
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
		S := strengthGraph(cur, node, theta, opts.Symmetric, W)
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
			P = smoothProlongator(cur, Pt, S, node, opts.Symmetric, W)
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
		if L.sm, err = newSmoother(opts.Smoother, L.A, W, opts.ILUShift, opts.Symmetric); err != nil {
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
	D := buildRows(nn, nn, N.NNZ(), workers, func(i int, col []int32, val []float64) int {
		c := 0
		for q := N.RowPtr[i]; q < N.RowPtr[i+1]; q++ {
			j := N.Col[q]
			v := N.Val[q]
			if scalar {
				v = math.Abs(v)
			}
			if int(j) == i || v == 0 {
				continue
			}
			if s := v / (sq[i] * sq[j]); s >= theta {
				if col != nil {
					col[c], val[c] = j, s
				}
				c++
			}
		}
		return c
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
// 4/(3ρ(D_F⁻¹A_F)) with ρ from spectralRadius.
func smoothProlongator(A, Pt, S *sparse.CSR, node []int32, symmetric bool, workers int) *sparse.CSR {
	dF := make([]float64, A.N)
	rhoRow := make([]float64, A.N)
	scalar := S.N == A.N
	// strongAt reports whether entry q of row i of A is kept in A_F.
	strongAt := func(i, q int, sp *int) bool {
		ni, nj := node[i], node[A.Col[q]]
		if nj == ni {
			return true
		}
		if !scalar {
			return hasCol(S, int(ni), nj)
		}
		for *sp < S.RowPtr[ni+1] && S.Col[*sp] < nj {
			*sp++
		}
		return *sp < S.RowPtr[ni+1] && S.Col[*sp] == nj
	}
	AF := buildRows(A.N, A.M, A.NNZ(), workers, func(i int, col []int32, val []float64) int {
		sp := S.RowPtr[node[i]]
		c := 0
		if col == nil {
			for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
				if strongAt(i, q, &sp) {
					c++
				}
			}
			return c
		}
		lumped := 0.0
		diagPos := -1
		for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
			if !strongAt(i, q, &sp) {
				lumped += A.Val[q]
				continue
			}
			if int(A.Col[q]) == i {
				diagPos = c
			}
			col[c], val[c] = A.Col[q], A.Val[q]
			c++
		}
		val[diagPos] += lumped
		d := val[diagPos]
		dF[i] = d
		sum := 0.0
		for _, v := range val {
			sum += math.Abs(v)
		}
		rhoRow[i] = sum / math.Abs(d)
		return c
	})
	gersh := 0.0
	for _, r := range rhoRow {
		gersh = math.Max(gersh, r)
	}
	omega := 4 / (3 * spectralRadius(AF, dF, gersh, symmetric, workers))
	AP := spgemm(AF, Pt, workers)
	// P = Pt − ω D⁻¹ (A_F Pt), row by row (the pattern of Pt is contained
	// in that of A_F Pt, since A_F has its diagonal).
	for i := 0; i < AP.N; i++ {
		d := dF[i]
		p := Pt.RowPtr[i]
		for q := AP.RowPtr[i]; q < AP.RowPtr[i+1]; q++ {
			v := -omega / d * AP.Val[q]
			if p < Pt.RowPtr[i+1] && Pt.Col[p] == AP.Col[q] {
				v += Pt.Val[p]
				p++
			}
			AP.Val[q] = v
		}
	}
	return AP
}

// PowerSteps is the number of power-iteration steps of the estimate of
// ρ(D⁻¹A) (common practice, no source for the value: the estimate of the
// top of a Laplacian's spectrum settles within a few per cent in a dozen
// steps, because many eigenvalues crowd there).
const PowerSteps = 12

// spectralRadius estimates ρ(D⁻¹A), d the diagonal of A, by PowerSteps
// steps of the power method from a fixed vector with entries in [0.5,
// 1.5): the last Rayleigh quotient (x, Ax)/(x, Dx) when A is symmetric
// (D⁻¹A is then self-adjoint in the D inner product, and the quotient
// approaches ρ from below), the last norm ratio ‖D⁻¹Ax‖/‖x‖ otherwise. The
// estimate is capped by gersh, the Gershgorin bound max_i Σ_j
// |a_ij|/|a_ii|, which never underestimates. For the Q1 Laplacian the
// bound is 2 while ρ = 3/2, so the cap alone would under-damp the
// prolongator (ω = 2/3 instead of 8/9). Deterministic: the products are
// row-parallel and the sums serial.
func spectralRadius(A *sparse.CSR, d []float64, gersh float64, symmetric bool, workers int) float64 {
	n := A.N
	x := make([]float64, n)
	y := make([]float64, n)
	for i := range x {
		x[i] = 0.5 + float64(uint32(i)*2654435761%1000)/1000 // Knuth's multiplicative hash
	}
	est := 0.0
	for k := 0; k < PowerSteps; k++ {
		mulVec(A, y, x, workers)
		num, den := 0.0, 0.0
		if symmetric {
			for i := range x {
				num += x[i] * y[i]
				den += x[i] * d[i] * x[i]
			}
		}
		ny := 0.0
		for i := range y {
			y[i] /= d[i]
			ny += y[i] * y[i]
		}
		nx := math.Sqrt(dot(x, x))
		ny = math.Sqrt(ny)
		if ny == 0 || !finite(ny) {
			return gersh
		}
		if symmetric {
			est = num / den
		} else {
			est = ny / nx
		}
		for i := range x {
			x[i] = y[i] / ny
		}
	}
	if !(est > 0) || est > gersh {
		return gersh
	}
	return est
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
