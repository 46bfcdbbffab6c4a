package linsolve

import (
	"math"
	"math/rand/v2"

	"github.com/formwright/formwright/runtime/sparse"
	"gonum.org/v1/gonum/mat"
)

// builder accumulates a matrix row by row (rows in order, columns sorted).
type builder struct{ A *sparse.CSR }

func newBuilder(n int) *builder {
	return &builder{&sparse.CSR{N: n, M: n, RowPtr: make([]int, 1, n+1)}}
}
func (b *builder) add(j int, v float64) {
	b.A.Col = append(b.A.Col, int32(j))
	b.A.Val = append(b.A.Val, v)
}
func (b *builder) endRow() { b.A.RowPtr = append(b.A.RowPtr, len(b.A.Col)) }

// laplace2D is the 5-point finite-difference Laplacian (times h²) on an
// m×m interior grid with Dirichlet boundaries: SPD, condition ~ (2m/π)².
func laplace2D(m int) *sparse.CSR {
	b := newBuilder(m * m)
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			r := j*m + i
			if j > 0 {
				b.add(r-m, -1)
			}
			if i > 0 {
				b.add(r-1, -1)
			}
			b.add(r, 4)
			if i < m-1 {
				b.add(r+1, -1)
			}
			if j < m-1 {
				b.add(r+m, -1)
			}
			b.endRow()
		}
	}
	return b.A
}

// convDiff2D discretises −Δu + a·∇u on an m×m interior grid, h = 1/(m+1),
// with first-order upwind differences for a = (ax, ay) > 0 (times h²):
// a nonsymmetric M-matrix.
func convDiff2D(m int, ax, ay float64) *sparse.CSR {
	h := 1 / float64(m+1)
	b := newBuilder(m * m)
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			r := j*m + i
			if j > 0 {
				b.add(r-m, -1-ay*h)
			}
			if i > 0 {
				b.add(r-1, -1-ax*h)
			}
			b.add(r, 4+(ax+ay)*h)
			if i < m-1 {
				b.add(r+1, -1)
			}
			if j < m-1 {
				b.add(r+m, -1)
			}
			b.endRow()
		}
	}
	return b.A
}

// convDiff1D discretises −u″ + a u′ on n interior points with upwinding.
func convDiff1D(n int, a float64) *sparse.CSR {
	h := 1 / float64(n+1)
	b := newBuilder(n)
	for i := 0; i < n; i++ {
		if i > 0 {
			b.add(i-1, -1-a*h)
		}
		b.add(i, 2+a*h)
		if i < n-1 {
			b.add(i+1, -1)
		}
		b.endRow()
	}
	return b.A
}

// randSPD returns B Bᵀ + n I for a random sparse B: SPD, well conditioned.
func randSPD(rng *rand.Rand, n int) *sparse.CSR {
	B := mat.NewDense(n, n, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			if rng.Float64() < 0.2 {
				B.Set(i, j, rng.NormFloat64())
			}
		}
	}
	var S mat.Dense
	S.Mul(B, B.T())
	for i := 0; i < n; i++ {
		S.Set(i, i, S.At(i, i)+float64(n))
	}
	return sparse.FromDense(&S, 0)
}

// randDD returns a random sparse nonsymmetric strictly diagonally dominant
// matrix.
func randDD(rng *rand.Rand, n int) *sparse.CSR {
	D := mat.NewDense(n, n, nil)
	for i := 0; i < n; i++ {
		s := 0.0
		for j := 0; j < n; j++ {
			if j != i && rng.Float64() < 0.25 {
				v := rng.NormFloat64()
				D.Set(i, j, v)
				s += math.Abs(v)
			}
		}
		D.Set(i, i, (1+rng.Float64())*(s+1)*sign(rng))
	}
	return sparse.FromDense(D, 0)
}

func sign(rng *rand.Rand) float64 {
	if rng.IntN(2) == 0 {
		return -1
	}
	return 1
}

func randVec(rng *rand.Rand, n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = rng.NormFloat64()
	}
	return v
}

// denseSolve is the independent reference: gonum's dense LU with partial
// pivoting (mat.LU via mat.Dense.Solve).
func denseSolve(A *sparse.CSR, b []float64) []float64 {
	var x mat.VecDense
	if err := x.SolveVec(A.ToDense(), mat.NewVecDense(len(b), append([]float64(nil), b...))); err != nil {
		panic(err)
	}
	return x.RawVector().Data
}

func relErr(x, ref []float64) float64 {
	num, den := 0.0, 0.0
	for i := range x {
		num += (x[i] - ref[i]) * (x[i] - ref[i])
		den += ref[i] * ref[i]
	}
	return math.Sqrt(num / den)
}

func explicitRelres(A *sparse.CSR, b, x []float64) float64 {
	r := make([]float64, len(b))
	A.MulVec(r, x)
	num, den := 0.0, 0.0
	for i := range r {
		num += (b[i] - r[i]) * (b[i] - r[i])
		den += b[i] * b[i]
	}
	return math.Sqrt(num / den)
}
