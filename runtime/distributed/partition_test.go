package distributed

import (
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/sparse"
)

// TestSelectNth: after selectNth(s, k), the first k elements are the k
// smallest, checked against a full sort (slices.Sort) on seeded random
// data with many repeated keys and on sorted and reversed input.
func TestSelectNth(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for trial := 0; trial < 200; trial++ {
		n := 1 + rng.IntN(300)
		keys := make([]int, n)
		for i := range keys {
			keys[i] = rng.IntN(1 + n/4)
		}
		switch trial % 3 {
		case 1:
			slices.Sort(keys)
		case 2:
			slices.Sort(keys)
			slices.Reverse(keys)
		}
		s := make([]int32, n)
		for i := range s {
			s[i] = int32(i)
		}
		less := func(a, b int32) bool { return keys[a] < keys[b] || (keys[a] == keys[b] && a < b) }
		k := rng.IntN(n + 1)
		selectNth(s, k, less)
		want := slices.Clone(s)
		slices.SortFunc(want, func(a, b int32) int {
			if less(a, b) {
				return -1
			}
			if less(b, a) {
				return 1
			}
			return 0
		})
		got := slices.Clone(s[:k])
		slices.Sort(got)
		w := slices.Clone(want[:k])
		slices.Sort(w)
		if !slices.Equal(got, w) {
			t.Fatalf("n %d, k %d: first k are %v, want %v", n, k, got, w)
		}
	}
}

// TestPartition checks a partition of a mixed P2/P1 two-field system on
// triangles over 3 ranks against independent computations: every rank
// gets ⌊C/3⌋ or ⌈C/3⌉ cells; the renumbering is a permutation with
// contiguous owned ranges, each dof owned by the lowest rank among its
// cells; and the nonzero counts of every row equal those of the CSR
// pattern that runtime/sparse.PatternFromElements builds from the same
// cells (the pattern the Go runtime assembles into), split by the
// owner's column range.
func TestPartition(t *testing.T) {
	m := mustMesh(t, "span:0,2,0,1:14x9:tri")
	p2, p1 := element.MustLagrange(m.Cell, 2), element.MustLagrange(m.Cell, 1)
	dm, err := dof.New(m.Cell, m.Coords, m.Cells, []dof.FieldSpec{{Name: "vel", Element: p2, Components: 2}, {Name: "p", Element: p1, Components: 1}})
	if err != nil {
		t.Fatal(err)
	}
	const ranks = 3
	p, err := NewPartition(m, dm, ranks)
	if err != nil {
		t.Fatal(err)
	}
	count := make([]int, ranks)
	for _, r := range p.CellRank {
		count[r]++
	}
	nc := m.NumCells()
	for r, c := range count {
		if c < nc/ranks || c > (nc+ranks-1)/ranks+1 {
			t.Errorf("rank %d has %d of %d cells", r, c, nc)
		}
	}
	if p.Start[0] != 0 || p.Start[ranks] != dm.NumDofs {
		t.Fatalf("ranges %v for %d dofs", p.Start, dm.NumDofs)
	}
	seen := make([]bool, dm.NumDofs)
	for i, j := range p.New {
		if seen[j] || p.Old[j] != int32(i) {
			t.Fatalf("New/Old is not a permutation at %d", i)
		}
		seen[j] = true
	}
	low := make([]int, dm.NumDofs)
	for i := range low {
		low[i] = ranks
	}
	for c := 0; c < nc; c++ {
		for _, g := range dm.CellDofs(c) {
			low[g] = min(low[g], int(p.CellRank[c]))
		}
	}
	for i := range low {
		if o := p.Owner(int(p.New[i])); o != low[i] {
			t.Fatalf("dof %d is owned by rank %d, its lowest cell rank is %d", i, o, low[i])
		}
	}
	pat := sparse.PatternFromElements(dm.NumDofs, nc, func(c int, buf []int32) []int32 {
		for _, g := range dm.CellDofs(c) {
			buf = append(buf, p.New[g])
		}
		return buf
	})
	for row := 0; row < dm.NumDofs; row++ {
		r := p.Owner(row)
		var diag, off int32
		for k := pat.RowPtr[row]; k < pat.RowPtr[row+1]; k++ {
			if j := int(pat.Col[k]); j >= p.Start[r] && j < p.Start[r+1] {
				diag++
			} else {
				off++
			}
		}
		if p.Diag[row] != diag || p.Off[row] != off {
			t.Fatalf("row %d: counts %d/%d, the pattern has %d/%d", row, p.Diag[row], p.Off[row], diag, off)
		}
	}
	if _, err := NewPartition(m, dm, nc+1); err == nil {
		t.Error("more ranks than cells accepted")
	}
}

// TestParseResult reads a result file as the driver writes it and
// rejects one without the residual.
func TestParseResult(t *testing.T) {
	res, err := parseResult(strings.NewReader("petsc 3.18.5\nksp cg\npc hypre\nfactor boomeramg\ndirect 0\nsymmetric 1\nconverged 1\n" +
		"reason CONVERGED_RTOL\niterations 8\nresidual 5.5e-11\nmallocs 0\nunneeded 0\nnonzeros 1889\ntime_solve 0.25\nmaxrss_kb 1000 2000\n"))
	if err != nil {
		t.Fatal(err)
	}
	if res.KSP != "cg" || res.Iterations != 8 || res.Residual != 5.5e-11 || !res.Symmetric || res.Direct || res.Times["solve"] != 0.25 ||
		!slices.Equal(res.MaxRSS, []int64{1000 * 1024, 2000 * 1024}) || res.Nonzeros != 1889 {
		t.Errorf("parsed %+v", res)
	}
	if _, err := parseResult(strings.NewReader("ksp cg\npc none\nconverged 1\nreason X\niterations 3\n")); err == nil {
		t.Error("a result without its residual was accepted")
	}
}
