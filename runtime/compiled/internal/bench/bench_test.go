package bench

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/interp"
	"github.com/formwright/formwright/runtime/kernel"
)

// randomCells returns n seeded random non-degenerate cells: the reference
// cell with each vertex moved by up to 1/8 of its size, scaled and
// shifted.
func randomCells(c cell.Type, n int) []kernel.CellInput {
	rng := rand.New(rand.NewPCG(7, 11))
	ref := c.Vertices()
	d := c.Dim()
	out := make([]kernel.CellInput, n)
	for k := range out {
		s := 0.01 + 0.1*rng.Float64()
		sx, sy := rng.Float64(), rng.Float64()
		x := make([]float64, len(ref))
		for i, v := range ref {
			shift := sx
			if i%d == 1 {
				shift = sy
			}
			x[i] = s*(v+0.25*(rng.Float64()-0.5)) + shift
		}
		out[k] = kernel.CellInput{Index: k, Coords: x}
	}
	return out
}

func kernels(t testing.TB, model string, c cell.Type) (gen, hand kernel.Kernel, in *interp.Kernel) {
	_, lf := lowerSUPG(t, model)
	ik, err := interp.NewKernel(lf, c, interp.Options{})
	if err != nil {
		t.Fatal(err)
	}
	switch c {
	case cell.Triangle:
		return P1SUPGKernel{}, handP1{}, ik
	}
	return Q2SUPGKernel{}, handQ2{}, ik
}

// The three kernels compute the same element matrix and vector: the
// interpreted one (runtime/interp) is the reference for both, within
// 1e-13 of the largest entry (round-off of sums in different orders;
// common practice, no source). This also checks that the hand-written bar
// really implements the form.
func TestKernelsAgree(t *testing.T) {
	for _, tc := range []struct {
		model string
		c     cell.Type
	}{{"adr", cell.Triangle}, {"adr_q2.fw", cell.Quadrilateral}} {
		gen, hand, ik := kernels(t, tc.model, tc.c)
		if tc.c == cell.Quadrilateral && ik.Rule().NumPoints() != q2q {
			t.Fatalf("interpreted Q2 rule has %d points, the hand-written kernel assumes %d", ik.Rule().NumPoints(), q2q)
		}
		n := gen.Layout().N()
		for _, in := range randomCells(tc.c, 8) {
			Ar, br := make([]float64, n*n), make([]float64, n)
			ik.Cell(&in, Ar, br)
			for name, k := range map[string]kernel.Kernel{"generated": gen, "hand-written": hand} {
				A, b := make([]float64, n*n), make([]float64, n)
				k.Cell(&in, A, b)
				for _, p := range [][2][]float64{{A, Ar}, {b, br}} {
					scale := 0.0
					for _, v := range p[1] {
						scale = math.Max(scale, math.Abs(v))
					}
					for i := range p[1] {
						if math.Abs(p[0][i]-p[1][i]) > 1e-13*scale {
							t.Fatalf("%s %v cell %d: entry %d = %.17g, interpreted %.17g", name, tc.c, in.Index, i, p[0][i], p[1][i])
						}
					}
				}
			}
		}
		in := randomCells(tc.c, 1)[0]
		A, b := make([]float64, n*n), make([]float64, n)
		if a := testing.AllocsPerRun(100, func() { gen.Cell(&in, A, b) }); a != 0 {
			t.Errorf("generated %v kernel allocates %v times per cell", tc.c, a)
		}
	}
}

var sink float64

// benchKernel times one element matrix and vector per iteration, cycling
// through 256 seeded random cells, and reports ns/element.
func benchKernel(b *testing.B, k kernel.Kernel, c cell.Type) {
	cells := randomCells(c, 256)
	n := k.Layout().N()
	A, rhs := make([]float64, n*n), make([]float64, n)
	i := 0
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		k.Cell(&cells[i&255], A, rhs)
		i++
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N), "ns/element")
	sink += A[0] + rhs[0]
}

func BenchmarkSUPGP1Generated(b *testing.B) {
	g, _, _ := kernels(b, "adr", cell.Triangle)
	benchKernel(b, g, cell.Triangle)
}

func BenchmarkSUPGP1Hand(b *testing.B) {
	_, h, _ := kernels(b, "adr", cell.Triangle)
	benchKernel(b, h, cell.Triangle)
}

func BenchmarkSUPGP1Interpreted(b *testing.B) {
	_, _, k := kernels(b, "adr", cell.Triangle)
	benchKernel(b, k, cell.Triangle)
}

func BenchmarkSUPGQ2Generated(b *testing.B) {
	g, _, _ := kernels(b, "adr_q2.fw", cell.Quadrilateral)
	benchKernel(b, g, cell.Quadrilateral)
}

func BenchmarkSUPGQ2Hand(b *testing.B) {
	_, h, _ := kernels(b, "adr_q2.fw", cell.Quadrilateral)
	benchKernel(b, h, cell.Quadrilateral)
}

func BenchmarkSUPGQ2Interpreted(b *testing.B) {
	_, _, k := kernels(b, "adr_q2.fw", cell.Quadrilateral)
	benchKernel(b, k, cell.Quadrilateral)
}

// floorQ2 performs only the part of a Q2 SUPG element computation that
// every kernel evaluating the form point by point must perform, whatever
// produced it: at each of the 9 points the rank-3 update
// A_ij += Σ_r U_r,i V_r,j (r over the test factors φ_i, ∂φ_i/∂x, ∂φ_i/∂y)
// and b_i += Σ_r U_r,i v_r, 2 430 multiply–adds in all, from factors that
// are already in tables. Geometry, τ and the basis derivatives are free
// for it, so its time bounds every such kernel from below, and the
// interpreted kernel's time over it bounds the speed-up any generated
// kernel can have over the interpreted one. It computes no element matrix
// of any form and is used only for timing.
type floorQ2 struct {
	u, v *[q2q][3][q2n]float64
	s    *[q2q][3]float64
}

func newFloorQ2() floorQ2 {
	rng := rand.New(rand.NewPCG(3, 5))
	f := floorQ2{new([q2q][3][q2n]float64), new([q2q][3][q2n]float64), new([q2q][3]float64)}
	for q := range q2q {
		for r := range 3 {
			f.s[q][r] = rng.Float64()
			for i := range q2n {
				f.u[q][r][i], f.v[q][r][i] = rng.Float64(), rng.Float64()
			}
		}
	}
	return f
}

func (floorQ2) Layout() kernel.Layout { return handQ2Layout }

func (f floorQ2) Cell(in *kernel.CellInput, A, b []float64) {
	A = A[: q2n*q2n : q2n*q2n]
	b = b[:q2n:q2n]
	var acc [q2n * q2n]float64
	var rhs [q2n]float64
	for q := range q2q {
		u, v, s := &f.u[q], &f.v[q], &f.s[q]
		for i := range q2n {
			u0, u1, u2 := u[0][i], u[1][i], u[2][i]
			row := acc[i*q2n : i*q2n+q2n : i*q2n+q2n]
			for j := range row {
				row[j] += u0*v[0][j] + u1*v[1][j] + u2*v[2][j]
			}
			rhs[i] += u0*s[0] + u1*s[1] + u2*s[2]
		}
	}
	copy(A, acc[:])
	copy(b, rhs[:])
}

// benchRatios times the kernels in alternating blocks of calls and keeps
// each kernel's fastest block, which is robust against other load on the
// machine; it reports ns/element of each and the ratios hand/generated
// and interpreted/generated. With a floor kernel it also reports that
// kernel's time and interpreted/floor, the largest interpreted/generated
// ratio any point-wise kernel could reach.
func benchRatios(b *testing.B, model string, c cell.Type, calls int, floor kernel.Kernel) {
	gen, hand, ik := kernels(b, model, c)
	cells := randomCells(c, 256)
	n := gen.Layout().N()
	A, rhs := make([]float64, n*n), make([]float64, n)
	ks := []kernel.Kernel{gen, hand, ik}
	if floor != nil {
		ks = append(ks, floor)
	}
	best := []float64{math.Inf(1), math.Inf(1), math.Inf(1), math.Inf(1)}
	for b.Loop() {
		for i, k := range ks {
			m := calls
			if i == 2 {
				m = max(1, calls/10)
			}
			start := time.Now()
			for j := 0; j < m; j++ {
				k.Cell(&cells[j&255], A, rhs)
			}
			best[i] = math.Min(best[i], float64(time.Since(start).Nanoseconds())/float64(m))
		}
	}
	sink += A[0] + rhs[0]
	b.ReportMetric(best[0], "gen-ns/element")
	b.ReportMetric(best[1], "hand-ns/element")
	b.ReportMetric(best[2], "interp-ns/element")
	b.ReportMetric(best[1]/best[0], "hand/gen")
	b.ReportMetric(best[2]/best[0], "interp/gen")
	if floor != nil {
		b.ReportMetric(best[3], "floor-ns/element")
		b.ReportMetric(best[2]/best[3], "interp/floor")
	}
}

func BenchmarkRatiosSUPGP1(b *testing.B) { benchRatios(b, "adr", cell.Triangle, 2000, nil) }

func BenchmarkRatiosSUPGQ2(b *testing.B) {
	benchRatios(b, "adr_q2.fw", cell.Quadrilateral, 100, newFloorQ2())
}
