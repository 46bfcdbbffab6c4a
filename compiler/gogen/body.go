package gogen

import (
	"math"
	"sort"
	"strconv"
)

// A body is the code of one Cell method, or of one local facet of a Facet
// method: the element computation for one quadrature rule. It is built in
// phases, each a method below with one job:
//
//	previous        the previous iterate, zeros when there is none
//	recovered       its recovered gradient, zeros when there is none
//	cellQuantities  geometry, cell quantities and coefficients constant in the cell
//	guard           NaN output on a non-positive Jacobian determinant
//	direct          everything integrated in advance: one assignment per entry
//	accumulated     otherwise: local accumulators, the pre-integrated entries,
//	                the quadrature loop (pointQuantities, basisLoops,
//	                entries, loopEntries), mirror and scatter

// bodyWriter holds what the phases share: the scheduler that names the
// DAG nodes and the set of nodes the body needs.
type bodyWriter struct {
	g    *bodyGen
	sc   *scheduler
	need map[int]bool
	sym  bool
	n    int
}

// body builds the statements of one element computation from its groups.
func (g *bodyGen) body(gs []*group, sym bool, cm *commenter, side string) (*bodyPlan, error) {
	bil, lin := g.blocks(gs)
	roots := []int{g.det()}
	pre := g.preIntegrate(append(append([]*block{}, bil...), lin...), sym, cm, side, &roots)
	point, loops := g.pointwise(bil, lin, sym, cm, side, &roots)
	if g.err != nil {
		return nil, g.err
	}
	sc := newScheduler(g.d)
	w := &bodyWriter{g: g, sc: sc, need: sc.needed(roots), sym: sym, n: g.n}
	// A recovered derivative may have dropped out of every entry (a
	// factor that vanishes on the element): read the input only if a
	// needed node does.
	rec := false
	isRec := func(id int) bool { n := &g.d.nodes[id]; return n.op == opLeaf && n.leaf == leafRec }
	for id := range w.need {
		if isRec(id) {
			rec = true
		}
		for _, a := range g.d.nodes[id].args {
			if isRec(a) {
				rec = true
			}
		}
	}
	g.usesRec = rec
	var out []stmt
	out = append(out, w.previous()...)
	out = append(out, w.recovered()...)
	out = append(out, w.cellQuantities()...)
	perPoint := g.d.nodes[g.det()].lv == lvPoint
	if !perPoint {
		out = append(out, w.guard())
	}
	if len(point) == 0 && len(loops) == 0 && !perPoint {
		out = append(out, w.direct(pre)...)
	} else {
		out = append(out, w.accumulated(pre, point, loops, roots, perPoint)...)
	}
	return &bodyPlan{facet: -1, points: g.nq, sym: sym, stmts: out, tables: g.order, prev: g.usesPrev || g.usesRec, rec: g.usesRec,
		usesSign: sc.usesSign, usesMin: sc.usesMin, usesMax: sc.usesMax}, nil
}

// previous makes the previous iterate available (zeros when the input has
// none), if the body reads it.
func (w *bodyWriter) previous() []stmt {
	if !w.g.usesPrev {
		return nil
	}
	return []stmt{commentStmt{[]string{" The previous iterate is zero when there is none."}}, previousStmt{w.n}}
}

// recovered makes the recovered gradient of the previous iterate
// available (zeros when the input has none), if the body reads it.
func (w *bodyWriter) recovered() []stmt {
	if !w.g.usesRec {
		return nil
	}
	return []stmt{commentStmt{[]string{" The recovered gradient of the previous iterate (dim values per local dof) is zero when there is none."}}, recoveredStmt{w.n * w.g.dim}}
}

// cellQuantities defines the values constant in the cell.
func (w *bodyWriter) cellQuantities() []stmt {
	out := []stmt{commentStmt{[]string{" Per cell: geometry, cell quantities and coefficients constant in the cell."}}}
	return append(out, w.sc.define(w.need, lvCell, 0)...)
}

// guard is the test of the Jacobian determinant.
func (w *bodyWriter) guard() stmt { return guardStmt{w.sc.ref(w.g.det())} }

// direct writes a body whose entries were all integrated in advance: each
// entry is one assignment into A or b, the others are zeroed.
func (w *bodyWriter) direct(pre []accum) []stmt {
	n := w.n
	setA, setB := map[int]bool{}, map[int]bool{}
	for i := range pre {
		e := &pre[i]
		if e.array == "acc" {
			e.array = "A"
			setA[e.index] = true
		} else {
			e.array = "b"
			setB[e.index] = true
		}
		e.assign = true
	}
	var mirrored [][2]int
	if w.sym {
		for r := 0; r < n; r++ {
			for c := r + 1; c < n; c++ {
				if setA[r*n+c] {
					setA[c*n+r] = true
					mirrored = append(mirrored, [2]int{r, c})
				}
			}
		}
	}
	var out []stmt
	out = append(out, zeroRest("A", n*n, setA)...)
	out = append(out, zeroRest("b", n, setB)...)
	out = append(out, w.entries(pre)...)
	if len(mirrored) > 0 {
		out = append(out, commentStmt{[]string{" The form is symmetric: mirror the upper triangle."}})
		for _, rc := range mirrored {
			out = append(out, mirror("A", n, rc[0], rc[1]))
		}
	}
	return out
}

// zeroRest zeroes the entries of an output that no statement sets.
func zeroRest(array string, n int, set map[int]bool) []stmt {
	if len(set) == 0 || n-len(set) > 16 {
		return []stmt{zeroStmt{array, n}}
	}
	var out []stmt
	for k := 0; k < n; k++ {
		if !set[k] {
			out = append(out, setStmt{lhs: arrayRef{array, intLit{k}}, x: intLit{0}})
		}
	}
	return out
}

// mirror is array[c·n+r] = array[r·n+c].
func mirror(array string, n, r, c int) stmt {
	return setStmt{lhs: arrayRef{array, intLit{c*n + r}}, x: arrayRef{array, intLit{r*n + c}}}
}

// accumulated writes a body with a quadrature loop: the entries are
// summed in local arrays and copied out at the end.
func (w *bodyWriter) accumulated(pre, point []accum, loops []loopAccum, roots []int, perPoint bool) []stmt {
	n := w.n
	hasA, hasB := false, false
	for _, e := range append(append([]accum{}, pre...), point...) {
		hasA = hasA || e.array == "acc"
		hasB = hasB || e.array == "rhs"
	}
	for _, l := range loops {
		hasA = hasA || l.nc > 0
		hasB = hasB || l.nc == 0
	}
	var out []stmt
	if hasA {
		out = append(out, arrayStmt{"acc", n * n})
	}
	if hasB {
		out = append(out, arrayStmt{"rhs", n})
	}
	arrays, decls := w.basisArrays(roots)
	out = append(out, decls...)
	out = append(out, w.entries(pre)...)
	loop := []stmt{commentStmt{[]string{" Per quadrature point: geometry, coefficients, basis derivatives."}}}
	loop = append(loop, w.sc.define(w.need, lvPoint, 0)...)
	if perPoint {
		loop = append(loop, w.guard())
	}
	loop = append(loop, w.basisLoops(arrays)...)
	loop = append(loop, w.entries(point)...)
	loop = append(loop, w.loopEntries(loops, arrays)...)
	out = append(out, forStmt{"q", intLit{0}, w.g.nq, loop})
	if hasA {
		if w.sym {
			out = append(out, commentStmt{[]string{" The form is symmetric: mirror the upper triangle."}})
			if n <= 12 {
				for r := 0; r < n; r++ {
					for c := r + 1; c < n; c++ {
						out = append(out, mirror("acc", n, r, c))
					}
				}
			} else {
				i, j := varRef{"i"}, varRef{"j"}
				set := setStmt{lhs: arrayRef{"acc", idxAdd(idxMul(j, n), i)}, x: arrayRef{"acc", idxAdd(idxMul(i, n), j)}}
				out = append(out, forStmt{"i", intLit{0}, n, []stmt{forStmt{"j", idxAdd(i, intLit{1}), n, []stmt{set}}}})
			}
		}
		out = append(out, copyStmt{"A", "acc", n * n})
	} else {
		out = append(out, zeroStmt{"A", n * n})
	}
	if hasB {
		out = append(out, copyStmt{"b", "rhs", n})
	} else {
		out = append(out, zeroStmt{"b", n})
	}
	return out
}

// entries writes accumulations as statements; the comment of an entry
// whose terms cancel moves to the next one.
func (w *bodyWriter) entries(list []accum) []stmt {
	var out []stmt
	var pending []string
	for _, e := range list {
		terms := merge(e.terms)
		if pending == nil {
			pending = e.comment
		}
		if len(terms) == 0 {
			if e.assign {
				out = append(out, setStmt{lhs: arrayRef{e.array, intLit{e.index}}, x: intLit{0}})
			}
			continue
		}
		if pending != nil {
			out = append(out, commentStmt{pending})
			pending = nil
		}
		out = append(out, setStmt{lhs: arrayRef{e.array, intLit{e.index}}, add: !e.assign, x: w.sum(terms)})
	}
	return out
}

// merge adds up terms with the same factors and drops zero ones.
func merge(ts []prod) []prod {
	var out []prod
	for _, t := range ts {
		found := false
		for i := range out {
			if slicesEqual(out[i].ids, t.ids) {
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

func slicesEqual(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// product is c·Π refs (c omitted when it is 1 and there are factors).
func (w *bodyWriter) product(c float64, ids []int) expr {
	var x expr
	if c != 1 || len(ids) == 0 {
		x = numLit{c}
	}
	for _, id := range ids {
		r := w.sc.ref(id)
		if x == nil {
			x = r
		} else {
			x = binary{'*', x, r}
		}
	}
	return x
}

// sum writes Σ terms, a term with a negative constant after the first as
// a subtraction. Single-factor terms whose constants have the same
// magnitude are written c·(x ± y ± ...) (the reference integrals of a
// pre-integrated entry often are), saving a multiplication per term.
func (w *bodyWriter) sum(ts []prod) expr {
	type grp struct {
		c     float64
		terms []prod
	}
	var gs []*grp
	grouped := false
	for _, t := range ts {
		m := math.Abs(t.c)
		if len(t.ids) == 1 && m != 1 {
			found := false
			for _, g := range gs {
				if g.c == m && len(g.terms[0].ids) == 1 {
					g.terms = append(g.terms, t)
					found, grouped = true, true
					break
				}
			}
			if found {
				continue
			}
		}
		gs = append(gs, &grp{c: m, terms: []prod{t}})
	}
	if !grouped {
		var x expr
		for i, t := range ts {
			switch {
			case i == 0:
				x = w.product(t.c, t.ids)
			case t.c < 0:
				x = binary{'-', x, w.product(-t.c, t.ids)}
			default:
				x = binary{'+', x, w.product(t.c, t.ids)}
			}
		}
		return x
	}
	var x expr
	for _, g := range gs {
		var part expr
		if len(g.terms) == 1 {
			part = w.product(g.terms[0].c, g.terms[0].ids)
		} else {
			var in expr
			for k, t := range g.terms {
				r := w.sc.ref(t.ids[0])
				switch {
				case k == 0 && t.c < 0:
					in = negate{r}
				case k == 0:
					in = r
				case t.c < 0:
					in = binary{'-', in, r}
				default:
					in = binary{'+', in, r}
				}
			}
			part = binary{'*', numLit{g.c}, in}
		}
		if x == nil {
			x = part
		} else {
			x = binary{'+', x, part}
		}
	}
	return x
}

// basisArrays declares one local array per basis-loop root (a value the
// accumulation loops read for every basis function) and names it.
func (w *bodyWriter) basisArrays(roots []int) (map[int]string, []stmt) {
	g := w.g
	arrays := map[int]string{}
	var ids []int
	for _, r := range roots {
		// Table loads are read from the table where they are used.
		if n := &g.d.nodes[r]; n.lv == lvBasis && n.tab == nil {
			if _, ok := arrays[r]; !ok {
				arrays[r] = ""
				ids = append(ids, r)
			}
		}
	}
	sort.Ints(ids)
	var out []stmt
	for k, id := range ids {
		name := "basis" + strconv.Itoa(k)
		w.sc.reserve(name)
		arrays[id] = name
		out = append(out, arrayStmt{name, g.elems[g.d.nodes[id].elem-1].NumNodes()})
	}
	return arrays, out
}

// basisLoops writes, per element, the loop over its basis functions that
// fills the arrays.
func (w *bodyWriter) basisLoops(arrays map[int]string) []stmt {
	g := w.g
	var out []stmt
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
		v := basisVar(ei)
		body := w.sc.define(w.need, lvBasis, ei+1)
		for _, id := range ids {
			body = append(body, setStmt{lhs: arrayRef{arrays[id], varRef{v}}, x: w.sc.ref(id)})
		}
		out = append(out, forStmt{v, intLit{0}, e.NumNodes(), body})
	}
	return out
}

// loopEntries writes the accumulation loops of loop mode. The row (test
// function) factors of a block are read once per row into locals, so that
// the inner loop over columns only loads column factors; a right-hand-side
// loop over the same rows is fused into the matrix loop, after its column
// loop, and shares those locals.
func (w *bodyWriter) loopEntries(loops []loopAccum, arrays map[int]string) []stmt {
	sc, n := w.sc, w.n
	at := func(id int, idx string) expr {
		if name := arrays[id]; name != "" {
			return arrayRef{name, varRef{idx}}
		}
		if nd := &sc.d.nodes[id]; nd.tab != nil {
			return tableRef{nd.tab, varRef{"q"}, basisIndex(idx, nd.stride, nd.off)}
		}
		return sc.ref(id)
	}
	perBasis := func(id int) bool { return arrays[id] != "" || sc.d.nodes[id].tab != nil }
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
	var out []stmt
	for k, l := range loops {
		if _, ok := fusedInto[k]; ok {
			continue
		}
		rowf := map[int]string{}
		var hoist []stmt
		rowFactor := func(id int) expr {
			if !perBasis(id) {
				return sc.ref(id)
			}
			if _, ok := rowf[id]; !ok {
				rowf[id] = sc.fresh("rowf")
				hoist = append(hoist, defStmt{rowf[id], at(id, "i")})
			}
			return varRef{rowf[id]}
		}
		products := func(l loopAccum, col string) expr {
			var x expr
			for _, p := range l.pairs {
				t := binary{'*', rowFactor(p[0]), at(p[1], col)}
				if x == nil {
					x = t
				} else {
					x = binary{'+', x, t}
				}
			}
			return x
		}
		i := varRef{"i"}
		out = append(out, commentStmt{l.comment})
		if l.nc == 0 {
			sum := products(l, "i")
			body := append(hoist, setStmt{lhs: arrayRef{"rhs", idxAdd(intLit{l.ro}, i)}, add: true, x: sum})
			out = append(out, forStmt{"i", intLit{0}, l.nr, body})
			continue
		}
		sum := products(l, "j")
		var from expr = intLit{0}
		if l.upper {
			from = i
		}
		row := rowStmt{array: "acc", base: idxAdd(idxMul(idxAdd(intLit{l.ro}, i), n), intLit{l.co}), from: from, n: l.nc, j: "j", x: sum}
		var tail []stmt
		if r, ok := hasRHS[k]; ok {
			tail = []stmt{commentStmt{loops[r].comment},
				setStmt{lhs: arrayRef{"rhs", idxAdd(intLit{loops[r].ro}, i)}, add: true, x: products(loops[r], "i")}}
		}
		body := append(append(hoist, row), tail...)
		out = append(out, forStmt{"i", intLit{0}, l.nr, body})
	}
	return out
}

// points says "1 point" or "n points".
func points(n int) string {
	if n == 1 {
		return "1 point"
	}
	return strconv.Itoa(n) + " points"
}
