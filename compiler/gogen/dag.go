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
	opLeaf         // an input or table entry used in place (see leafKind)
	opAdd
	opMul
	opDiv
	opNeg
	opFn  // unary elementary function
	opMin // min(a, b), with math.Min's NaN and ±0 rules
	opMax // max(a, b)
	opPow // a^b (math.Pow)
)

// leafKind says what a leaf reads.
type leafKind uint8

const (
	leafCoord leafKind = iota + 1 // coordinate idx of the geometry nodes (node-major)
	leafPrev                      // local dof idx of the previous iterate
	leafRec                       // entry idx of the recovered gradient (local dof·dim + axis)
	leafTime                      // the time t
	leafStep                      // the time step Δt
	leafTable                     // table entry [q][idx] at the current point (idx < 0: [q])
	leafBasis                     // table entry [q][a·stride+off] in the basis loop of element elem−1
)

// hintRank orders the sources of variable names: a model name beats the
// generator's own, which beats a generic one.
type hintRank uint8

const (
	hintGeneric   hintRank = iota + 1 // coef3
	hintGenerator                     // detJ, diameter, w
	hintModel                         // tau_c, kappa
)

type node struct {
	op   opKind
	lv   level
	val  float64 // opConst
	fn   ir.Func // opFn
	args []int
	// Leaves.
	leaf        leafKind
	idx         int
	tab         *table
	stride, off int
	// hint is the preferred variable name, of rank rank; alt the name to
	// take when hint is taken (model names only).
	hint, alt string
	rank      hintRank
	elem      int // lvBasis: 1 + the element whose basis loop computes the node
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
	fmt.Fprintf(&b, "%d|%d|%d|%d|%d|%d|%d|%d|", n.op, n.lv, n.elem, n.fn, n.leaf, n.idx, n.stride, n.off)
	if n.tab != nil {
		b.WriteString(n.tab.name)
	}
	b.WriteByte('|')
	if n.op == opConst {
		b.WriteString(strconv.FormatUint(math.Float64bits(n.val), 16))
	}
	for _, a := range n.args {
		b.WriteString(strconv.Itoa(a))
		b.WriteByte(',')
	}
	k := b.String()
	if id, ok := d.index[k]; ok {
		if n.rank > d.nodes[id].rank {
			d.nodes[id].hint, d.nodes[id].alt, d.nodes[id].rank = n.hint, n.alt, n.rank
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

// input is a leaf that reads the kernel input (coordinates, previous
// iterate, time, time step): constant in a cell.
func (d *dag) input(k leafKind, idx int) int {
	return d.intern(node{op: opLeaf, leaf: k, idx: idx, lv: lvCell})
}

// tableAt is the entry idx of tab at the current quadrature point.
func (d *dag) tableAt(tab *table, idx int) int {
	return d.intern(node{op: opLeaf, leaf: leafTable, tab: tab, idx: idx, lv: lvPoint})
}

// basisLeaf is the load tab[q][a·stride+off] in the basis loop of element
// elem, a its loop variable.
func (d *dag) basisLeaf(tab *table, stride, off, elem int) int {
	return d.intern(node{op: opLeaf, leaf: leafBasis, lv: lvBasis, elem: elem + 1, tab: tab, stride: stride, off: off})
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

// name sets the preferred variable name of id: the first hint of the
// highest rank wins.
func (d *dag) name(id int, hint string, rank hintRank) int {
	n := &d.nodes[id]
	if rank > n.rank && n.op != opConst && n.op != opLeaf {
		n.hint, n.rank = hint, rank
	}
	return id
}

// nameModel names id after a model quantity: plain, or alt when plain is
// taken (localName).
func (d *dag) nameModel(id int, plain, alt string) int {
	n := &d.nodes[id]
	if hintModel > n.rank && n.op != opConst && n.op != opLeaf {
		n.hint, n.alt, n.rank = plain, alt, hintModel
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
	// √y·√y = y (diam(K)² from the diameter's square root).
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
