package assemble

import (
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"

	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/sparse"
)

// Assembler assembles global sparse systems from element kernels on one
// mesh and dof map. It owns the CSR pattern and the precomputed scatter
// positions; build it once and assemble as often as needed (Picard steps,
// time steps). An Assembler is not safe for concurrent Assemble calls.
type Assembler struct {
	Mesh *mesh.Mesh
	Dofs *dof.Map
	// Workers is the number of goroutines of the element loop; <= 0 means
	// runtime.GOMAXPROCS(0). The result does not depend on it, bit for bit.
	Workers int

	pattern *sparse.CSR
	pos     []int32 // NumCells * NumLocal², positions in Val
	nLocal  int
}

// New builds the pattern (sparse.PatternFromElements over the cells' dofs)
// and the scatter positions (sparse.CSR.ScatterIndex) of every cell.
// Memory: 4·NumLocal² bytes per cell for the positions, besides the
// pattern's 12 bytes per nonzero.
func New(m *mesh.Mesh, dm *dof.Map) *Assembler {
	if m.NumCells() != dm.NumCells || m.Cell != dm.Cell {
		panic(fmt.Sprintf("assemble: dof map of %d %v cells for a mesh of %d %v cells", dm.NumCells, dm.Cell, m.NumCells(), m.Cell))
	}
	a := &Assembler{Mesh: m, Dofs: dm, nLocal: dm.NumLocal}
	a.pattern = sparse.PatternFromElements(dm.NumDofs, dm.NumCells, func(c int, buf []int32) []int32 {
		return append(buf, dm.CellDofs(c)...)
	})
	if a.pattern.NNZ() > math.MaxInt32 {
		panic("assemble: more than 2^31 nonzeros")
	}
	n2 := a.nLocal * a.nLocal
	a.pos = make([]int32, dm.NumCells*n2)
	var p []int
	for c := 0; c < dm.NumCells; c++ {
		p = a.pattern.ScatterIndex(dm.CellDofs(c), p)
		dst := a.pos[c*n2 : (c+1)*n2]
		for i, v := range p {
			dst[i] = int32(v)
		}
	}
	a.pattern.Val = nil // structure only; matrices come from NewMatrix
	return a
}

// Pattern returns the assembler's CSR pattern: RowPtr and Col only (Val
// is nil). Use NewMatrix for a matrix to assemble into.
func (a *Assembler) Pattern() *sparse.CSR { return a.pattern }

// NewMatrix returns a zero matrix with the assembler's pattern; RowPtr and
// Col are shared with the pattern (do not modify them).
func (a *Assembler) NewMatrix() *sparse.CSR {
	p := a.pattern
	return &sparse.CSR{N: p.N, M: p.M, RowPtr: p.RowPtr, Col: p.Col, Val: make([]float64, len(p.Col))}
}

// Input is the per-assembly data passed to the kernels.
type Input struct {
	Time float64
	// Step is the time step Δt of a time-stepped form (the lowered cell
	// quantity time_step); 0 for steady forms.
	Step float64
	// Previous is the global dof vector of the previous iterate, or nil.
	Previous []float64
}

// LayoutError reports a kernel whose layout does not match the dof map.
type LayoutError struct{ Msg string }

func (e *LayoutError) Error() string { return "assemble: " + e.Msg }

// CheckLayout verifies that a kernel layout matches the dof map: same cell,
// fields with the same element degrees and component counts, geometry on
// the mesh's vertices.
func (a *Assembler) CheckLayout(l kernel.Layout) error {
	dm := a.Dofs
	if l.Cell != dm.Cell {
		return &LayoutError{fmt.Sprintf("kernel for %v cells on a %v mesh", l.Cell, dm.Cell)}
	}
	if l.Geometry == nil || l.Geometry.Cell != dm.Cell || l.Geometry.Degree != 1 {
		return &LayoutError{"kernel geometry is not the linear element of the mesh cells (the mesh holds vertices only)"}
	}
	if len(l.Fields) != len(dm.Fields) {
		return &LayoutError{fmt.Sprintf("kernel has %d fields, dof map %d", len(l.Fields), len(dm.Fields))}
	}
	for i, f := range l.Fields {
		g := dm.Fields[i]
		if f.Element.Cell != g.Element.Cell || f.Element.Degree != g.Element.Degree || f.Components != g.Components {
			return &LayoutError{fmt.Sprintf("field %d: kernel has degree %d × %d components, dof map degree %d × %d", i, f.Element.Degree, f.Components, g.Element.Degree, g.Components)}
		}
	}
	return nil
}

// worker holds one goroutine's buffers, made once per Assemble call.
type worker struct {
	k    kernel.Kernel
	in   kernel.CellInput
	prev []float64
}

// batchCells chooses the number of cells whose element data is held at
// once: about 2 MiB of element matrices, at least 64 cells.
func batchCells(n int) int {
	return max(64, (1<<18)/(n*n+n))
}

// subChunk is the number of cells a worker takes at a time in phase 1.
const subChunk = 256

// rowBlockShift: rows are owned in blocks of 64 for the parallel scatter,
// so two workers rarely write the same cache line of Val.
const rowBlockShift = 6

// Assemble zeroes A (which must have the assembler's pattern, see
// NewMatrix) and b (length NumDofs), then adds the element contributions
// of kernel k over all cells and of each facet kernel over the facets of
// its side.
//
// Parallel and deterministic: the cells are taken in batches; in each
// batch the workers first compute the element matrices of sub-chunks of
// 256 cells, taken from a shared counter, into a batch buffer, then
// scatter it, each worker adding
// only the rows it owns (row blocks of 64 dealt round-robin) while walking
// the batch in cell order. Every entry of A and b therefore receives its
// contributions in increasing cell order, whatever the number of workers:
// the result is bit-identical to a plain serial loop. (Greedy colouring
// was the alternative; it visits the cells of a colour scattered over the
// mesh and changes the summation order with the colouring, so a 1-worker
// run would not equal the plain loop.) Facet contributions are added
// after the cells, serially in the side's facet order.
func (a *Assembler) Assemble(k kernel.Kernel, facets []kernel.FacetKernel, A *sparse.CSR, b []float64, in Input) error {
	if err := a.CheckLayout(k.Layout()); err != nil {
		return err
	}
	if len(A.Val) != len(a.pattern.Col) || A.N != a.pattern.N || len(b) != a.Dofs.NumDofs {
		panic(fmt.Sprintf("assemble: matrix with %d entries and vector of %d for a pattern with %d entries and %d dofs", len(A.Val), len(b), len(a.pattern.Col), a.Dofs.NumDofs))
	}
	if in.Previous != nil && len(in.Previous) != a.Dofs.NumDofs {
		panic(fmt.Sprintf("assemble: previous iterate of length %d for %d dofs", len(in.Previous), a.Dofs.NumDofs))
	}
	sides := make([][]mesh.FacetRef, len(facets))
	for i, fk := range facets {
		f, ok := a.Mesh.Boundaries[fk.Side()]
		if !ok {
			return &LayoutError{fmt.Sprintf("boundary integral on side %q, which the mesh does not have (it has %v)", fk.Side(), a.Mesh.BoundaryNames())}
		}
		sides[i] = f
	}
	clear(A.Val)
	clear(b)
	W := a.Workers
	if W <= 0 {
		W = runtime.GOMAXPROCS(0)
	}
	nc := a.Dofs.NumCells
	W = max(1, min(W, nc))
	n := a.nLocal
	ws := make([]*worker, W)
	for w := range ws {
		ws[w] = a.newWorker(k, w, in)
	}
	bs := min(batchCells(n), max(nc, 1))
	bufA := make([]float64, bs*n*n)
	bufB := make([]float64, bs*n)
	for start := 0; start < nc; start += bs {
		end := min(start+bs, nc)
		if W == 1 {
			w := ws[0]
			for c := start; c < end; c++ {
				i := c - start
				a.compute(w, c, bufA[i*n*n:(i+1)*n*n], bufB[i*n:(i+1)*n], in.Previous)
			}
			a.scatterAll(A, b, start, end, bufA, bufB)
			continue
		}
		a.parallelBatch(ws, start, end, A, b, bufA, bufB, in.Previous)
	}
	// Boundary facets, serially.
	w := ws[0]
	fa, fb := bufA[:n*n], bufB[:n]
	fin := &kernel.FacetInput{}
	for i, fk := range facets {
		for _, f := range sides[i] {
			c := int(f.Cell)
			a.Mesh.CellCoords(c, w.in.Coords[:0])
			fin.CellInput = kernel.CellInput{Index: c, Coords: w.in.Coords, Time: in.Time, Step: in.Step}
			if in.Previous != nil {
				a.Dofs.Gather(c, in.Previous, w.prev)
				fin.Previous = w.prev
			}
			fin.Facet = int(f.Facet)
			fk.Facet(fin, fa, fb)
			a.scatterCell(A, b, c, fa, fb)
		}
	}
	return nil
}

// parallelBatch computes and scatters the cells start..end with len(ws)
// workers (phase 1: element data by sub-chunks from a shared counter;
// phase 2: scatter by row ownership, in cell order).
func (a *Assembler) parallelBatch(ws []*worker, start, end int, A *sparse.CSR, b, bufA, bufB, prev []float64) {
	W := len(ws)
	n := a.nLocal
	cnt := end - start
	var wg sync.WaitGroup
	// Phase 1: workers take sub-chunks of the batch from a shared
	// counter (dynamic balance on a shared machine); where a cell's
	// element data is computed does not affect the result.
	var next atomic.Int64
	nsub := int64((cnt + subChunk - 1) / subChunk)
	for w := 0; w < W; w++ {
		wk := ws[w]
		run := func() {
			for {
				j := next.Add(1) - 1
				if j >= nsub {
					return
				}
				lo := start + int(j)*subChunk
				hi := min(lo+subChunk, end)
				for c := lo; c < hi; c++ {
					i := c - start
					a.compute(wk, c, bufA[i*n*n:(i+1)*n*n], bufB[i*n:(i+1)*n], prev)
				}
			}
		}
		if w == W-1 {
			run() // the calling goroutine is the last worker
		} else {
			wg.Go(run)
		}
	}
	wg.Wait()
	for w := 0; w < W-1; w++ {
		wg.Go(func() { a.scatterOwned(A, b, start, end, bufA, bufB, w, W) })
	}
	a.scatterOwned(A, b, start, end, bufA, bufB, W-1, W)
	wg.Wait()
}

func (a *Assembler) newWorker(k kernel.Kernel, w int, in Input) *worker {
	wk := &worker{k: k}
	if f, ok := k.(kernel.Forker); ok && w > 0 {
		wk.k = f.Fork()
	}
	nv := a.Mesh.Cell.NumVertices()
	wk.in.Coords = make([]float64, nv*a.Mesh.Dim)
	wk.in.Time = in.Time
	wk.in.Step = in.Step
	if in.Previous != nil {
		wk.prev = make([]float64, a.nLocal)
	}
	return wk
}

// compute runs the kernel on cell c into Ae, be. No allocation.
func (a *Assembler) compute(w *worker, c int, Ae, be, prev []float64) {
	a.Mesh.CellCoords(c, w.in.Coords[:0])
	w.in.Index = c
	if prev != nil {
		a.Dofs.Gather(c, prev, w.prev)
		w.in.Previous = w.prev
	}
	w.k.Cell(&w.in, Ae, be)
}

// scatterCell adds one element matrix and vector. No allocation.
func (a *Assembler) scatterCell(A *sparse.CSR, b []float64, c int, Ae, be []float64) {
	n := a.nLocal
	pos := a.pos[c*n*n : (c+1)*n*n]
	val := A.Val
	for i, p := range pos {
		val[p] += Ae[i]
	}
	for i, g := range a.Dofs.CellDofs(c) {
		b[g] += be[i]
	}
}

func (a *Assembler) scatterAll(A *sparse.CSR, b []float64, start, end int, bufA, bufB []float64) {
	n := a.nLocal
	for c := start; c < end; c++ {
		i := c - start
		a.scatterCell(A, b, c, bufA[i*n*n:(i+1)*n*n], bufB[i*n:(i+1)*n])
	}
}

// scatterOwned adds, for the cells start..end in order, the rows whose
// block (row >> rowBlockShift) is dealt to worker w of W.
func (a *Assembler) scatterOwned(A *sparse.CSR, b []float64, start, end int, bufA, bufB []float64, w, W int) {
	n := a.nLocal
	val := A.Val
	for c := start; c < end; c++ {
		i := c - start
		dofs := a.Dofs.CellDofs(c)
		pos := a.pos[c*n*n : (c+1)*n*n]
		Ae := bufA[i*n*n : (i+1)*n*n]
		be := bufB[i*n : (i+1)*n]
		for r, g := range dofs {
			if int(g>>rowBlockShift)%W != w {
				continue
			}
			pr, ar := pos[r*n:(r+1)*n], Ae[r*n:(r+1)*n]
			for j, p := range pr {
				val[p] += ar[j]
			}
			b[g] += be[r]
		}
	}
}
