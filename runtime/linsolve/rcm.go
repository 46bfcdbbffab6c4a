package linsolve

import (
	"slices"

	"github.com/formwright/formwright/runtime/sparse"
)

// symGraph returns the adjacency lists (without self loops) of the pattern
// of A + Aᵀ, in CSR form.
func symGraph(A *sparse.CSR) (ptr []int, adj []int32) {
	n := A.N
	T := A.Transpose()
	ptr = make([]int, n+1)
	// Merge the sorted rows of A and Aᵀ; count first, then fill.
	for pass := 0; pass < 2; pass++ {
		for i := 0; i < n; i++ {
			a, ae := A.RowPtr[i], A.RowPtr[i+1]
			t, te := T.RowPtr[i], T.RowPtr[i+1]
			cnt := 0
			for a < ae || t < te {
				var c int32
				switch {
				case t >= te || (a < ae && A.Col[a] < T.Col[t]):
					c = A.Col[a]
					a++
				case a >= ae || T.Col[t] < A.Col[a]:
					c = T.Col[t]
					t++
				default:
					c = A.Col[a]
					a++
					t++
				}
				if int(c) == i {
					continue
				}
				if pass == 1 {
					adj[ptr[i]+cnt] = c
				}
				cnt++
			}
			if pass == 0 {
				ptr[i+1] = ptr[i] + cnt
			}
		}
		if pass == 0 {
			adj = make([]int32, ptr[n])
		}
	}
	return ptr, adj
}

// RCM returns the reverse Cuthill–McKee ordering of the square matrix A
// (George & Liu 1981, Computer Solution of Large Sparse Positive Definite
// Systems, §4.3), computed on the graph of A + Aᵀ: perm[new] = old. Each
// connected component starts from a pseudo-peripheral node found by the
// George–Liu level-structure iteration (George & Liu 1979, ACM TOMS 5);
// neighbours are visited in increasing degree. Cost O(nnz log d) with d the
// largest degree. The ordering reduces bandwidth and profile.
func RCM(A *sparse.CSR) []int {
	checkSquare("rcm", A)
	n := A.N
	ptr, adj := symGraph(A)
	deg := func(v int32) int { return ptr[v+1] - ptr[v] }
	perm := make([]int, 0, n)
	done := make([]bool, n)   // numbered in the final ordering
	level := make([]int32, n) // BFS scratch: level+1, 0 = unseen
	var queue []int32

	// bfs fills queue with the component of root in level order and
	// returns the index in queue where the last level starts and the
	// number of levels. It leaves level[] marked for the component.
	bfs := func(root int32) (lastStart, depth int) {
		queue = append(queue[:0], root)
		level[root] = 1
		for h := 0; h < len(queue); h++ {
			v := queue[h]
			if int(level[v]) > depth {
				depth = int(level[v])
				lastStart = h
			}
			for _, u := range adj[ptr[v]:ptr[v+1]] {
				if level[u] == 0 && !done[u] {
					level[u] = level[v] + 1
					queue = append(queue, u)
				}
			}
		}
		return lastStart, depth
	}
	resetLevels := func() {
		for _, v := range queue {
			level[v] = 0
		}
	}
	for s := 0; s < n; s++ {
		if done[s] {
			continue
		}
		// Start from a node of minimum degree in this component.
		bfs(int32(s))
		root := int32(s)
		for _, v := range queue {
			if deg(v) < deg(root) {
				root = v
			}
		}
		resetLevels()
		// Pseudo-peripheral node iteration.
		last, depth := bfs(root)
		for {
			cand := queue[last]
			for _, v := range queue[last:] {
				if deg(v) < deg(cand) {
					cand = v
				}
			}
			resetLevels()
			l2, d2 := bfs(cand)
			if d2 <= depth {
				resetLevels()
				break
			}
			root, last, depth = cand, l2, d2
		}
		// Cuthill–McKee from root.
		start := len(perm)
		perm = append(perm, int(root))
		done[root] = true
		var nbr []int32
		for h := start; h < len(perm); h++ {
			v := perm[h]
			nbr = nbr[:0]
			for _, u := range adj[ptr[v]:ptr[v+1]] {
				if !done[u] {
					done[u] = true
					nbr = append(nbr, u)
				}
			}
			slices.SortStableFunc(nbr, func(a, b int32) int { return deg(a) - deg(b) })
			for _, u := range nbr {
				perm = append(perm, int(u))
			}
		}
	}
	slices.Reverse(perm)
	return perm
}

// Bandwidths returns the lower and upper bandwidths of P A Pᵀ for the
// ordering perm (perm[new] = old; nil means the identity).
func Bandwidths(A *sparse.CSR, perm []int) (kl, ku int) {
	n := A.N
	inv := invPerm(n, perm)
	for i := 0; i < n; i++ {
		for k := A.RowPtr[i]; k < A.RowPtr[i+1]; k++ {
			d := inv[A.Col[k]] - inv[i]
			if d > ku {
				ku = d
			}
			if -d > kl {
				kl = -d
			}
		}
	}
	return kl, ku
}

func invPerm(n int, perm []int) []int {
	inv := make([]int, n)
	if perm == nil {
		for i := range inv {
			inv[i] = i
		}
		return inv
	}
	if len(perm) != n {
		panic("linsolve: permutation length differs from matrix dimension")
	}
	for i := range inv {
		inv[i] = -1
	}
	for newi, old := range perm {
		if old < 0 || old >= n || inv[old] >= 0 {
			panic("linsolve: invalid permutation")
		}
		inv[old] = newi
	}
	return inv
}
