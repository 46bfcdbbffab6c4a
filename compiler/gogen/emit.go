package gogen

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"
)

// prod is c · Π ids (c = 1 when ids is non-empty and no factor is given).
type prod struct {
	c   float64
	ids []int
}

type stmt struct {
	comment []string
	target  string
	terms   []prod
	assign  bool // "=" rather than "+="
}

// loopStmt is an accumulation over all basis-function pairs of a block in
// loop mode: acc[(ro+i)·N+co+j] += Σ v[i]·t[j] (b[ro+i] += Σ v[i]·t when
// nc == 0, t a scalar).
type loopStmt struct {
	comment        []string
	ro, co, nr, nc int
	upper          bool // j from i (symmetric diagonal block)
	pairs          [][2]int
}

type block struct {
	ro, co, nr, nc int
	tei, uei       int
	groups         []*group
}

// refPart is one term of a physical basis derivative on an affine cell:
// adj·(1/det J)^rp (adj a cell-constant node made of adjugate entries of
// J) times reference derivative idx (0 value, 1+m ∂/∂ξ_m, 1+d+m·d+n
// ∂²/∂ξ_m∂ξ_n with m ≤ n).
type refPart struct {
	idx, k, rp int
}

func (g *bodyGen) refDecomp(D [3]uint8) []refPart {
	d := g.dim
	switch order(D) {
	case 0:
		return []refPart{{0, g.d.konst(1), 0}}
	case 1:
		k := axes(D)[0]
		var out []refPart
		for m := 0; m < d; m++ {
			out = append(out, refPart{1 + m, g.adj(m, k), 1})
		}
		return out
	}
	ax := axes(D)
	k, l := ax[0], ax[1]
	var out []refPart
	for m := 0; m < d; m++ {
		for n := m; n < d; n++ {
			K := g.d.mul(g.adj(m, k), g.adj(n, l))
			if m != n {
				K = g.d.add(K, g.d.mul(g.adj(n, k), g.adj(m, l)))
			}
			out = append(out, refPart{1 + d + m*d + n, K, 2})
		}
	}
	return out
}

// refAt is reference derivative idx of basis function a of element ei at
// point q.
func (g *bodyGen) refAt(ei, idx, q, a int) float64 {
	d := g.dim
	t := g.etab[ei]
	switch {
	case idx == 0:
		return t.val[q][a]
	case idx <= d:
		return t.grad[q][a*d+idx-1]
	}
	r := idx - 1 - d
	m, n := r/d, r%d
	return t.hess[q][(a*d+m)*d+n]
}

// preMatrix is Σ_q w_q R^b_i(q) R^a_j(q), the reference integral of a pair
// of reference derivatives (a == -1: the linear form, R^a = 1), with
// entries below tol·max|entry| set to zero: they are round-off of sums
// that vanish exactly (tolerance common practice, no source; it bounds
// the relative change of an entry by about 1e-14).
func (g *bodyGen) preMatrix(tei, b, uei, a, nr, nc int) [][]float64 {
	M := make([][]float64, nr)
	mx := 0.0
	for i := range M {
		M[i] = make([]float64, max(nc, 1))
		for j := range M[i] {
			s := 0.0
			for q := 0; q < g.nq; q++ {
				r := g.refAt(tei, b, q, i)
				if a >= 0 {
					r *= g.refAt(uei, a, q, j)
				}
				s += g.wts[q] * r
			}
			M[i][j] = s
			mx = math.Max(mx, math.Abs(s))
		}
	}
	for i := range M {
		for j := range M[i] {
			if math.Abs(M[i][j]) <= 1e-14*mx {
				M[i][j] = 0
			}
		}
	}
	return M
}

func (g *bodyGen) blocks(gs []*group) (bil []*block, lin []*block) {
	find := func(list *[]*block, ro, co, nr, nc, tei, uei int) *block {
		for _, b := range *list {
			if b.ro == ro && b.co == co {
				return b
			}
		}
		b := &block{ro: ro, co: co, nr: nr, nc: nc, tei: tei, uei: uei}
		*list = append(*list, b)
		return b
	}
	for _, gr := range gs {
		tf := g.fields[gr.key.tf]
		ro := tf.off + gr.key.tc*tf.elem.NumNodes()
		if gr.key.linear {
			b := find(&lin, ro, 0, tf.elem.NumNodes(), 0, tf.ei, -1)
			b.groups = append(b.groups, gr)
			continue
		}
		uf := g.fields[gr.key.uf]
		co := uf.off + gr.key.uc*uf.elem.NumNodes()
		b := find(&bil, ro, co, tf.elem.NumNodes(), uf.elem.NumNodes(), tf.ei, uf.ei)
		b.groups = append(b.groups, gr)
	}
	return bil, lin
}

// body generates the statements of one element computation. facetCall is
// true for a facet method (the input is then a *kernel.CellInput too).
func (g *bodyGen) body(gs []*group, sym bool) (string, error) {
	N := g.n
	bil, lin := g.blocks(gs)
	var roots []int
	var stmtsA, stmtsB []stmt
	var loops []loopStmt
	comment := func(b *block, strategy string, pick func(*group) bool) []string {
		out := []string{fmt.Sprintf("%s: rows %d..%d, columns %d..%d:", strategy, b.ro, b.ro+b.nr-1, b.co, b.co+max(b.nc, 1)-1)}
		if b.nc == 0 {
			out[0] = fmt.Sprintf("%s: rows %d..%d of the right-hand side:", strategy, b.ro, b.ro+b.nr-1)
		}
		for _, gr := range b.groups {
			if pick(gr) {
				for _, s := range termComment(gr) {
					out = append(out, "  • "+s)
				}
			}
		}
		return out
	}
	isA := func(gr *group) bool { return gr.cellA }
	isB := func(gr *group) bool { return !gr.cellA }
	hasAny := func(b *block, pick func(*group) bool) bool {
		for _, gr := range b.groups {
			if pick(gr) {
				return true
			}
		}
		return false
	}
	roots = append(roots, g.det())

	// Strategy A: cell-constant coefficients on affine cells, integrated
	// in advance. A_ij += Σ_(b,a) M^{ba}_ij G_ba with the reference
	// integrals M^{ba} constants and the geometry factors
	// G_ba = Σ_terms coef·scale·K_b·K_a computed once per cell.
	for _, b := range append(append([]*block{}, bil...), lin...) {
		if !hasAny(b, isA) {
			continue
		}
		pairs := map[[2]int]int{}
		atoms := map[[2]int]map[int][]int{}
		rpow := map[[2]int]int{}
		for _, gr := range b.groups {
			if !gr.cellA {
				continue
			}
			tdec := g.refDecomp(gr.key.tD)
			udec := []refPart{{-1, g.d.konst(1), 0}}
			if !gr.key.linear {
				udec = g.refDecomp(gr.key.uD)
			}
			lin := g.linearTerms(gr.coef)
			for _, tp := range tdec {
				for _, up := range udec {
					k := [2]int{tp.idx, up.idx}
					kk := g.d.mul(tp.k, up.k)
					if atoms[k] == nil {
						atoms[k] = map[int][]int{}
					}
					for _, lt := range lin {
						atoms[k][lt.atom] = append(atoms[k][lt.atom], g.d.mul(g.d.konst(lt.c), kk))
					}
					rpow[k] = tp.rp + up.rp // fixed by the derivative orders
				}
			}
		}
		for k := range atoms {
			pairs[k] = 0
		}
		keys := sortedKeys(pairs)
		mats := map[[2]int][][]float64{}
		inner := map[[2]int]map[int]int{}
		late := map[int]bool{}
		var lateIDs []int
		for _, k := range keys {
			// G = Σ_atoms atom · (scale·r^p·Σ λ K_b K_a): the geometric sums
			// do not wait for the coefficients (τ comes last in the
			// dependency chain of the cell), which then cost one
			// multiply-add each.
			var ids []int
			for a := range atoms[k] {
				ids = append(ids, a)
			}
			sort.Ints(ids)
			inner[k] = map[int]int{}
			for _, a := range ids {
				inner[k][a] = g.d.mul(g.scaledR(rpow[k]), g.d.add(atoms[k][a]...))
				if a >= 0 && !late[a] {
					late[a] = true
					lateIDs = append(lateIDs, a)
				}
			}
			if len(ids) == 1 && ids[0] < 0 {
				pairs[k] = inner[k][-1]
			} else {
				pairs[k] = -1 // has coefficient atoms
			}
			mats[k] = g.preMatrix(b.tei, k[0], b.uei, k[1], b.nr, b.nc)
		}
		sort.Ints(lateIDs)
		first := true
		for i := 0; i < b.nr; i++ {
			for j := 0; j < max(b.nc, 1); j++ {
				r, c := b.ro+i, b.co+j
				var target string
				if b.nc == 0 {
					target = fmt.Sprintf("rhs[%d]", r)
				} else {
					if sym && r > c {
						continue
					}
					target = fmt.Sprintf("acc[%d]", r*N+c)
				}
				// Entry = Σ_k M_k G_k(1) + Σ_atoms atom·(Σ_k M_k G_k(atom)):
				// the sums are ready before the coefficient atoms (τ), which
				// cost one multiply-add each at the end of the chain.
				var terms []prod
				for _, k := range keys {
					m := mats[k][i][j]
					if m == 0 {
						continue
					}
					one, ok := inner[k][-1]
					if !ok {
						continue
					}
					if v, ok := g.d.isConst(one); ok {
						if v != 0 {
							terms = append(terms, prod{m * v, nil})
						}
						continue
					}
					terms = append(terms, prod{m, []int{one}})
					roots = append(roots, one)
				}
				for _, a := range lateIDs {
					var sum []int
					for _, k := range keys {
						m := mats[k][i][j]
						if x, ok := inner[k][a]; ok && m != 0 {
							sum = append(sum, g.d.mul(g.d.konst(m), x))
						}
					}
					if len(sum) > 0 {
						terms = appendProd(g, terms, &roots, a, g.d.add(sum...))
					}
				}
				if len(terms) == 0 {
					continue
				}
				s := stmt{target: target, terms: terms}
				if first {
					s.comment = comment(b, "Integrated in advance (affine cell, coefficients constant in the cell)", isA)
					first = false
				}
				stmtsA = append(stmtsA, s)
			}
		}
	}

	// Strategy B: per quadrature point. For each test derivative β of a
	// block, t_β[j] = Σ_α w·coef_αβ·D^α φ_j, then
	// A_ij += Σ_β D^β φ_i · t_β[j]; b_i += Σ_β w·coef_β·D^β φ_i.
	w := -1
	for _, b := range bil {
		if !hasAny(b, isB) {
			continue
		}
		if w < 0 {
			w = g.weight()
		}
		type beta struct {
			tD     [3]uint8
			tDs    [][3]uint8 // tD and the derivatives merged into it
			t      []int
			alphas []*group
		}
		var betas []*beta
		for _, gr := range b.groups {
			if gr.cellA {
				continue
			}
			var be *beta
			for _, x := range betas {
				if x.tD == gr.key.tD {
					be = x
				}
			}
			if be == nil {
				nt := b.nc
				if g.loop {
					nt = 1 // t[0] stands for t[j], j the loop variable
				}
				be = &beta{tD: gr.key.tD, t: make([]int, nt)}
				for j := range be.t {
					be.t[j] = g.d.konst(0)
				}
				betas = append(betas, be)
			}
			be.alphas = append(be.alphas, gr)
		}
		// t_β[j] = Σ_coef (w·coef)·(Σ_α with that coef D^α φ_j): equal
		// coefficients (e.g. the two halves of a Laplacian) share a product.
		for _, be := range betas {
			var coefs []int
			for _, gr := range be.alphas {
				dup := false
				for _, c := range coefs {
					dup = dup || c == gr.coef
				}
				if !dup {
					coefs = append(coefs, gr.coef)
				}
			}
			for _, c := range coefs {
				wc := g.d.mul(w, c)
				for j := range be.t {
					jj := j
					if g.loop {
						jj = symA
					}
					var Ds [][3]uint8
					for _, gr := range be.alphas {
						if gr.coef == c {
							Ds = append(Ds, gr.key.uD)
						}
					}
					be.t[j] = g.d.add(be.t[j], g.d.mul(wc, g.basisSum(b.uei, jj, Ds)))
				}
			}
		}
		// Test derivatives whose column factors are the same nodes (the two
		// halves of a test-side Laplacian in GLS and VMS) share one row
		// factor, their sum: the point's update has one rank less.
		var merged []*beta
		for _, be := range betas {
			var into *beta
			for _, m := range merged {
				if slices.Equal(m.t, be.t) {
					into = m
				}
			}
			if into == nil {
				be.tDs = [][3]uint8{be.tD}
				merged = append(merged, be)
				continue
			}
			into.tDs = append(into.tDs, be.tD)
			into.alphas = append(into.alphas, be.alphas...)
		}
		betas = merged
		if g.loop {
			if sym && b.ro > b.co {
				continue
			}
			ls := loopStmt{comment: comment(b, "At each quadrature point, all basis-function pairs", isB),
				ro: b.ro, co: b.co, nr: b.nr, nc: b.nc, upper: sym && b.ro == b.co}
			for _, be := range betas {
				v := g.basisSum(b.tei, symA, be.tDs)
				ls.pairs = append(ls.pairs, [2]int{v, be.t[0]})
				roots = append(roots, v, be.t[0])
			}
			loops = append(loops, ls)
			continue
		}
		first := true
		for i := 0; i < b.nr; i++ {
			for j := 0; j < b.nc; j++ {
				r, c := b.ro+i, b.co+j
				if sym && r > c {
					continue
				}
				var terms []prod
				for _, be := range betas {
					v := g.basisSum(b.tei, i, be.tDs)
					t := be.t[j]
					terms = appendProd(g, terms, &roots, v, t)
				}
				if len(terms) == 0 {
					continue
				}
				s := stmt{target: fmt.Sprintf("acc[%d]", r*N+c), terms: terms}
				if first {
					s.comment = comment(b, "At each quadrature point", isB)
					first = false
				}
				stmtsB = append(stmtsB, s)
			}
		}
	}
	for _, b := range lin {
		if !hasAny(b, isB) {
			continue
		}
		if w < 0 {
			w = g.weight()
		}
		if g.loop {
			ls := loopStmt{comment: comment(b, "At each quadrature point, all basis functions", isB), ro: b.ro, nr: b.nr}
			for _, gr := range b.groups {
				if gr.cellA {
					continue
				}
				v, wc := g.basis(b.tei, symA, gr.key.tD), g.d.mul(w, gr.coef)
				ls.pairs = append(ls.pairs, [2]int{v, wc})
				roots = append(roots, v, wc)
			}
			loops = append(loops, ls)
			continue
		}
		first := true
		for i := 0; i < b.nr; i++ {
			var terms []prod
			for _, gr := range b.groups {
				if gr.cellA {
					continue
				}
				wc := g.d.mul(w, gr.coef)
				terms = appendProd(g, terms, &roots, g.basis(b.tei, i, gr.key.tD), wc)
			}
			if len(terms) == 0 {
				continue
			}
			s := stmt{target: fmt.Sprintf("rhs[%d]", b.ro+i), terms: terms}
			if first {
				s.comment = comment(b, "At each quadrature point", isB)
				first = false
			}
			stmtsB = append(stmtsB, s)
		}
	}
	if g.err != nil {
		return "", g.err
	}

	// Schedule and write.
	sc := newScheduler(g.d)
	sc.signName = g.names.sign
	sc.reserve("x", "pv", "q", "acc", "rhs", "in", "A", "b", "k", "i", "j", "row", "zero", "min", "max", "math", "clear", "copy")
	need := sc.needed(roots)
	var w0 strings.Builder
	ng := g.geom.NumNodes() * g.dim
	fmt.Fprintf(&w0, "A = A[:%d:%d]\nb = b[:%d:%d]\n", N*N, N*N, N, N)
	fmt.Fprintf(&w0, "x := in.Coords[:%d:%d]\n", ng, ng)
	if g.usesPrev {
		fmt.Fprintf(&w0, "// The previous iterate is zero when there is none.\nvar zero [%d]float64\npv := zero[:]\nif in.Previous != nil {\npv = in.Previous[:%d:%d]\n}\n", N, N, N)
	}
	w0.WriteString("// Per cell: geometry, cell quantities and coefficients constant in the cell.\n")
	sc.emit(&w0, need, lvCell)
	detLv := g.d.nodes[g.det()].lv
	if detLv <= lvCell {
		fmt.Fprintf(&w0, "if !(%s > 0) {\n%s(A, b)\nreturn\n}\n", sc.ref(g.det()), g.names.fillNaN)
	}
	hasA := false
	hasB := false
	for _, s := range append(append([]stmt{}, stmtsA...), stmtsB...) {
		if strings.HasPrefix(s.target, "acc") {
			hasA = true
		} else {
			hasB = true
		}
	}
	mirror := func(arr string) {
		if !sym {
			return
		}
		w0.WriteString("// The form is symmetric: mirror the upper triangle.\n")
		if N <= 12 {
			for r := 0; r < N; r++ {
				for c := r + 1; c < N; c++ {
					fmt.Fprintf(&w0, "%s[%d] = %s[%d]\n", arr, c*N+r, arr, r*N+c)
				}
			}
		} else {
			fmt.Fprintf(&w0, "for r := 0; r < %d; r++ {\nfor c := r + 1; c < %d; c++ {\n%s[c*%d+r] = %s[r*%d+c]\n}\n}\n", N, N, arr, N, arr, N)
		}
	}
	if len(stmtsB) == 0 && len(loops) == 0 && detLv != lvPoint {
		// Everything was integrated in advance: each entry is one
		// assignment, written straight into A and b.
		setA, setB := map[int]bool{}, map[int]bool{}
		for i := range stmtsA {
			s := &stmtsA[i]
			var k int
			if strings.HasPrefix(s.target, "acc") {
				fmt.Sscanf(s.target, "acc[%d]", &k)
				s.target = fmt.Sprintf("A[%d]", k)
				setA[k] = true
			} else {
				fmt.Sscanf(s.target, "rhs[%d]", &k)
				s.target = fmt.Sprintf("b[%d]", k)
				setB[k] = true
			}
			s.assign = true
		}
		if sym {
			for r := 0; r < N; r++ {
				for c := r + 1; c < N; c++ {
					if setA[r*N+c] {
						setA[c*N+r] = true
					}
				}
			}
		}
		zero := func(arr string, n int, set map[int]bool) {
			if len(set) == 0 {
				fmt.Fprintf(&w0, "clear(%s)\n", arr)
				return
			}
			if n-len(set) > 16 {
				fmt.Fprintf(&w0, "clear(%s)\n", arr)
				return
			}
			for k := 0; k < n; k++ {
				if !set[k] {
					fmt.Fprintf(&w0, "%s[%d] = 0\n", arr, k)
				}
			}
		}
		zero("A", N*N, setA)
		zero("b", N, setB)
		writeStmts(&w0, sc, stmtsA)
		mirror("A")
	} else {
		for _, l := range loops {
			if l.nc > 0 {
				hasA = true
			} else {
				hasB = true
			}
		}
		if hasA {
			fmt.Fprintf(&w0, "var acc [%d]float64\n", N*N)
		}
		if hasB {
			fmt.Fprintf(&w0, "var rhs [%d]float64\n", N)
		}
		arrays := g.basisArrays(&w0, sc, need, roots)
		writeStmts(&w0, sc, stmtsA)
		fmt.Fprintf(&w0, "for q := 0; q < %d; q++ {\n", g.nq)
		w0.WriteString("// Per quadrature point: geometry, coefficients, basis derivatives.\n")
		sc.emit(&w0, need, lvPoint)
		if detLv == lvPoint {
			fmt.Fprintf(&w0, "if !(%s > 0) {\n%s(A, b)\nreturn\n}\n", sc.ref(g.det()), g.names.fillNaN)
		}
		g.basisLoops(&w0, sc, need, arrays)
		writeStmts(&w0, sc, stmtsB)
		writeLoops(&w0, sc, loops, arrays, N)
		w0.WriteString("}\n")
		if hasA {
			mirror("acc")
			w0.WriteString("copy(A, acc[:])\n")
		} else {
			w0.WriteString("clear(A)\n")
		}
		if hasB {
			w0.WriteString("copy(b, rhs[:])\n")
		} else {
			w0.WriteString("clear(b)\n")
		}
	}
	if sc.usesFn["fwSign"] {
		g.names.usesSign = true
	}
	return w0.String(), nil
}

func appendProd(g *bodyGen, terms []prod, roots *[]int, a, b int) []prod {
	av, ac := g.d.isConst(a)
	bv, bc := g.d.isConst(b)
	switch {
	case ac && av == 0, bc && bv == 0:
		return terms
	case ac && bc:
		return append(terms, prod{av * bv, nil})
	case ac:
		*roots = append(*roots, b)
		return append(terms, prod{av, []int{b}})
	case bc:
		*roots = append(*roots, a)
		return append(terms, prod{bv, []int{a}})
	}
	*roots = append(*roots, a, b)
	return append(terms, prod{1, []int{a, b}})
}

// merge adds up terms with the same factors.
func merge(ts []prod) []prod {
	var out []prod
	for _, t := range ts {
		found := false
		for i := range out {
			if len(out[i].ids) == len(t.ids) && fmt.Sprint(out[i].ids) == fmt.Sprint(t.ids) {
				out[i].c += t.c
				found = true
				break
			}
		}
		if !found {
			out = append(out, t)
		}
	}
	kept := out[:0]
	for _, t := range out {
		if t.c != 0 {
			kept = append(kept, t)
		}
	}
	return kept
}

func writeStmts(w *strings.Builder, sc *scheduler, ss []stmt) {
	for _, s := range ss {
		s.terms = merge(s.terms)
		if len(s.terms) == 0 {
			if s.assign {
				fmt.Fprintf(w, "%s = 0\n", s.target)
			}
			continue
		}
		for _, c := range s.comment {
			w.WriteString("// " + c + "\n")
		}
		var b strings.Builder
		grouped, ok := groupTerms(sc, s.terms)
		if ok {
			b.WriteString(grouped)
		}
		for i, t := range s.terms {
			if ok {
				break
			}
			var factors []string
			c := t.c
			neg := false
			if c < 0 && i > 0 {
				c, neg = -c, true
			}
			if c != 1 || len(t.ids) == 0 {
				factors = append(factors, literal(c))
			}
			for _, id := range t.ids {
				factors = append(factors, sc.ref(id))
			}
			switch {
			case i == 0:
			case neg:
				b.WriteString(" - ")
			default:
				b.WriteString(" + ")
			}
			b.WriteString(strings.Join(factors, "*"))
		}
		op := "+="
		if s.assign {
			op = "="
		}
		fmt.Fprintf(w, "%s %s %s\n", s.target, op, b.String())
	}
}

// basisArrays declares one array per basis-loop root (a value the
// accumulation loops read for every basis function).
func (g *bodyGen) basisArrays(w *strings.Builder, sc *scheduler, need map[int]bool, roots []int) map[int]string {
	arrays := map[int]string{}
	var ids []int
	for _, r := range roots {
		// Table loads are read from the table where they are used.
		if n := &g.d.nodes[r]; n.lv == lvBasis && n.tab == "" {
			if _, ok := arrays[r]; !ok {
				arrays[r] = ""
				ids = append(ids, r)
			}
		}
	}
	sort.Ints(ids)
	for k, id := range ids {
		name := fmt.Sprintf("basis%d", k)
		sc.reserve(name)
		arrays[id] = name
		fmt.Fprintf(w, "var %s [%d]float64\n", name, g.elems[g.d.nodes[id].elem-1].NumNodes())
	}
	return arrays
}

// basisLoops writes, per element, the loop over its basis functions that
// fills the arrays.
func (g *bodyGen) basisLoops(w *strings.Builder, sc *scheduler, need map[int]bool, arrays map[int]string) {
	for ei, e := range g.elems {
		var ids []int
		for id, name := range arrays {
			if name != "" && g.d.nodes[id].elem == ei+1 {
				ids = append(ids, id)
			}
		}
		if len(ids) == 0 {
			continue
		}
		sort.Ints(ids)
		v := fmt.Sprintf("a%d", ei)
		fmt.Fprintf(w, "for %s := 0; %s < %d; %s++ {\n", v, v, e.NumNodes(), v)
		sc.emitElem(w, need, lvBasis, ei+1)
		for _, id := range ids {
			fmt.Fprintf(w, "%s[%s] = %s\n", arrays[id], v, sc.ref(id))
		}
		w.WriteString("}\n")
	}
}

// writeLoops writes the accumulation loops of loop mode. The row (test
// function) factors of a block are read once per row into locals, so that
// the inner loop over columns only loads column factors; a right-hand-side
// loop over the same rows is fused into the matrix loop, after its column
// loop, and shares those locals.
func writeLoops(w *strings.Builder, sc *scheduler, loops []loopStmt, arrays map[int]string, N int) {
	at := func(id int, idx string) string {
		if name := arrays[id]; name != "" {
			return name + "[" + idx + "]"
		}
		if n := &sc.d.nodes[id]; n.tab != "" {
			return tableLoad(n.tab, idx, n.stride, n.off)
		}
		return sc.ref(id)
	}
	perBasis := func(id int) bool { return arrays[id] != "" || sc.d.nodes[id].tab != "" }
	fusedInto := map[int]int{} // rhs loop → matrix loop
	hasRHS := map[int]int{}    // matrix loop → rhs loop
	for k, l := range loops {
		if l.nc != 0 {
			continue
		}
		for m, lm := range loops {
			if _, taken := hasRHS[m]; !taken && lm.nc != 0 && lm.ro == l.ro && lm.nr == l.nr {
				fusedInto[k], hasRHS[m] = m, k
				break
			}
		}
	}
	for k, l := range loops {
		if _, ok := fusedInto[k]; ok {
			continue
		}
		for _, c := range l.comment {
			w.WriteString("// " + c + "\n")
		}
		rowf := map[int]string{}
		var hoist []string
		rowFactor := func(id int) string {
			if !perBasis(id) {
				return sc.ref(id)
			}
			if _, ok := rowf[id]; !ok {
				rowf[id] = sc.fresh("rowf")
				hoist = append(hoist, rowf[id]+" := "+at(id, "i"))
			}
			return rowf[id]
		}
		products := func(l loopStmt, col string) string {
			var terms []string
			for _, p := range l.pairs {
				terms = append(terms, rowFactor(p[0])+"*"+at(p[1], col))
			}
			return strings.Join(terms, " + ")
		}
		if l.nc == 0 {
			sum := products(l, "i")
			fmt.Fprintf(w, "for i := 0; i < %d; i++ {\n%s\nrhs[%d+i] += %s\n}\n", l.nr, strings.Join(hoist, "\n"), l.ro, sum)
			continue
		}
		sum := products(l, "j")
		var rhs string
		if r, ok := hasRHS[k]; ok {
			var b strings.Builder
			for _, c := range loops[r].comment {
				b.WriteString("// " + c + "\n")
			}
			fmt.Fprintf(&b, "rhs[%d+i] += %s\n", loops[r].ro, products(loops[r], "i"))
			rhs = b.String()
		}
		j0 := "0"
		if l.upper {
			j0 = "i"
		}
		lo := fmt.Sprintf("(%d+i)*%d+%d", l.ro, N, l.co)
		hi := fmt.Sprintf("%s+%d", lo, l.nc)
		fmt.Fprintf(w, "for i := 0; i < %d; i++ {\n", l.nr)
		for _, h := range hoist {
			w.WriteString(h + "\n")
		}
		fmt.Fprintf(w, "row := acc[%s : %s : %s]\nfor j := %s; j < len(row); j++ {\nrow[j] += %s\n}\n%s}\n",
			lo, hi, hi, j0, sum, rhs)
	}
}

// groupTerms writes c·x ± c·y ± ... as c·(x ± y ± ...) for terms of one
// factor whose constants have equal magnitude (the reference integrals of
// a pre-integrated entry often do), saving a multiplication per term. It
// reports false when nothing would be grouped.
func groupTerms(sc *scheduler, ts []prod) (string, bool) {
	type grp struct {
		c     float64
		terms []prod
	}
	var gs []*grp
	any := false
	for _, t := range ts {
		m := math.Abs(t.c)
		if len(t.ids) == 1 && m != 1 {
			found := false
			for _, g := range gs {
				if g.c == m && len(g.terms[0].ids) == 1 {
					g.terms = append(g.terms, t)
					found, any = true, true
					break
				}
			}
			if found {
				continue
			}
		}
		gs = append(gs, &grp{c: m, terms: []prod{t}})
	}
	if !any {
		return "", false
	}
	var parts []string
	for _, g := range gs {
		if len(g.terms) == 1 {
			t := g.terms[0]
			var f []string
			if t.c != 1 || len(t.ids) == 0 {
				f = append(f, literal(t.c))
			}
			for _, id := range t.ids {
				f = append(f, sc.ref(id))
			}
			parts = append(parts, strings.Join(f, "*"))
			continue
		}
		var in strings.Builder
		for k, t := range g.terms {
			switch {
			case k == 0 && t.c < 0:
				in.WriteString("-")
			case k > 0 && t.c < 0:
				in.WriteString(" - ")
			case k > 0:
				in.WriteString(" + ")
			}
			in.WriteString(sc.ref(t.ids[0]))
		}
		parts = append(parts, literal(g.c)+"*("+in.String()+")")
	}
	return strings.Join(parts, " + "), true
}

// linTerm is λ·atom; atom −1 stands for the constant 1.
type linTerm struct {
	c    float64
	atom int
}

// linearTerms writes a coefficient node as Σ λ_k·atom_k with constant λ
// (sums are split, constant factors of products pulled out): a
// coefficient 1/4·τ + 1/100 gives atoms τ and 1.
func (g *bodyGen) linearTerms(id int) []linTerm {
	n := &g.d.nodes[id]
	switch n.op {
	case opConst:
		return []linTerm{{n.val, -1}}
	case opAdd:
		var out []linTerm
		for _, a := range n.args {
			out = append(out, g.linearTerms(a)...)
		}
		return out
	case opNeg:
		out := g.linearTerms(n.args[0])
		for i := range out {
			out[i].c = -out[i].c
		}
		return out
	case opMul:
		c := 1.0
		var rest []int
		for _, a := range n.args {
			if v, ok := g.d.isConst(a); ok {
				c *= v
			} else {
				rest = append(rest, a)
			}
		}
		if c != 1 {
			r := rest[0]
			if len(rest) > 1 {
				r = g.d.mul(rest...)
			}
			return []linTerm{{c, r}}
		}
	}
	return []linTerm{{1, id}}
}
