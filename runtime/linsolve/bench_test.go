package linsolve

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/formwright/formwright/runtime/sparse"
)

var sinkResult Result

// p1Laplace returns the P1 stiffness matrix of −Δ on a unit square
// triangulated as an (m−1)×(m−1) grid of squares cut along one diagonal
// (m×m nodes), with the boundary rows eliminated symmetrically: an SPD
// system with the 7-point P1 pattern.
func p1Laplace(m int) *sparse.CSR {
	nx := m - 1
	n := m * m
	var tris [][3]int32
	node := func(i, j int) int32 { return int32(j*m + i) }
	for j := 0; j < nx; j++ {
		for i := 0; i < nx; i++ {
			a, b, c, d := node(i, j), node(i+1, j), node(i+1, j+1), node(i, j+1)
			tris = append(tris, [3]int32{a, b, c}, [3]int32{a, c, d})
		}
	}
	A := sparse.PatternFromElements(n, len(tris), func(e int, buf []int32) []int32 { return append(buf, tris[e][:]...) })
	// On this right-angled mesh the element stiffness of both triangle
	// types is the same 1/2·[[1,-1,0],[-1,2,-1],[0,-1,1]] up to vertex
	// order; compute it generically from the vertex coordinates.
	var pos []int
	ke := make([]float64, 9)
	for _, tr := range tris {
		var x, y [3]float64
		for a := 0; a < 3; a++ {
			x[a], y[a] = float64(int(tr[a])%m), float64(int(tr[a])/m)
		}
		area := 0.5 * ((x[1]-x[0])*(y[2]-y[0]) - (x[2]-x[0])*(y[1]-y[0]))
		for a := 0; a < 3; a++ {
			ba, ca := y[(a+1)%3]-y[(a+2)%3], x[(a+2)%3]-x[(a+1)%3]
			for b := 0; b < 3; b++ {
				bb, cb := y[(b+1)%3]-y[(b+2)%3], x[(b+2)%3]-x[(b+1)%3]
				ke[a*3+b] = (ba*bb + ca*cb) / (4 * area)
			}
		}
		pos = A.ScatterIndex(tr[:], pos)
		A.AddScatter(pos, ke)
	}
	fixed := make([]bool, n)
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			fixed[j*m+i] = i == 0 || j == 0 || i == m-1 || j == m-1
		}
	}
	A.EliminateRows(fixed, make([]float64, n), make([]float64, n), true)
	return A
}

func benchSolve(b *testing.B, A *sparse.CSR, opts Options) {
	rng := rand.New(rand.NewPCG(1, 2))
	rhs := randVec(rng, A.N)
	x := make([]float64, A.N)
	b.ResetTimer()
	for b.Loop() {
		for i := range x {
			x[i] = 0
		}
		res, err := Solve(A, rhs, x, opts)
		if err != nil {
			b.Fatal(err)
		}
		sinkResult = res
	}
	b.ReportMetric(float64(sinkResult.Iterations), "iters")
	b.ReportMetric(-math.Log10(sinkResult.Residual), "-log10relres")
}

// 2D 5-point Laplacian at 256² unknowns, relative tolerance 1e-8.
func BenchmarkCGILU0Laplace256(b *testing.B) {
	benchSolve(b, laplace2D(256), Options{Method: MethodCG, Precond: PrecondILU0, RelTol: 1e-8})
}
func BenchmarkGMRESILU0Laplace256(b *testing.B) {
	benchSolve(b, laplace2D(256), Options{Method: MethodGMRES, Precond: PrecondILU0, RelTol: 1e-8, Restart: 50})
}
func BenchmarkBiCGStabILU0Laplace256(b *testing.B) {
	benchSolve(b, laplace2D(256), Options{Method: MethodBiCGStab, Precond: PrecondILU0, RelTol: 1e-8})
}

// Direct solver on P1 meshes of m×m nodes (m = 200: 4·10⁴ unknowns).
func BenchmarkDirectP1_100(b *testing.B) {
	benchSolve(b, p1Laplace(100), Options{Method: MethodDirect})
}
func BenchmarkDirectP1_200(b *testing.B) {
	benchSolve(b, p1Laplace(200), Options{Method: MethodDirect})
}
func BenchmarkDirectConvDiff2D_200(b *testing.B) {
	benchSolve(b, convDiff2D(200, 100, 50), Options{Method: MethodDirect})
}

// Factorisation alone, reporting RCM bandwidth and factor storage.
func BenchmarkFactorP1_200(b *testing.B) {
	A := p1Laplace(200)
	perm := RCM(A)
	var f *BandLU
	var err error
	b.ResetTimer()
	for b.Loop() {
		if f, err = FactorBandLU(A, perm); err != nil {
			b.Fatal(err)
		}
	}
	kl, ku := f.Bandwidths()
	b.ReportMetric(float64(kl), "kl")
	b.ReportMetric(float64(ku), "ku")
	b.ReportMetric(float64(f.Bytes())/(1<<20), "factor-MiB")
}

func benchFactor(b *testing.B, A *sparse.CSR, order string) {
	var perm []int
	switch order {
	case "nd":
		perm = NestedDissection(A)
	case "rcm":
		perm = RCM(A)
	}
	var f *SparseLU
	var err error
	b.ResetTimer()
	for b.Loop() {
		if f, err = FactorSparseLU(A, perm, 0); err != nil {
			b.Fatal(err)
		}
	}
	l, u := f.NNZ()
	b.ReportMetric(float64(l+u)/float64(A.NNZ()), "fill-ratio")
}

func BenchmarkSparseLUP1_200ND(b *testing.B)  { benchFactor(b, p1Laplace(200), "nd") }
func BenchmarkSparseLUP1_200RCM(b *testing.B) { benchFactor(b, p1Laplace(200), "rcm") }
func BenchmarkSparseLUP1_317ND(b *testing.B)  { benchFactor(b, p1Laplace(317), "nd") }
func BenchmarkNestedDissectionP1_200(b *testing.B) {
	A := p1Laplace(200)
	b.ResetTimer()
	for b.Loop() {
		sinkPerm = NestedDissection(A)
	}
}

var sinkPerm []int
