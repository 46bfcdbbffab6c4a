package assemble_test

import (
	"math"
	"runtime"
	"sync"
	"testing"
	"time"

	"github.com/formwright/formwright/runtime/assemble"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/mesh"
)

// handSUPG is a hand-written P1 triangle kernel of the SUPG form of
// a·∇c − κΔc = f with constant a = (cos 30°, sin 30°), κ = 10⁻³, f = 1:
//
//	A_ij = |T| (κ g_i·g_j + (a·g_j)/3 + τ (a·g_i)(a·g_j)),
//	b_i  = |T| f (1/3 + τ a·g_i),
//
// g_i the constant gradient of the hat function of vertex i, τ =
// h/(2|a|)·min(Pe/3, 1), Pe = |a|h/(2κ), h the longest edge (Brooks &
// Hughes 1982, CMAME 32, for the form; the τ formula is the stdlib's
// tau_doubly_asymptotic). It does the arithmetic of a compiled SUPG kernel
// of the same form (one division, one square root, no allocation), so the
// assembler's own cost is what the benchmarks below measure.
type handSUPG struct{}

var handLayout = kernel.Layout{
	Cell:     cell.Triangle,
	Geometry: element.MustLagrange(cell.Triangle, 1),
	Fields:   []kernel.FieldLayout{{Element: element.MustLagrange(cell.Triangle, 1), Components: 1}},
}

func (handSUPG) Layout() kernel.Layout { return handLayout }

func (handSUPG) Cell(in *kernel.CellInput, A, b []float64) {
	const ax, ay, kappa, f = 0.8660254037844386, 0.5, 1e-3, 1.0
	A = A[:9:9]
	b = b[:3:3]
	x := in.Coords[:6:6]
	det := (x[2]-x[0])*(x[5]-x[1]) - (x[4]-x[0])*(x[3]-x[1])
	area := 0.5 * det
	r := 1 / det
	// g_i = (y_j − y_k, x_k − x_j)/det for (i, j, k) cyclic.
	gx := [3]float64{(x[3] - x[5]) * r, (x[5] - x[1]) * r, (x[1] - x[3]) * r}
	gy := [3]float64{(x[4] - x[2]) * r, (x[0] - x[4]) * r, (x[2] - x[0]) * r}
	e0 := (x[2]-x[0])*(x[2]-x[0]) + (x[3]-x[1])*(x[3]-x[1])
	e1 := (x[4]-x[2])*(x[4]-x[2]) + (x[5]-x[3])*(x[5]-x[3])
	e2 := (x[0]-x[4])*(x[0]-x[4]) + (x[1]-x[5])*(x[1]-x[5])
	h := math.Sqrt(max(e0, e1, e2))
	// |a| = 1: Pe/3 = h/(6κ); divisions by constants as multiplications,
	// as the code generator emits them.
	tau := 0.5 * h * min(h*(1/(6*kappa)), 1)
	const third = 1.0 / 3
	ag0 := ax*gx[0] + ay*gy[0]
	ag1 := ax*gx[1] + ay*gy[1]
	ag2 := ax*gx[2] + ay*gy[2]
	k := area * kappa
	t0, t1, t2 := area*tau*ag0, area*tau*ag1, area*tau*ag2
	c0, c1, c2 := area*third*ag0, area*third*ag1, area*third*ag2
	A[0] = k*(gx[0]*gx[0]+gy[0]*gy[0]) + c0 + t0*ag0
	A[1] = k*(gx[0]*gx[1]+gy[0]*gy[1]) + c1 + t0*ag1
	A[2] = k*(gx[0]*gx[2]+gy[0]*gy[2]) + c2 + t0*ag2
	A[3] = k*(gx[1]*gx[0]+gy[1]*gy[0]) + c0 + t1*ag0
	A[4] = k*(gx[1]*gx[1]+gy[1]*gy[1]) + c1 + t1*ag1
	A[5] = k*(gx[1]*gx[2]+gy[1]*gy[2]) + c2 + t1*ag2
	A[6] = k*(gx[2]*gx[0]+gy[2]*gy[0]) + c0 + t2*ag0
	A[7] = k*(gx[2]*gx[1]+gy[2]*gy[1]) + c1 + t2*ag1
	A[8] = k*(gx[2]*gx[2]+gy[2]*gy[2]) + c2 + t2*ag2
	b[0] = f * (area*third + t0)
	b[1] = f * (area*third + t1)
	b[2] = f * (area*third + t2)
}

// Measurements (2-core shared VM, AMD EPYC; other jobs kept the load
// average between 1 and 7, so only figures taken in one run are compared).
// Before the chunked loop, 980 000 cells: 1 worker 184 ns/cell, 2 workers
// 156 ns/cell (0.85×); the profile showed the coordinate gather doubling
// its cost on 2 workers (the workers' 48-byte coordinate buffers shared a
// cache line) and the row-ownership scatter costing each worker as much
// as the whole serial scatter. With the chunked loop, in a quiet spell
// (go test -run XXX -bench 'HandSUPG980k' -benchtime 20x -count 2): 1
// worker 134–136 ns/cell, 2 workers 79–80 ns/cell (0.59×); the kernel
// alone 50 ns/cell on one goroutine, 27 on two; a plain serial loop with
// the same kernel 108 ns/cell; the triad bound 12–14 ns/cell on 1 worker
// and 7.5–8 ns/cell on 2. Two workers are thus about 10× the triad bound,
// not within 3×: the kernel's own arithmetic on two cores is already 3.5×
// the bound. When other jobs hold a core, BenchmarkAssembleScaling980k
// shows 2w/1w ≈ 1 together with cpu-2w/1w ≈ 1 (its CPU-bound control).
// Quiet run of 2026-12-02 (AssembleScaling980k, -benchtime 10x, cpu-2w/1w
// 0.52): 1 worker 81.4 ns/cell, 2 workers 42.9 (0.53×), triad 3.15 ns/cell
// on 2 workers (2w/triad 13.7), the kernel alone on 2 workers 22.8 ns/cell
// (7.2× the triad).

// benchHand assembles handSUPG on a P1 mesh of nodes×nodes vertices with
// the given number of workers and reports ns/cell.
func benchHand(b *testing.B, nodes, workers int) {
	m := mesh.Span2(0, 1, 0, 1, nodes-1, nodes-1, mesh.DiagonalUp)
	dm, err := dof.New(m.Cell, m.Coords, m.Cells, []dof.FieldSpec{{Name: "c", Element: handLayout.Fields[0].Element, Components: 1}})
	if err != nil {
		b.Fatal(err)
	}
	a := assemble.New(m, dm)
	a.Workers = workers
	A, rhs := a.NewMatrix(), make([]float64, dm.NumDofs)
	b.ResetTimer()
	for b.Loop() {
		if err := a.Assemble(handSUPG{}, nil, A, rhs, assemble.Input{}); err != nil {
			b.Fatal(err)
		}
	}
	report(b, m.NumCells())
	sinkVal = A.Val[0] + rhs[0]
}

// 701² vertices: 980 000 cells, the size of the measurement in the issue
// that reported no gain from a second worker.
func BenchmarkAssembleHandSUPG980k1Worker(b *testing.B)  { benchHand(b, 701, 1) }
func BenchmarkAssembleHandSUPG980k2Workers(b *testing.B) { benchHand(b, 701, 2) }
func BenchmarkAssembleHandSUPG20k1Worker(b *testing.B)   { benchHand(b, 101, 1) }
func BenchmarkAssembleHandSUPG20k2Workers(b *testing.B)  { benchHand(b, 101, 2) }

// assemblyBytes is the memory traffic an assembly of handSUPG on a P1 mesh
// of nodes×nodes vertices cannot avoid, in bytes: the matrix values read
// and written once (8+8 per nonzero), the right-hand side read and written
// once, the cell vertex lists and the scatter positions read once (4 bytes
// per entry), and the vertex coordinates read once.
func assemblyBytes(nodes int) (bytes, cells int) {
	nv := nodes * nodes
	cells = 2 * (nodes - 1) * (nodes - 1)
	nnz := 7*nv - 6*nodes + 2 // P1 pattern on the DiagonalUp mesh: 7 per interior vertex
	return 16*nnz + 16*nv + 4*3*cells + 4*9*cells + 16*nv, cells
}

// benchTriad is the bandwidth bound of an assembly of nodes×nodes vertices:
// the STREAM triad a = b + s·c (McCalpin 1995, IEEE TCCA Newsletter) over
// three arrays that together hold assemblyBytes(nodes) (24 bytes moved per
// element; write-allocate traffic not counted), split among workers
// goroutines in contiguous blocks. It reports the time per cell of the
// corresponding assembly and the bandwidth reached.
func benchTriad(b *testing.B, nodes, workers int) {
	bytes, cells := assemblyBytes(nodes)
	n := bytes / 24
	x, y, z := make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range y {
		y[i], z[i] = float64(i), float64(n-i)
	}
	b.ResetTimer()
	for b.Loop() {
		triad(x, y, z, workers)
	}
	report(b, cells)
	sec := b.Elapsed().Seconds() / float64(b.N)
	b.ReportMetric(float64(24*n)/sec/1e9, "GB/s")
	sinkVal = x[n/2]
}

func BenchmarkTriad980k1Worker(b *testing.B)  { benchTriad(b, 701, 1) }
func BenchmarkTriad980k2Workers(b *testing.B) { benchTriad(b, 701, min(2, runtime.GOMAXPROCS(0))) }

// triad runs the STREAM triad x = y + 3z split among workers goroutines
// in contiguous blocks.
func triad(x, y, z []float64, workers int) {
	inBlocks(len(x), workers, func(_, lo, hi int) {
		xs, ys, zs := x[lo:hi], y[lo:hi], z[lo:hi]
		for i := range xs {
			xs[i] = ys[i] + 3*zs[i]
		}
	})
}

// inBlocks runs fn(w, lo, hi) for the contiguous blocks [lo, hi) of
// [0, n) on workers goroutines, block w on goroutine w, and waits.
func inBlocks(n, workers int, fn func(w, lo, hi int)) {
	var wg sync.WaitGroup
	for w := range workers {
		wg.Go(func() { fn(w, n*w/workers, n*(w+1)/workers) })
	}
	wg.Wait()
}

// spin is a CPU-bound control: a dependent multiply–add chain of steps
// iterations split among workers goroutines. Its 2-worker/1-worker ratio
// is ≈ 0.5 when two cores are free and ≈ 1 when other jobs hold one.
func spin(steps, workers int) float64 {
	out := make([]float64, workers)
	inBlocks(steps, workers, func(w, _, _ int) {
		s := 1.0
		for i := 0; i < steps/workers; i++ {
			s = s*1.0000001 + 1e-9
		}
		out[w] = s
	})
	return out[0]
}

// kernelOnly computes the element matrix and vector of handSUPG on every
// cell of m, gathering the cell's coordinates as the assembler does but
// scattering nothing, with the cells split among workers goroutines in
// contiguous blocks: the arithmetic an assembly cannot avoid, to set
// beside the triad's bandwidth bound.
func kernelOnly(m *mesh.Mesh, workers int) float64 {
	out := make([]float64, workers)
	inBlocks(m.NumCells(), workers, func(w, lo, hi int) {
		var in kernel.CellInput
		in.Coords = make([]float64, 6)
		var A [9]float64
		var rhs [3]float64
		s := 0.0
		for c := lo; c < hi; c++ {
			for k, v := range m.Cells[3*c : 3*c+3] {
				in.Coords[2*k], in.Coords[2*k+1] = m.Coords[2*v], m.Coords[2*v+1]
			}
			handSUPG{}.Cell(&in, A[:], rhs[:])
			s += A[4] + rhs[0]
		}
		out[w] = s
	})
	return out[0]
}

// benchScaling measures, interleaved within each benchmark iteration so
// that the machine's load drifts alike for all of them, one assembly of
// handSUPG with 1 worker, one with 2 workers, and the triad bound with 1
// and 2 workers (benchTriad), and reports each in ns/cell and the ratios
// the issue asks for: 2 workers / 1 worker (target ≤ 0.6) and 2 workers /
// the faster triad (target ≤ 3). It also times kernelOnly on 2 workers
// and reports it over the triad: when that ratio is near or above 3, no
// assembler can meet the second target with this kernel.
//
//	go test -run XXX -bench AssembleScaling -benchtime 10x -count 3 ./runtime/assemble/
func benchScaling(b *testing.B, nodes int) {
	m := mesh.Span2(0, 1, 0, 1, nodes-1, nodes-1, mesh.DiagonalUp)
	dm, err := dof.New(m.Cell, m.Coords, m.Cells, []dof.FieldSpec{{Name: "c", Element: handLayout.Fields[0].Element, Components: 1}})
	if err != nil {
		b.Fatal(err)
	}
	a := assemble.New(m, dm)
	A, rhs := a.NewMatrix(), make([]float64, dm.NumDofs)
	bytes, cells := assemblyBytes(nodes)
	n := bytes / 24
	x, y, z := make([]float64, n), make([]float64, n), make([]float64, n)
	var t [4]time.Duration
	var cpu [2]time.Duration
	var tk time.Duration
	b.ResetTimer()
	for b.Loop() {
		for i, w := range []int{1, 2} {
			t0 := time.Now()
			sinkVal += spin(20_000_000, w)
			cpu[i] += time.Since(t0)
			a.Workers = w
			t0 = time.Now()
			if err := a.Assemble(handSUPG{}, nil, A, rhs, assemble.Input{}); err != nil {
				b.Fatal(err)
			}
			t[i] += time.Since(t0)
			t0 = time.Now()
			triad(x, y, z, w)
			t[2+i] += time.Since(t0)
		}
		t0 := time.Now()
		sinkVal += kernelOnly(m, 2)
		tk += time.Since(t0)
	}
	per := func(d time.Duration) float64 { return float64(d.Nanoseconds()) / float64(b.N) / float64(cells) }
	b.ReportMetric(per(t[0]), "ns/cell-1w")
	b.ReportMetric(per(t[1]), "ns/cell-2w")
	b.ReportMetric(per(t[2]), "triad-ns/cell-1w")
	b.ReportMetric(per(t[3]), "triad-ns/cell-2w")
	b.ReportMetric(per(t[1])/per(t[0]), "2w/1w")
	// The triad's and the CPU-bound spin's own ratios show whether a second
	// core was free during the run (≈ 0.5 on an idle machine, ≈ 1 when
	// other jobs hold it).
	b.ReportMetric(per(t[3])/per(t[2]), "triad-2w/1w")
	b.ReportMetric(float64(cpu[1])/float64(cpu[0]), "cpu-2w/1w")
	b.ReportMetric(per(t[1])/min(per(t[2]), per(t[3])), "2w/triad")
	b.ReportMetric(per(tk), "kernel-ns/cell-2w")
	b.ReportMetric(per(tk)/min(per(t[2]), per(t[3])), "kernel-2w/triad")
	sinkVal = A.Val[0] + rhs[0] + x[n/2]
}

func BenchmarkAssembleScaling980k(b *testing.B) { benchScaling(b, 701) }
func BenchmarkAssembleScaling20k(b *testing.B)  { benchScaling(b, 101) }
