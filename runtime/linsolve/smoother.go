package linsolve

import (
	"github.com/formwright/formwright/runtime/sparse"
)

// smoother is the relaxation of one AMG level. pre is called first with
// x = 0 (zero true), then with the current x; post after the coarse
// correction.
type smoother interface {
	pre(x, b []float64, zero bool)
	post(x, b []float64)
	bytes() int64
}

func newSmoother(kind Smoother, A *sparse.CSR, workers int, shift, rho float64) (smoother, error) {
	inv := make([]float64, A.N)
	for i := range inv {
		inv[i] = 1 / A.At(i, i)
	}
	switch kind {
	case SmoothSymGS:
		return newColourGS(A, inv, workers), nil
	case SmoothJacobi:
		return &jacobiSmoother{A: A, inv: inv, omega: 4 / (3 * rho), r: make([]float64, A.N), workers: workers}, nil
	case SmoothGS:
		return &gsSmoother{A: A, inv: inv}, nil
	case SmoothILU0:
		f, err := NewILU0Shifted(A, shift)
		if err != nil {
			return nil, err
		}
		return &iluSmoother{A: A, f: f, r: make([]float64, A.N), d: make([]float64, A.N)}, nil
	}
	panic("linsolve: unknown Smoother")
}

// jacobiSmoother is damped Jacobi with ω = 4/(3ρ(D⁻¹A)), ρ estimated by
// levelRho; 4/3 of the reciprocal spectral radius is the
// damping usual in smoothed aggregation (Vaněk, Mandel & Brezina 1996),
// which damps the upper two thirds of the spectrum of D⁻¹A by at least
// a factor 3 [memory].
type jacobiSmoother struct {
	A       *sparse.CSR
	inv     []float64
	omega   float64
	r       []float64
	workers int
}

func (s *jacobiSmoother) pre(x, b []float64, zero bool) {
	if zero {
		forRows(s.workers, len(x), len(x), func(lo, hi int) {
			for i := lo; i < hi; i++ {
				x[i] = s.omega * s.inv[i] * b[i]
			}
		})
		return
	}
	s.post(x, b)
}

// post computes the new iterate into s.r in one pass over A, then copies
// it back; both passes are row-parallel.
func (s *jacobiSmoother) post(x, b []float64) {
	A, r := s.A, s.r
	rp, col, val := A.RowPtr, A.Col, A.Val
	forRows(s.workers, A.N, A.NNZ(), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			t := b[i]
			for q := rp[i]; q < rp[i+1]; q++ {
				t -= val[q] * x[col[q]]
			}
			r[i] = x[i] + s.omega*s.inv[i]*t
		}
	})
	forRows(s.workers, A.N, A.N, func(lo, hi int) { copy(x[lo:hi], r[lo:hi]) })
}

func (s *jacobiSmoother) bytes() int64 { return int64(16 * s.A.N) }

// colourGS is multicolour Gauss–Seidel: a greedy colouring in row order
// (each row takes the smallest colour none of its neighbours in the
// pattern of A has), forward sweeps over the colours in pre-smoothing and
// backward in post-smoothing, so the pair is symmetric (Saad 2003, §12.4
// on multicolour orderings [memory]). The rows of one colour are mutually
// uncoupled, so they are updated in parallel with a result that does not
// depend on the number of workers. The off-diagonal entries are copied
// into a matrix whose rows are grouped by colour (C), so a sweep streams
// through it; memory: 12 bytes per off-diagonal entry and 12 per row.
type colourGS struct {
	C       *sparse.CSR // off-diagonal part of A, row p = row rows[p] of A
	inv     []float64   // 1/a_ii in the order of C's rows
	rows    []int32     // rows grouped by colour
	start   []int       // colour c: positions start[c]..start[c+1]−1
	workers int
}

func newColourGS(A *sparse.CSR, inv []float64, workers int) *colourGS {
	n := A.N
	// Colour with the pattern of A; finite-element matrices and their
	// Galerkin products have symmetric patterns, so that suffices unless
	// the check below finds two coupled rows of one colour, in which case
	// the colouring is redone with the pattern of A + Aᵀ.
	colour, nc := greedyColour(A, nil)
	for i := 0; i < n; i++ {
		for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
			if j := int(A.Col[q]); j != i && colour[j] == colour[i] {
				colour, nc = greedyColour(A, A.Transpose())
				i = n
				break
			}
		}
	}
	g := &colourGS{start: make([]int, nc+1), rows: make([]int32, n), workers: workers}
	for _, c := range colour {
		g.start[c+1]++
	}
	for c := 0; c < nc; c++ {
		g.start[c+1] += g.start[c]
	}
	next := append([]int(nil), g.start[:nc]...)
	for i, c := range colour {
		g.rows[next[c]] = int32(i)
		next[c]++
	}
	g.inv = make([]float64, n)
	C := &sparse.CSR{N: n, M: n, RowPtr: make([]int, n+1), Col: make([]int32, 0, A.NNZ()-n), Val: make([]float64, 0, A.NNZ()-n)}
	for p, r := range g.rows {
		i := int(r)
		g.inv[p] = inv[i]
		for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
			if int(A.Col[q]) != i {
				C.Col = append(C.Col, A.Col[q])
				C.Val = append(C.Val, A.Val[q])
			}
		}
		C.RowPtr[p+1] = len(C.Col)
	}
	g.C = C
	return g
}

// greedyColour gives each row in turn the smallest colour not taken by a
// row it is coupled to in the pattern of A (and of T, if not nil).
func greedyColour(A, T *sparse.CSR) ([]int32, int) {
	n := A.N
	colour := make([]int32, n)
	for i := range colour {
		colour[i] = -1
	}
	var used []int32 // used[c] == i: colour c taken by a neighbour of i
	nc := 0
	for i := 0; i < n; i++ {
		for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
			if c := colour[A.Col[q]]; c >= 0 {
				used[c] = int32(i)
			}
		}
		if T != nil {
			for q := T.RowPtr[i]; q < T.RowPtr[i+1]; q++ {
				if c := colour[T.Col[q]]; c >= 0 {
					used[c] = int32(i)
				}
			}
		}
		c := 0
		for c < nc && used[c] == int32(i) {
			c++
		}
		if c == nc {
			nc++
			used = append(used, -1)
		}
		colour[i] = int32(c)
	}
	return colour, nc
}

func (g *colourGS) sweep(x, b []float64, c int) {
	lo0, hi0 := g.start[c], g.start[c+1]
	rp, col, val := g.C.RowPtr, g.C.Col, g.C.Val
	forRows(g.workers, hi0-lo0, rp[hi0]-rp[lo0]+hi0-lo0, func(lo, hi int) {
		for p := lo0 + lo; p < lo0+hi; p++ {
			i := g.rows[p]
			s := b[i]
			for q := rp[p]; q < rp[p+1]; q++ {
				s -= val[q] * x[col[q]]
			}
			x[i] = s * g.inv[p]
		}
	})
}

func (g *colourGS) pre(x, b []float64, zero bool) {
	for c := 0; c < len(g.start)-1; c++ {
		g.sweep(x, b, c)
	}
}

func (g *colourGS) post(x, b []float64) {
	for c := len(g.start) - 2; c >= 0; c-- {
		g.sweep(x, b, c)
	}
}

func (g *colourGS) bytes() int64 { return csrBytes(g.C) + int64(12*len(g.rows)+8*len(g.start)) }

// gsSmoother is forward lexicographic Gauss–Seidel in pre- and
// post-smoothing.
type gsSmoother struct {
	A   *sparse.CSR
	inv []float64
}

func (g *gsSmoother) pre(x, b []float64, zero bool) { g.post(x, b) }

func (g *gsSmoother) post(x, b []float64) {
	rp, col, val := g.A.RowPtr, g.A.Col, g.A.Val
	for i := 0; i < g.A.N; i++ {
		s := b[i]
		for q := rp[i]; q < rp[i+1]; q++ {
			if j := int(col[q]); j != i {
				s -= val[q] * x[j]
			}
		}
		x[i] = s * g.inv[i]
	}
}

func (g *gsSmoother) bytes() int64 { return int64(8 * g.A.N) }

// iluSmoother relaxes by x += (LU)⁻¹ (b − A x) with the ILU(0) factors.
type iluSmoother struct {
	A    *sparse.CSR
	f    *ILU0
	r, d []float64
}

func (s *iluSmoother) pre(x, b []float64, zero bool) {
	if zero {
		s.f.Solve(x, b)
		return
	}
	s.post(x, b)
}

func (s *iluSmoother) post(x, b []float64) {
	residualTo(s.A, s.r, b, x, 1)
	s.f.Solve(s.d, s.r)
	for i, v := range s.d {
		x[i] += v
	}
}

func (s *iluSmoother) bytes() int64 { return s.f.Bytes() + int64(16*s.A.N) }
