package sparse

import (
	"fmt"
	"slices"
)

// PatternFromElements builds the n×n sparsity pattern of a finite-element
// matrix: (i, j) is stored exactly when dofs i and j belong to a common
// element. dofsOf(e, buf) returns the global dofs of element e, and may
// reuse buf (passed with length 0) to avoid allocation; negative dofs are
// ignored (so a caller can mark eliminated or absent dofs), and repeated
// dofs within one element are allowed. Values are zero. dofsOf(0, nil) is
// called once more at the start to size the element list.
//
// Memory: no per-row maps. The routine calls dofsOf once per element and
// keeps the element-to-dof lists in one flat int32 array, builds the
// transposed dof-to-element lists by counting (two passes), then makes two
// passes over the rows — count, then fill — with a single marker array of n
// int32 to drop duplicates, and sorts each row in place. Peak transient
// memory is about 2·(element-dof pairs)·4 bytes + 3n·8 bytes besides the
// result, which itself takes 12 bytes per nonzero plus 8(n+1) bytes. Time
// is O(Σ_rows Σ_{elements of row} dofs + nnz log(row length)).
func PatternFromElements(n int, nElems int, dofsOf func(e int, buf []int32) []int32) *CSR {
	if n < 0 || nElems < 0 {
		panic(fmt.Sprintf("sparse: PatternFromElements: negative sizes n = %d, nElems = %d", n, nElems))
	}
	// Element -> dofs, flat.
	eptr := make([]int, nElems+1)
	var edof []int32
	var buf []int32
	if nElems > 0 {
		// Size the flat list from the first element (exact for meshes of
		// one cell type), so appending does not double the memory.
		buf = dofsOf(0, nil)
		edof = make([]int32, 0, nElems*len(buf)+len(buf))
	}
	for e := 0; e < nElems; e++ {
		d := dofsOf(e, buf[:0])
		for _, g := range d {
			if g >= 0 {
				if int(g) >= n {
					panic(fmt.Sprintf("sparse: PatternFromElements: element %d has dof %d >= n = %d", e, g, n))
				}
				edof = append(edof, g)
			}
		}
		eptr[e+1] = len(edof)
		buf = d
	}
	// Dof -> elements by counting.
	dptr := make([]int, n+1)
	for _, g := range edof {
		dptr[g+1]++
	}
	for i := 0; i < n; i++ {
		dptr[i+1] += dptr[i]
	}
	delem := make([]int32, len(edof))
	next := append([]int(nil), dptr[:n]...)
	for e := 0; e < nElems; e++ {
		for _, g := range edof[eptr[e]:eptr[e+1]] {
			// An element listing g twice is recorded twice; the marker
			// below removes the duplicate columns.
			delem[next[g]] = int32(e)
			next[g]++
		}
	}
	next = nil
	mark := make([]int32, n)
	for i := range mark {
		mark[i] = -1
	}
	// Pass 1: count unique columns per row.
	rowPtr := make([]int, n+1)
	for i := 0; i < n; i++ {
		cnt := 0
		for _, e := range delem[dptr[i]:dptr[i+1]] {
			for _, g := range edof[eptr[e]:eptr[e+1]] {
				if mark[g] != int32(i) {
					mark[g] = int32(i)
					cnt++
				}
			}
		}
		rowPtr[i+1] = rowPtr[i] + cnt
	}
	// Pass 2: fill and sort.
	for i := range mark {
		mark[i] = -1
	}
	col := make([]int32, rowPtr[n])
	for i := 0; i < n; i++ {
		p := rowPtr[i]
		for _, e := range delem[dptr[i]:dptr[i+1]] {
			for _, g := range edof[eptr[e]:eptr[e+1]] {
				if mark[g] != int32(i) {
					mark[g] = int32(i)
					col[p] = g
					p++
				}
			}
		}
		slices.Sort(col[rowPtr[i]:p])
	}
	return &CSR{N: n, M: n, RowPtr: rowPtr, Col: col, Val: make([]float64, len(col))}
}

// ScatterIndex writes into pos (grown if needed and returned) the
// positions in A.Val of the local entries of an element with global dofs
// dofs: pos[a*len(dofs)+b] is the position of (dofs[a], dofs[b]), in the
// row-major order of the element matrix. Pairs with a negative dof get -1.
// It panics if a pair with non-negative dofs is not in the pattern (the
// pattern was not built from this element). Assembly can precompute pos
// once per element and then add without searching (see AddScatter).
func (A *CSR) ScatterIndex(dofs []int32, pos []int) []int {
	k := len(dofs)
	pos = slices.Grow(pos[:0], k*k)[:k*k]
	for a, i := range dofs {
		for b, j := range dofs {
			if i < 0 || j < 0 {
				pos[a*k+b] = -1
				continue
			}
			p := A.Index(int(i), int(j))
			if p < 0 {
				panic(fmt.Sprintf("sparse: ScatterIndex: entry (%d,%d) not in the pattern", i, j))
			}
			pos[a*k+b] = p
		}
	}
	return pos
}

// AddScatter adds the local matrix local (row-major, same order as pos)
// into A.Val at the positions pos computed by ScatterIndex; entries with
// pos = -1 are skipped.
func (A *CSR) AddScatter(pos []int, local []float64) {
	if len(pos) != len(local) {
		panic(fmt.Sprintf("sparse: AddScatter: len(pos) = %d, len(local) = %d", len(pos), len(local)))
	}
	for q, p := range pos {
		if p >= 0 {
			A.Val[p] += local[q]
		}
	}
}
