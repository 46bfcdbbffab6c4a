package assemble_test

import (
	"runtime"
	"sync"
	"testing"

	"github.com/formwright/formwright/runtime/assemble"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/sparse"
)

// Benchmarks: 2D advection–diffusion SUPG (supgForm) on P1 triangles of the
// unit square, nodes×nodes vertices, 2(nodes−1)² cells, interpreted kernel.
// The bar is a plain serial loop with the same kernel and positions
// precomputed the same way (benchPlain), and one that searches the CSR
// row per cell (benchPlain with search). The assembler's own cost with a
// cheap compiled-style kernel, the scaling from 1 to 2 workers and the
// bandwidth bound are in parallel_bench_test.go.
//
// An earlier design computed the element matrices of a batch of cells in
// parallel into a buffer and then scattered it by row ownership, every
// worker walking all cells of the batch and testing each row's owner with
// an integer division; with a kernel as cheap as a compiled one that
// scatter, the per-worker coordinate buffers sharing a cache line, and the
// 2 MiB batch buffer written and read back left no gain from a second
// worker. The chunked loop (chunkPlan) replaced it.

var sinkVal float64

func report(b *testing.B, cells int) {
	ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N) / float64(cells)
	b.ReportMetric(ns, "ns/cell")
	b.ReportMetric(1e9/ns, "cells/s")
}

func benchAssemble(b *testing.B, nodes, workers int) {
	var m0, m1 runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&m0)
	p := newProblem(b, nodes, 0)
	p.a.Workers = workers
	A, rhs := p.a.NewMatrix(), make([]float64, p.a.Dofs.NumDofs)
	runtime.GC()
	runtime.ReadMemStats(&m1)
	nnz := A.NNZ()
	b.ResetTimer()
	for b.Loop() {
		if err := p.a.Assemble(p.k, nil, A, rhs, assemble.Input{}); err != nil {
			b.Fatal(err)
		}
	}
	report(b, p.m.NumCells())
	// Memory kept by mesh, dof map, pattern, scatter positions, matrix and
	// right-hand side, per stored nonzero.
	b.ReportMetric(float64(m1.HeapAlloc-m0.HeapAlloc)/float64(nnz), "B/nnz")
	sinkVal = A.Val[0] + rhs[0]
}

func benchPlain(b *testing.B, nodes int, search bool) {
	p := newProblem(b, nodes, 0)
	A, rhs := p.a.NewMatrix(), make([]float64, p.a.Dofs.NumDofs)
	n := p.k.Layout().N()
	nc := p.m.NumCells()
	var pos []int32
	if !search {
		pos = make([]int32, nc*n*n)
		var tmp []int
		for c := 0; c < nc; c++ {
			tmp = A.ScatterIndex(p.a.Dofs.CellDofs(c), tmp)
			for i, v := range tmp {
				pos[c*n*n+i] = int32(v)
			}
		}
	}
	b.ResetTimer()
	for b.Loop() {
		if search {
			plainLoop(p, A, rhs)
			continue
		}
		plainPrecomputed(p, A, rhs, pos)
	}
	report(b, nc)
	sinkVal = A.Val[0] + rhs[0]
}

func plainPrecomputed(p *problem, A *sparse.CSR, b []float64, pos []int32) {
	clear(A.Val)
	clear(b)
	n := p.k.Layout().N()
	Ae, be := make([]float64, n*n), make([]float64, n)
	in := &kernel.CellInput{}
	for c := 0; c < p.m.NumCells(); c++ {
		in.Index = c
		in.Coords = p.m.CellCoords(c, in.Coords[:0])
		p.k.Cell(in, Ae, be)
		for i, q := range pos[c*n*n : (c+1)*n*n] {
			A.Val[q] += Ae[i]
		}
		for i, g := range p.a.Dofs.CellDofs(c) {
			b[g] += be[i]
		}
	}
}

func BenchmarkAssembleSUPG1000Nodes1Worker(b *testing.B)  { benchAssemble(b, 1000, 1) }
func BenchmarkAssembleSUPG1000Nodes2Workers(b *testing.B) { benchAssemble(b, 1000, 2) }
func BenchmarkPlainLoopSUPG1000Nodes(b *testing.B)        { benchPlain(b, 1000, false) }
func BenchmarkPlainLoopSearchSUPG1000Nodes(b *testing.B)  { benchPlain(b, 1000, true) }
func BenchmarkAssembleSUPG200Nodes1Worker(b *testing.B)   { benchAssemble(b, 200, 1) }
func BenchmarkAssembleSUPG200Nodes2Workers(b *testing.B)  { benchAssemble(b, 200, 2) }
func BenchmarkPlainLoopSUPG200Nodes(b *testing.B)         { benchPlain(b, 200, false) }

// benchColoured is the alternative the assembler was compared with: cells
// greedily coloured so that no two cells of a colour share a dof, colours
// run in order, the cells of a colour split among the workers, each cell
// computed and scattered directly (deterministic too, but in colour order,
// not cell order).
func benchColoured(b *testing.B, nodes, workers int) {
	p := newProblem(b, nodes, 0)
	A, rhs := p.a.NewMatrix(), make([]float64, p.a.Dofs.NumDofs)
	n := p.k.Layout().N()
	nc := p.m.NumCells()
	pos := make([]int32, nc*n*n)
	var tmp []int
	used := make([]uint64, p.a.Dofs.NumDofs)
	colour := make([]int, nc)
	ncol := 0
	for c := 0; c < nc; c++ {
		dofs := p.a.Dofs.CellDofs(c)
		tmp = A.ScatterIndex(dofs, tmp)
		for i, v := range tmp {
			pos[c*n*n+i] = int32(v)
		}
		var m uint64
		for _, g := range dofs {
			m |= used[g]
		}
		k := 0
		for m&(1<<k) != 0 {
			k++
		}
		colour[c] = k
		ncol = max(ncol, k+1)
		for _, g := range dofs {
			used[g] |= 1 << k
		}
	}
	start := make([]int, ncol+1)
	for _, k := range colour {
		start[k+1]++
	}
	for k := 0; k < ncol; k++ {
		start[k+1] += start[k]
	}
	order := make([]int, nc)
	next := append([]int(nil), start[:ncol]...)
	for c, k := range colour {
		order[next[k]] = c
		next[k]++
	}
	ks := make([]kernel.Kernel, workers)
	for w := range ks {
		ks[w] = p.k.Fork()
	}
	b.ResetTimer()
	for b.Loop() {
		clear(A.Val)
		clear(rhs)
		for k := 0; k < ncol; k++ {
			cells := order[start[k]:start[k+1]]
			var wg sync.WaitGroup
			for w := 0; w < workers; w++ {
				part := cells[len(cells)*w/workers : len(cells)*(w+1)/workers]
				wg.Go(func() {
					Ae, be := make([]float64, n*n), make([]float64, n)
					in := &kernel.CellInput{}
					for _, c := range part {
						in.Index = c
						in.Coords = p.m.CellCoords(c, in.Coords[:0])
						ks[w].Cell(in, Ae, be)
						for i, q := range pos[c*n*n : (c+1)*n*n] {
							A.Val[q] += Ae[i]
						}
						for i, g := range p.a.Dofs.CellDofs(c) {
							rhs[g] += be[i]
						}
					}
				})
			}
			wg.Wait()
		}
	}
	report(b, nc)
	b.ReportMetric(float64(ncol), "colours")
	sinkVal = A.Val[0] + rhs[0]
}

func BenchmarkColouredSUPG1000Nodes1Worker(b *testing.B)  { benchColoured(b, 1000, 1) }
func BenchmarkColouredSUPG1000Nodes2Workers(b *testing.B) { benchColoured(b, 1000, 2) }
