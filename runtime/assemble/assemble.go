package assemble

import (
	"fmt"
	"math"
	"runtime"
	"slices"
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
	Dofs *dof.Numbering
	// Workers is the number of goroutines of the element loop; <= 0 means
	// runtime.GOMAXPROCS(0). The result does not depend on it, bit for bit.
	Workers int

	pattern *sparse.CSR
	pos     []int32 // NumCells * NumLocal², positions in Val
	nLocal  int
	nVert   int // vertices per cell
	plan    chunkPlan
	// Value buffers of the chunk logs (see chunkPlan), kept across calls.
	logA, logB [][]float64
}

// New builds the pattern (sparse.PatternFromElements over the cells' dofs),
// the scatter positions (sparse.CSR.ScatterIndex) of every cell and the
// chunk plan of the parallel loop. Memory: 4·NumLocal² bytes per cell for
// the positions and 4 bytes per dof for the plan, besides the pattern's
// 12 bytes per nonzero; the chunk logs take 12 bytes per logged entry.
func New(m *mesh.Mesh, dm *dof.Numbering) *Assembler {
	if m.NumCells() != dm.NumCells || m.Cell != dm.Cell {
		panic(fmt.Sprintf("assemble: dof map of %d %v cells for a mesh of %d %v cells", dm.NumCells, dm.Cell, m.NumCells(), m.Cell))
	}
	a := &Assembler{Mesh: m, Dofs: dm, nLocal: dm.NumLocal, nVert: m.Cell.NumVertices()}
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
	a.planChunks()
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
	// Recovered is the recovered gradient of the previous iterate at the
	// nodes, Dim values per dof (∂_k of dof g at g·Dim + k), for kernels
	// that read recovered second derivatives; nil when none do. The
	// kernels receive it gathered per cell (kernel.CellInput.Recovered).
	Recovered []float64
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

// worker holds one goroutine's buffers, made once per Assemble call. The
// fields written for every cell (in, Ae, be, the coordinates) sit between
// padding, and the slices are allocated with padding on both sides, so
// two workers never write the same cache line (false sharing: the second
// worker's gain was lost to it before the buffers were padded).
type worker struct {
	_    [cacheLine]byte
	k    kernel.Kernel
	in   kernel.CellInput
	prev []float64
	rec  []float64
	Ae   []float64
	be   []float64
	_    [cacheLine]byte
}

// cacheLine is a safe bound for the size of a cache line, in bytes (64 on
// x86-64, 128 on some ARM cores; common practice, no source).
const cacheLine = 128

// padded returns a slice of length n whose backing array has a cache line
// of slack before and after it.
func padded(n int) []float64 {
	const pad = cacheLine / 8
	return make([]float64, n+2*pad)[pad : pad+n : pad+n]
}

// Chunking of the cell loop: cells are split into contiguous chunks of at
// least minChunk cells and at most maxChunks chunks, fixed by the mesh
// alone. Workers take chunks from a shared counter (dynamic balance on a
// shared machine).
const (
	minChunk  = 2048
	maxChunks = 64
)

// microBatch is the number of cells a worker computes before adding them.
const microBatch = 32

// chunkPlan is the static part of the parallel element loop, built once in
// New. Every matrix row has a first chunk, the lowest chunk holding a cell
// of that row's dof. A chunk adds its contributions to the rows it is the
// first chunk of directly into the matrix, in cell order; contributions to
// other rows (rows shared with earlier chunks, at chunk interfaces) are
// written to the chunk's log and added after all chunks have run, chunk by
// chunk in increasing order. Every entry therefore receives its
// contributions in increasing cell order, whatever the number of workers
// and whichever worker runs a chunk: the result is bit-identical to a
// plain serial loop. The logs hold only the interface rows (on a 2D mesh
// of 10⁶ cells numbered row by row, 64 chunks log about 2% of the entries).
type chunkPlan struct {
	size  int     // cells per chunk
	first []int32 // row -> first chunk
	// rows[k] lists the row ranges [lo, hi) whose first chunk is k: chunk
	// k zeroes them before adding, so the zeroing is parallel too.
	rows [][][2]int32
	// logPos[k] are the matrix positions of chunk k's logged entries and
	// logDof[k] the rows of its logged right-hand side entries, in the
	// order the chunk produces them.
	logPos [][]int32
	logDof [][]int32
	// mixed[k] lists, in increasing order, the cells of chunk k with a row
	// the chunk does not own; the other cells are added in one flat loop.
	mixed [][]int32
}

func (a *Assembler) planChunks() {
	dm := a.Dofs
	nc, n := dm.NumCells, a.nLocal
	p := &a.plan
	p.size = max(minChunk, (nc+maxChunks-1)/maxChunks)
	nch := max(1, (nc+p.size-1)/p.size)
	p.first = make([]int32, dm.NumDofs)
	for i := range p.first {
		p.first[i] = -1
	}
	for c := 0; c < nc; c++ {
		k := int32(c / p.size)
		for _, g := range dm.CellDofs(c) {
			if p.first[g] < 0 {
				p.first[g] = k
			}
		}
	}
	p.rows = make([][][2]int32, nch)
	for i := 0; i < dm.NumDofs; {
		k, j := p.first[i], i+1
		for j < dm.NumDofs && p.first[j] == k {
			j++
		}
		if k < 0 {
			k = 0 // a dof of no cell: chunk 0 zeroes its row
		}
		p.rows[k] = append(p.rows[k], [2]int32{int32(i), int32(j)})
		i = j
	}
	p.logPos = make([][]int32, nch)
	p.logDof = make([][]int32, nch)
	p.mixed = make([][]int32, nch)
	for k := 0; k < nch; k++ {
		var lp, ld []int32
		for c := k * p.size; c < min(nc, (k+1)*p.size); c++ {
			pos := a.pos[c*n*n : (c+1)*n*n]
			for r, g := range dm.CellDofs(c) {
				if p.first[g] != int32(k) {
					lp = append(lp, pos[r*n:(r+1)*n]...)
					ld = append(ld, g)
				}
			}
		}
		p.logPos[k], p.logDof[k] = slices.Clip(lp), slices.Clip(ld)
		var mx []int32
		for c := k * p.size; c < min(nc, (k+1)*p.size); c++ {
			for _, g := range dm.CellDofs(c) {
				if p.first[g] != int32(k) {
					mx = append(mx, int32(c))
					break
				}
			}
		}
		p.mixed[k] = mx
	}
}

// Assemble zeroes A (which must have the assembler's pattern, see
// NewMatrix) and b (length NumDofs), then adds the element contributions
// of kernel k over all cells and of each facet kernel over the facets of
// its side.
//
// Parallel and deterministic: the cells are split into contiguous chunks
// (chunkPlan); each worker takes a chunk, and for each cell computes the
// element matrix into its own buffer and adds it at once: rows the chunk
// owns go straight into A and b, rows shared with an earlier chunk into
// the chunk's log, which is added after all chunks in chunk order. Every
// entry of A and b therefore receives its contributions in increasing cell
// order, whatever the number of workers: the result is bit-identical to a
// plain serial loop. (Greedy colouring was the alternative; it visits the
// cells of a colour scattered over the mesh and changes the summation
// order with the colouring, so a 1-worker run would not equal the plain
// loop.) Facet contributions are added after the cells, serially in the
// side's facet order.
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
	if in.Recovered != nil && len(in.Recovered) != a.Dofs.NumDofs*a.Mesh.Dim {
		panic(fmt.Sprintf("assemble: recovered gradient of length %d for %d dofs in %d dimensions", len(in.Recovered), a.Dofs.NumDofs, a.Mesh.Dim))
	}
	sides := make([][]mesh.FacetRef, len(facets))
	for i, fk := range facets {
		f, ok := a.Mesh.Boundaries[fk.Side()]
		if !ok {
			return &LayoutError{fmt.Sprintf("boundary integral on side %q, which the mesh does not have (it has %v)", fk.Side(), a.Mesh.BoundaryNames())}
		}
		sides[i] = f
	}
	W := a.Workers
	if W <= 0 {
		W = runtime.GOMAXPROCS(0)
	}
	nch := len(a.plan.rows)
	W = max(1, min(W, nch))
	ws := make([]*worker, W)
	for w := range ws {
		ws[w] = a.newWorker(k, w, in)
	}
	a.growLogs()
	if W == 1 {
		for c := range nch {
			a.runChunk(ws[0], c, A, b, in.Previous, in.Recovered)
		}
	} else {
		var next atomic.Int64
		var wg sync.WaitGroup
		for w := range W {
			run := func() {
				for {
					c := int(next.Add(1) - 1)
					if c >= nch {
						return
					}
					a.runChunk(ws[w], c, A, b, in.Previous, in.Recovered)
				}
			}
			if w == W-1 {
				run() // the calling goroutine is the last worker
			} else {
				wg.Go(run)
			}
		}
		wg.Wait()
	}
	a.replayLogs(A, b)
	// Boundary facets, serially.
	w := ws[0]
	fa, fb := w.Ae[:a.nLocal*a.nLocal], w.be[:a.nLocal]
	fin := &kernel.FacetInput{}
	for i, fk := range facets {
		for _, f := range sides[i] {
			c := int(f.Cell)
			a.gatherCoords(c, w.in.Coords)
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

// growLogs makes the log value buffers on the first Assemble call; they
// are kept for later calls.
func (a *Assembler) growLogs() {
	if a.logA != nil {
		return
	}
	p := &a.plan
	a.logA = make([][]float64, len(p.logPos))
	a.logB = make([][]float64, len(p.logDof))
	for k := range p.logPos {
		a.logA[k] = padded(len(p.logPos[k]))
		a.logB[k] = padded(len(p.logDof[k]))
	}
}

// runChunk zeroes the rows chunk k owns, then computes and adds the
// element data of its cells (see chunkPlan).
func (a *Assembler) runChunk(w *worker, k int, A *sparse.CSR, b, prev, rec []float64) {
	p := &a.plan
	rp := A.RowPtr
	for _, r := range p.rows[k] {
		clear(A.Val[rp[r[0]]:rp[r[1]]])
		clear(b[r[0]:r[1]])
	}
	n := a.nLocal
	val := A.Val
	first := p.first
	own := int32(k)
	la, lb := a.logA[k], a.logB[k]
	ia, ib := 0, 0
	mixed := p.mixed[k]
	n2 := n * n
	end := min(a.Dofs.NumCells, (k+1)*p.size)
	for c0 := k * p.size; c0 < end; c0 += microBatch {
		c1 := min(c0+microBatch, end)
		// Compute a few cells, then add them: the kernel's arithmetic and
		// the scatter's scattered memory accesses run as separate loops.
		for c := c0; c < c1; c++ {
			i := c - c0
			a.compute(w, c, w.Ae[i*n2:(i+1)*n2], w.be[i*n:(i+1)*n], prev, rec)
		}
		for c := c0; c < c1; c++ {
			i := c - c0
			Ae, be := w.Ae[i*n2:(i+1)*n2], w.be[i*n:(i+1)*n]
			pos := a.pos[c*n2 : (c+1)*n2]
			dofs := a.Dofs.CellDofs(c)
			if len(mixed) == 0 || int(mixed[0]) != c {
				for j, q := range pos {
					val[q] += Ae[j]
				}
				for r, g := range dofs {
					b[g] += be[r]
				}
				continue
			}
			mixed = mixed[1:]
			for r, g := range dofs {
				ar := Ae[r*n : (r+1)*n]
				if first[g] == own {
					for j, q := range pos[r*n : (r+1)*n] {
						val[q] += ar[j]
					}
					b[g] += be[r]
					continue
				}
				ia += copy(la[ia:], ar)
				lb[ib] = be[r]
				ib++
			}
		}
	}
}

// replayLogs adds the chunks' logged contributions, chunk by chunk.
func (a *Assembler) replayLogs(A *sparse.CSR, b []float64) {
	val := A.Val
	for k, lp := range a.plan.logPos {
		la := a.logA[k]
		for i, q := range lp {
			val[q] += la[i]
		}
		lb := a.logB[k]
		for i, g := range a.plan.logDof[k] {
			b[g] += lb[i]
		}
	}
}

func (a *Assembler) newWorker(k kernel.Kernel, w int, in Input) *worker {
	wk := &worker{k: k}
	if f, ok := k.(kernel.Forker); ok && w > 0 {
		wk.k = f.Fork()
	}
	nv := a.Mesh.Cell.NumVertices()
	wk.in.Coords = padded(nv * a.Mesh.Dim)
	wk.in.Time = in.Time
	wk.in.Step = in.Step
	if in.Previous != nil {
		wk.prev = padded(a.nLocal)
	}
	if in.Recovered != nil {
		wk.rec = padded(a.nLocal * a.Mesh.Dim)
	}
	wk.Ae = padded(microBatch * a.nLocal * a.nLocal)
	wk.be = padded(microBatch * a.nLocal)
	return wk
}

// gatherCoords copies the vertex coordinates of cell c into dst (length
// NumVertices*Dim); the same values as mesh.Mesh.CellCoords without its
// per-call overheads.
func (a *Assembler) gatherCoords(c int, dst []float64) {
	m := a.Mesh
	nv := a.nVert
	vs := m.Cells[c*nv : (c+1)*nv]
	if m.Dim == 2 {
		dst = dst[:2*nv]
		for i, v := range vs {
			dst[2*i], dst[2*i+1] = m.Coords[2*v], m.Coords[2*v+1]
		}
		return
	}
	d := m.Dim
	for i, v := range vs {
		copy(dst[i*d:(i+1)*d], m.Coords[int(v)*d:(int(v)+1)*d])
	}
}

// compute runs the kernel on cell c into Ae, be. No allocation.
func (a *Assembler) compute(w *worker, c int, Ae, be, prev, rec []float64) {
	a.gatherCoords(c, w.in.Coords)
	w.in.Index = c
	if prev != nil {
		a.Dofs.Gather(c, prev, w.prev)
		w.in.Previous = w.prev
	}
	if rec != nil {
		d := a.Mesh.Dim
		for l, g := range a.Dofs.CellDofs(c) {
			copy(w.rec[l*d:(l+1)*d], rec[int(g)*d:(int(g)+1)*d])
		}
		w.in.Recovered = w.rec
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
