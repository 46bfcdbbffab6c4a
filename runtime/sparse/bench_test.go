package sparse

import (
	"math/rand/v2"
	"runtime"
	"testing"
)

var sinkCSR *CSR
var sinkFloat float64

// laplace5 returns the 5-point Laplacian on an m×m grid (n = m² rows).
func laplace5(m int) *CSR {
	n := m * m
	A := &CSR{N: n, M: n, RowPtr: make([]int, n+1), Col: make([]int32, 0, 5*n), Val: make([]float64, 0, 5*n)}
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			r := j*m + i
			add := func(c int, v float64) { A.Col = append(A.Col, int32(c)); A.Val = append(A.Val, v) }
			if j > 0 {
				add(r-m, -1)
			}
			if i > 0 {
				add(r-1, -1)
			}
			add(r, 4)
			if i < m-1 {
				add(r+1, -1)
			}
			if j < m-1 {
				add(r+m, -1)
			}
			A.RowPtr[r+1] = len(A.Col)
		}
	}
	return A
}

func benchMulVec(b *testing.B, m, workers int) {
	A := laplace5(m)
	rng := rand.New(rand.NewPCG(1, 1))
	x := make([]float64, A.N)
	for i := range x {
		x[i] = rng.Float64()
	}
	y := make([]float64, A.N)
	b.SetBytes(int64(12*A.NNZ() + 8*A.N*3))
	b.ResetTimer()
	for b.Loop() {
		A.MulVecParallel(y, x, workers)
	}
	sinkFloat = y[0]
}

// 10^6 rows: 1000×1000 grid.
func BenchmarkMulVec1e6Serial(b *testing.B)    { benchMulVec(b, 1000, 1) }
func BenchmarkMulVec1e6Parallel2(b *testing.B) { benchMulVec(b, 1000, 2) }

// benchPattern builds the P1 pattern of a triangulated m×m grid (2m² cells)
// and reports bytes of the result per nonzero and transient bytes
// allocated per nonzero.
func benchPattern(b *testing.B, m int) {
	tris := triMesh(m, m)
	n := (m + 1) * (m + 1)
	var A *CSR
	var ms0, ms1 runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&ms0)
	b.ResetTimer()
	for b.Loop() {
		A = PatternFromElements(n, len(tris), func(e int, buf []int32) []int32 { return append(buf, tris[e][:]...) })
	}
	b.StopTimer()
	runtime.ReadMemStats(&ms1)
	nnz := float64(A.NNZ())
	b.ReportMetric(float64(8*(A.N+1)+12*A.NNZ())/nnz, "result-B/nnz")
	b.ReportMetric(float64(ms1.TotalAlloc-ms0.TotalAlloc)/float64(b.N)/nnz, "alloc-B/nnz")
	sinkCSR = A
}

// 10^6 cells: 708×708 grid of squares, 2 triangles each (1.0025e6 cells).
func BenchmarkPattern1e6Cells(b *testing.B) { benchPattern(b, 708) }
func BenchmarkPattern2e4Cells(b *testing.B) { benchPattern(b, 100) }
