package gogen

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/formwright/formwright/compiler/ir"
)

// The scalar DAG: every value the generated kernel computes is a node,
// hash-consed on its operation and operands (so a subexpression that occurs
// twice is computed once), folded when its operands are constants, and
// tagged with the loop level it varies at, so code is scheduled at the
// outermost level where its operands are known: constants at generation
// time, cell values once per cell, point values once per quadrature point.

type level uint8

const (
	lvConst level = iota // known at generation time
	lvCell               // constant in a cell
	lvPoint              // varies with the quadrature point
	lvBasis              // varies with the basis function (loop mode: symbolic index)
)

type opKind uint8

const (
	opConst opKind = iota
	opLeaf         // a Go operand (x[3], in.Time, tab[q][2]) used in place
	opExt          // a Go expression evaluated once into a temporary
	opAdd
	opMul
	opDiv
	opNeg
	opFn  // unary elementary function
	opMin // min(a, b): the builtin has math.Min's NaN and ±0 rules, inline
	opMax // max(a, b)
	opPow // math.Pow(a, b)
)

type node struct {
	op   opKind
	lv   level
	val  float64 // opConst
	code string  // opLeaf, opExt
	fn   ir.Func // opFn
	args []int
	hint string // preferred variable name (generator-chosen identifiers only)
	elem int    // lvBasis: 1 + the element whose basis loop computes the node
	// A basis-loop table load tab[q][v*stride+off] (v the loop variable):
	// tab is empty for other nodes.
	tab         string
	stride, off int
}

type dag struct {
	nodes []node
	index map[string]int
}

func newDAG() *dag {
	d := &dag{index: map[string]int{}}
	return d
}

func (d *dag) intern(n node) int {
	if n.lv == lvBasis && n.elem == 0 {
		for _, a := range n.args {
			e := d.nodes[a].elem
			if e != 0 && n.elem != 0 && e != n.elem {
				panic("gogen: a basis-loop node mixes two elements")
			}
			if e != 0 {
				n.elem = e
			}
		}
	}
	var b strings.Builder
	fmt.Fprintf(&b, "%d|%d|%d|%s|%d|", n.op, n.lv, n.elem, n.code, n.fn)
	if n.op == opConst {
		b.WriteString(strconv.FormatUint(math.Float64bits(n.val), 16))
	}
	for _, a := range n.args {
		b.WriteString(strconv.Itoa(a))
		b.WriteByte(',')
	}
	k := b.String()
	if id, ok := d.index[k]; ok {
		if d.nodes[id].hint == "" {
			d.nodes[id].hint = n.hint
		}
		return id
	}
	d.nodes = append(d.nodes, n)
	d.index[k] = len(d.nodes) - 1
	return len(d.nodes) - 1
}

func (d *dag) konst(v float64) int {
	if v == 0 {
		v = 0 // -0 → +0: the sign of zero never matters in the sums built here
	}
	return d.intern(node{op: opConst, val: v})
}

func (d *dag) isConst(id int) (float64, bool) {
	n := &d.nodes[id]
	return n.val, n.op == opConst
}

func (d *dag) leaf(code string, lv level) int {
	return d.intern(node{op: opLeaf, code: code, lv: lv})
}

// basisLeaf is a load in the basis loop of element elem.
// basisLeaf is the load tab[q][v*stride+off] in the basis loop of element
// elem, v its loop variable.
func (d *dag) basisLeaf(tab string, stride, off, elem int) int {
	v := fmt.Sprintf("a%d", elem)
	return d.intern(node{op: opLeaf, code: tableLoad(tab, v, stride, off), lv: lvBasis, elem: elem + 1, tab: tab, stride: stride, off: off})
}

// tableLoad is the Go expression tab[q][v*stride+off].
func tableLoad(tab, v string, stride, off int) string {
	idx := v
	if stride != 1 {
		idx = fmt.Sprintf("%s*%d", v, stride)
	}
	if off != 0 {
		idx = fmt.Sprintf("%s+%d", idx, off)
	}
	return fmt.Sprintf("%s[q][%s]", tab, idx)
}

func (d *dag) ext(code string, lv level, hint string) int {
	return d.intern(node{op: opExt, code: code, lv: lv, hint: hint})
}

func (d *dag) maxLevel(args []int) level {
	lv := lvConst
	for _, a := range args {
		if d.nodes[a].lv > lv {
			lv = d.nodes[a].lv
		}
	}
	return lv
}

// name sets the preferred variable name of id (first hint wins).
func (d *dag) name(id int, hint string) int {
	if d.nodes[id].hint == "" && d.nodes[id].op != opConst && d.nodes[id].op != opLeaf {
		d.nodes[id].hint = hint
	}
	return id
}

func (d *dag) add(xs ...int) int {
	var terms []int
	c := 0.0
	for _, x := range xs {
		n := &d.nodes[x]
		switch n.op {
		case opConst:
			c += n.val
		default:
			terms = append(terms, x)
		}
	}
	// Re-fold constants pulled out of flattened sums.
	var rest []int
	for _, t := range terms {
		if v, ok := d.isConst(t); ok {
			c += v
			continue
		}
		rest = append(rest, t)
	}
	if c != 0 {
		rest = append(rest, d.konst(c))
	}
	switch len(rest) {
	case 0:
		return d.konst(0)
	case 1:
		return rest[0]
	}
	sort.Ints(rest)
	return d.intern(node{op: opAdd, args: rest, lv: d.maxLevel(rest)})
}

func (d *dag) sub(a, b int) int { return d.add(a, d.neg(b)) }

func (d *dag) neg(a int) int {
	n := &d.nodes[a]
	switch n.op {
	case opConst:
		return d.konst(-n.val)
	case opNeg:
		return n.args[0]
	}
	return d.intern(node{op: opNeg, args: []int{a}, lv: n.lv})
}

// mul builds a product. A zero constant factor gives zero: the generated
// code assumes finite operands (as the sums it accumulates do).
func (d *dag) mul(xs ...int) int {
	var fs []int
	c := 1.0
	negs := 0
	var walk func(x int)
	walk = func(x int) {
		n := &d.nodes[x]
		switch n.op {
		case opConst:
			c *= n.val
		case opNeg:
			negs++
			walk(n.args[0])
		default:
			fs = append(fs, x)
		}
	}
	for _, x := range xs {
		walk(x)
	}
	if negs%2 == 1 {
		c = -c
	}
	if c == 0 {
		return d.konst(0)
	}
	if len(fs) == 0 {
		return d.konst(c)
	}
	sort.Ints(fs)
	// √y·√y = y (cell_diameter² from the diameter's square root).
	for i := 0; i+1 < len(fs); i++ {
		n := &d.nodes[fs[i]]
		if fs[i] == fs[i+1] && n.op == opFn && n.fn == ir.Sqrt {
			rest := append(append([]int{d.konst(c), n.args[0]}, fs[:i]...), fs[i+2:]...)
			return d.mul(rest...)
		}
	}
	var p int
	if len(fs) == 1 {
		p = fs[0]
	} else {
		p = d.intern(node{op: opMul, args: fs, lv: d.maxLevel(fs)})
	}
	switch c {
	case 1:
		return p
	case -1:
		return d.neg(p)
	}
	all := append([]int{d.konst(c)}, fs...)
	sort.Ints(all)
	return d.intern(node{op: opMul, args: all, lv: d.maxLevel(all)})
}

// div builds a/b as a·(1/b): the reciprocal is a node of its own, so
// several quotients by the same denominator cost one division.
func (d *dag) div(a, b int) int {
	bv, bc := d.isConst(b)
	av, ac := d.isConst(a)
	switch {
	case ac && bc:
		return d.konst(av / bv)
	case ac && av == 0:
		return d.konst(0)
	case bc:
		return d.mul(a, d.konst(1/bv))
	}
	return d.mul(a, d.recip(b))
}

// recip is 1/b.
func (d *dag) recip(b int) int {
	if v, ok := d.isConst(b); ok {
		return d.konst(1 / v)
	}
	n := &d.nodes[b]
	if n.op == opNeg {
		return d.neg(d.recip(n.args[0]))
	}
	if n.op == opAdd {
		if id, ok := d.recipPoly(b); ok {
			return id
		}
	}
	return d.intern(node{op: opDiv, args: []int{d.konst(1), b}, lv: n.lv})
}

// isRecip reports whether id is 1/h, and h.
func (d *dag) isRecip(id int) (int, bool) {
	n := &d.nodes[id]
	if n.op == opDiv {
		if v, ok := d.isConst(n.args[0]); ok && v == 1 {
			return n.args[1], true
		}
	}
	return 0, false
}

// factors flattens a product into its constant and its other factors.
func (d *dag) factors(id int) (float64, []int) {
	n := &d.nodes[id]
	switch n.op {
	case opConst:
		return n.val, nil
	case opNeg:
		c, fs := d.factors(n.args[0])
		return -c, fs
	case opMul:
		c := 1.0
		var fs []int
		for _, a := range n.args {
			ca, fa := d.factors(a)
			c *= ca
			fs = append(fs, fa...)
		}
		return c, fs
	}
	return 1, []int{id}
}

// recipPoly rewrites 1/(Σ c_i X_i r^k_i), r = 1/h, as
// h^m/(Σ c_i X_i h^(m−k_i)) with m = max k_i: one division instead of
// two or more. τ formulas have this shape (1/(4κ/h² + 2|a|/h + |σ|)),
// and it shortens the dependency chain of a cell. The value changes by
// round-off only.
func (d *dag) recipPoly(b int) (int, bool) {
	type term struct {
		c    float64
		rest []int
		k    int
	}
	var ts []term
	h := -1
	for _, a := range d.nodes[b].args {
		c, fs := d.factors(a)
		t := term{c: c}
		for _, f := range fs {
			if hh, ok := d.isRecip(f); ok && (h < 0 || hh == h) {
				h = hh
				t.k++
				continue
			}
			t.rest = append(t.rest, f)
		}
		ts = append(ts, t)
	}
	m := 0
	for _, t := range ts {
		m = max(m, t.k)
	}
	if h < 0 || m == 0 || m > 4 {
		return 0, false
	}
	var den []int
	for _, t := range ts {
		f := append([]int{d.konst(t.c)}, t.rest...)
		if m-t.k > 0 {
			f = append(f, d.powInt(h, m-t.k))
		}
		den = append(den, d.mul(f...))
	}
	return d.mul(d.powInt(h, m), d.recip(d.add(den...))), true
}

func (d *dag) fn(f ir.Func, a int) int {
	if v, ok := d.isConst(a); ok {
		return d.konst(f.Value(v))
	}
	if f == ir.Coth {
		return d.div(d.konst(1), d.fn(ir.Tanh, a))
	}
	return d.intern(node{op: opFn, fn: f, args: []int{a}, lv: d.nodes[a].lv})
}

func (d *dag) minmax(op opKind, a, b int) int {
	av, ac := d.isConst(a)
	bv, bc := d.isConst(b)
	if ac && bc {
		if op == opMin {
			return d.konst(math.Min(av, bv))
		}
		return d.konst(math.Max(av, bv))
	}
	return d.intern(node{op: op, args: []int{a, b}, lv: d.maxLevel([]int{a, b})})
}

// powInt is a^n by binary powering, as the interpreted tape does.
func (d *dag) powInt(a, n int) int {
	if n == 0 {
		return d.konst(1)
	}
	if n < 0 {
		return d.powInt(d.recip(a), -n)
	}
	r := -1
	b := a
	for n > 0 {
		if n&1 == 1 {
			if r < 0 {
				r = b
			} else {
				r = d.mul(r, b)
			}
		}
		n >>= 1
		if n > 0 {
			b = d.mul(b, b)
		}
	}
	return r
}

func (d *dag) pow(a, b int) int {
	av, ac := d.isConst(a)
	bv, bc := d.isConst(b)
	if ac && bc {
		return d.konst(math.Pow(av, bv))
	}
	if bc && bv == 0.5 {
		return d.fn(ir.Sqrt, a)
	}
	return d.intern(node{op: opPow, args: []int{a, b}, lv: d.maxLevel([]int{a, b})})
}

// literal formats a float64 as a Go constant that reads back exactly.
func literal(v float64) string {
	switch {
	case math.IsNaN(v):
		return "math.NaN()"
	case math.IsInf(v, 1):
		return "math.Inf(1)"
	case math.IsInf(v, -1):
		return "math.Inf(-1)"
	}
	s := strconv.FormatFloat(v, 'g', -1, 64)
	if !strings.ContainsAny(s, ".eE") {
		s += ".0"
	}
	if v < 0 {
		s = "(" + s + ")"
	}
	return s
}

// scheduler assigns variable names and writes the assignments of the nodes
// needed by a set of roots, level by level.
type scheduler struct {
	d       *dag
	names   map[int]string
	used    map[string]bool
	counter map[level]int
	usesFn  map[string]bool // helper functions referenced (fwSign)
	// signName is the file's sign helper function.
	signName string
}

func newScheduler(d *dag) *scheduler {
	return &scheduler{d: d, names: map[int]string{}, used: map[string]bool{}, counter: map[level]int{}, usesFn: map[string]bool{}}
}

// reserve marks identifiers the body declares itself.
func (s *scheduler) reserve(names ...string) {
	for _, n := range names {
		s.used[n] = true
	}
}

// fresh returns an unused identifier prefix+N (N from 0) and marks it
// used; the body declares it itself.
func (s *scheduler) fresh(prefix string) string {
	for k := 0; ; k++ {
		n := fmt.Sprintf("%s%d", prefix, k)
		if !s.used[n] {
			s.used[n] = true
			return n
		}
	}
}

// ref is the Go operand for node id (its variable, leaf code or literal).
func (s *scheduler) ref(id int) string {
	n := &s.d.nodes[id]
	switch n.op {
	case opConst:
		return literal(n.val)
	case opLeaf:
		return n.code
	}
	name, ok := s.names[id]
	if !ok {
		panic(fmt.Sprintf("gogen: node %d used before it is scheduled", id))
	}
	return name
}

// addOrder is the order the terms of a sum are written in: the first
// term that is not a negation leads, so "a - b" rather than "-b + a".
func (s *scheduler) addOrder(n *node) []int {
	for i, a := range n.args {
		an := &s.d.nodes[a]
		if an.op != opNeg && !(an.op == opConst && an.val < 0) {
			if i == 0 {
				return n.args
			}
			out := append([]int{a}, n.args[:i]...)
			return append(out, n.args[i+1:]...)
		}
	}
	return n.args
}

// needed returns the set of non-trivial nodes reachable from roots.
func (s *scheduler) needed(roots []int) map[int]bool {
	need := map[int]bool{}
	var visit func(id int)
	visit = func(id int) {
		if need[id] {
			return
		}
		n := &s.d.nodes[id]
		if n.op == opConst || n.op == opLeaf {
			return
		}
		need[id] = true
		args := n.args
		if n.op == opAdd {
			args = s.addOrder(n)
		}
		for i, a := range args {
			an := &s.d.nodes[a]
			if n.op == opAdd && i > 0 && an.op == opNeg {
				// written as "- operand" (see expr)
				visit(an.args[0])
				continue
			}
			visit(a)
		}
	}
	for _, r := range roots {
		visit(r)
	}
	return need
}

// emit writes, in creation order (which is topological), the assignments
// of the needed nodes of level lv that are not yet scheduled.
func (s *scheduler) emit(w *strings.Builder, need map[int]bool, lv level) {
	s.emitElem(w, need, lv, 0)
}

// emitElem is emit restricted to the basis loop of one element (elem = 1 +
// element index) when lv is lvBasis.
func (s *scheduler) emitElem(w *strings.Builder, need map[int]bool, lv level, elem int) {
	for id := range s.d.nodes {
		if !need[id] || s.d.nodes[id].lv != lv || s.d.nodes[id].elem != elem {
			continue
		}
		if _, done := s.names[id]; done {
			continue
		}
		expr := s.expr(id)
		name := s.newName(id, lv)
		fmt.Fprintf(w, "%s := %s\n", name, expr)
	}
}

func (s *scheduler) newName(id int, lv level) string {
	h := s.d.nodes[id].hint
	if h != "" && !s.used[h] {
		s.used[h] = true
		s.names[id] = h
		return h
	}
	prefix := "c"
	switch lv {
	case lvPoint:
		prefix = "p"
	case lvBasis:
		prefix = "e"
	}
	for {
		s.counter[lv]++
		n := fmt.Sprintf("%s%d", prefix, s.counter[lv])
		if !s.used[n] {
			s.used[n] = true
			s.names[id] = n
			return n
		}
	}
}

func (s *scheduler) expr(id int) string {
	n := &s.d.nodes[id]
	switch n.op {
	case opExt:
		return n.code
	case opAdd:
		var b strings.Builder
		for i, a := range s.addOrder(n) {
			an := &s.d.nodes[a]
			switch {
			case an.op == opNeg && i > 0:
				b.WriteString(" - " + s.ref(an.args[0]))
			case an.op == opConst && an.val < 0 && i > 0:
				b.WriteString(" - " + literal(-an.val))
			default:
				if i > 0 {
					b.WriteString(" + ")
				}
				b.WriteString(s.ref(a))
			}
		}
		return b.String()
	case opMul:
		parts := make([]string, len(n.args))
		for i, a := range n.args {
			parts[i] = s.ref(a)
		}
		return strings.Join(parts, " * ")
	case opDiv:
		return s.ref(n.args[0]) + " / " + s.ref(n.args[1])
	case opNeg:
		return "-" + s.ref(n.args[0])
	case opFn:
		f := n.fn.GoName()
		if n.fn == ir.Sign {
			s.usesFn["fwSign"] = true
			f = s.signName
		}
		return f + "(" + s.ref(n.args[0]) + ")"
	case opMin, opMax, opPow:
		f := map[opKind]string{opMin: "min", opMax: "max", opPow: "math.Pow"}[n.op]
		return f + "(" + s.ref(n.args[0]) + ", " + s.ref(n.args[1]) + ")"
	}
	panic(fmt.Sprintf("gogen: no expression for node kind %d", n.op))
}
