package distributed

import (
	"fmt"
	"math"
	"runtime"
	"sync"

	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/mesh"
)

// Partition distributes a mesh and its dofs over MPI ranks. Cells go to
// ranks by recursive coordinate bisection; a dof belongs to the lowest
// rank among the cells that hold it; dofs are renumbered so that each
// rank owns one contiguous range, in their runtime/dof order within it;
// and each owned row's nonzeros are counted, inside and outside the
// owner's diagonal block, for the exact preallocation of a parallel AIJ
// matrix.
type Partition struct {
	Ranks int
	// CellRank is the rank of each cell.
	CellRank []int32
	// New is the new number of each dof of the runtime/dof numbering;
	// Old is its inverse.
	New, Old []int32
	// Start: rank r owns the new dofs Start[r] .. Start[r+1]-1.
	Start []int
	// Diag and Off count, for each row in the new numbering, the
	// nonzeros whose column the row's owner owns (the diagonal block)
	// and those it does not: PETSc's d_nnz and o_nnz.
	Diag, Off []int32
}

// Owner is the rank that owns new dof i.
func (p *Partition) Owner(i int) int {
	lo, hi := 0, p.Ranks
	for hi-lo > 1 {
		mid := (lo + hi) / 2
		if p.Start[mid] <= i {
			lo = mid
		} else {
			hi = mid
		}
	}
	return lo
}

// NewPartition partitions mesh m with dof map dm over ranks ranks
// (1 ≤ ranks ≤ cells).
func NewPartition(m *mesh.Mesh, dm *dof.Numbering, ranks int) (*Partition, error) {
	nc := m.NumCells()
	if ranks < 1 || ranks > nc {
		return nil, &OptionsError{fmt.Sprintf("%d ranks for a mesh of %d cells (give 1 to %d)", ranks, nc, nc)}
	}
	p := &Partition{Ranks: ranks, CellRank: Bisect(m, ranks)}
	p.number(dm)
	p.preallocate(dm)
	return p, nil
}

// Bisect assigns the cells of m to parts 0 … parts−1 by recursive
// coordinate bisection of the cell centroids (Berger & Bokhari 1987, "A
// partitioning strategy for nonuniform problems on multiprocessors", IEEE
// Trans. Comput. C-36(5) [memory]): a set of cells meant for k parts is
// cut across the longest side of its centroids' bounding box so that
// ⌊k/2⌋/k of the cells go to the first half, and each half is cut again.
// Parts differ in size by at most one cell per level. Ties in a
// coordinate are broken by the cell number, so the result is
// deterministic.
func Bisect(m *mesh.Mesh, parts int) []int32 {
	nc, d, nv := m.NumCells(), m.Dim, m.Cell.NumVertices()
	cent := make([]float64, nc*d)
	for c := 0; c < nc; c++ {
		for _, v := range m.CellVertices(c) {
			for k := 0; k < d; k++ {
				cent[c*d+k] += m.Coords[int(v)*d+k]
			}
		}
		for k := 0; k < d; k++ {
			cent[c*d+k] /= float64(nv)
		}
	}
	ids := make([]int32, nc)
	for i := range ids {
		ids[i] = int32(i)
	}
	out := make([]int32, nc)
	bisect(ids, cent, d, parts, 0, out)
	return out
}

func bisect(ids []int32, cent []float64, d, parts int, first int32, out []int32) {
	if parts == 1 {
		for _, c := range ids {
			out[c] = first
		}
		return
	}
	axis, widest := 0, -1.0
	for k := 0; k < d; k++ {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, c := range ids {
			x := cent[int(c)*d+k]
			lo, hi = math.Min(lo, x), math.Max(hi, x)
		}
		if hi-lo > widest {
			axis, widest = k, hi-lo
		}
	}
	left := parts / 2
	k := len(ids) * left / parts
	less := func(a, b int32) bool {
		xa, xb := cent[int(a)*d+axis], cent[int(b)*d+axis]
		return xa < xb || (xa == xb && a < b)
	}
	selectNth(ids, k, less)
	bisect(ids[:k], cent, d, left, first, out)
	bisect(ids[k:], cent, d, parts-left, first+int32(left), out)
}

// selectNth reorders s so that the k smallest elements (by less, a strict
// total order) come first: Hoare's selection (Hoare 1961, "Algorithm 65:
// Find", CACM 4(7) [memory]) with the median of three as pivot.
func selectNth(s []int32, k int, less func(a, b int32) bool) {
	lo, hi := 0, len(s)-1
	for hi > lo && k > lo && k <= hi {
		mid := lo + (hi-lo)/2
		if less(s[mid], s[lo]) {
			s[mid], s[lo] = s[lo], s[mid]
		}
		if less(s[hi], s[lo]) {
			s[hi], s[lo] = s[lo], s[hi]
		}
		if less(s[hi], s[mid]) {
			s[hi], s[mid] = s[mid], s[hi]
		}
		pivot := s[mid]
		i, j := lo, hi
		for i <= j {
			for less(s[i], pivot) {
				i++
			}
			for less(pivot, s[j]) {
				j--
			}
			if i <= j {
				s[i], s[j] = s[j], s[i]
				i++
				j--
			}
		}
		// s[lo..j] ≤ pivot ≤ s[i..hi], and s[j+1..i-1] equal the pivot.
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return
		}
	}
}

// number gives each dof the lowest rank among its cells and renumbers
// the dofs rank by rank, keeping their order within a rank.
func (p *Partition) number(dm *dof.Numbering) {
	n := dm.NumDofs
	owner := make([]int32, n)
	for i := range owner {
		owner[i] = int32(p.Ranks)
	}
	for c := 0; c < dm.NumCells; c++ {
		r := p.CellRank[c]
		for _, g := range dm.CellDofs(c) {
			owner[g] = min(owner[g], r)
		}
	}
	p.Start = make([]int, p.Ranks+1)
	for _, r := range owner {
		p.Start[r+1]++
	}
	for r := 0; r < p.Ranks; r++ {
		p.Start[r+1] += p.Start[r]
	}
	next := append([]int(nil), p.Start[:p.Ranks]...)
	p.New, p.Old = make([]int32, n), make([]int32, n)
	for i, r := range owner {
		p.New[i] = int32(next[r])
		p.Old[next[r]] = int32(i)
		next[r]++
	}
}

// preallocate counts the nonzeros of each row of the assembled matrix —
// the dofs that share a cell with the row's dof — inside and outside the
// owner's diagonal block. It walks the dof-to-cell adjacency with a
// marker per worker, so the pattern itself is never stored.
func (p *Partition) preallocate(dm *dof.Numbering) {
	n := dm.NumDofs
	// cellsOf[at[i]:at[i+1]] are the cells holding dof i.
	at := make([]int, n+1)
	for c := 0; c < dm.NumCells; c++ {
		for _, g := range dm.CellDofs(c) {
			at[g+1]++
		}
	}
	for i := 0; i < n; i++ {
		at[i+1] += at[i]
	}
	cellsOf := make([]int32, at[n])
	fill := append([]int(nil), at[:n]...)
	for c := 0; c < dm.NumCells; c++ {
		for _, g := range dm.CellDofs(c) {
			cellsOf[fill[g]] = int32(c)
			fill[g]++
		}
	}
	fill = nil
	p.Diag, p.Off = make([]int32, n), make([]int32, n)
	workers := min(runtime.GOMAXPROCS(0), max(1, n/10000))
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func(lo, hi int) {
			defer wg.Done()
			mark := make([]int32, n)
			for i := lo; i < hi; i++ {
				row := p.New[i]
				r := p.Owner(int(row))
				first, last := int32(p.Start[r]), int32(p.Start[r+1])
				var diag, off int32
				for _, c := range cellsOf[at[i]:at[i+1]] {
					for _, g := range dm.CellDofs(int(c)) {
						if mark[g] == int32(i)+1 {
							continue
						}
						mark[g] = int32(i) + 1
						if j := p.New[g]; j >= first && j < last {
							diag++
						} else {
							off++
						}
					}
				}
				p.Diag[row], p.Off[row] = diag, off
			}
		}(w*n/workers, (w+1)*n/workers)
	}
	wg.Wait()
}
