package gogen

import (
	"fmt"

	"github.com/formwright/formwright/compiler/ir"
)

// The scheduler turns the DAG nodes that a body needs into definitions,
// level by level, in creation order (which is topological), and names
// them: a node with a hint gets it when it is free, others get c1, c2 ...
// (per cell), p1 ... (per point) and e1 ... (per basis function).

type scheduler struct {
	d       *dag
	names   map[int]string
	used    map[string]bool
	counter map[level]int
	// usesSign, usesMin and usesMax record the helpers the definitions call.
	usesSign, usesMin, usesMax bool
}

// reservedLocals are the identifiers the printers use inside a body (the
// inputs, outputs, loop variables and local arrays), and the names of the
// helpers and packages a Go body refers to.
var reservedLocals = []string{"x", "pv", "q", "acc", "rhs", "in", "A", "b", "i", "j", "row", "zero",
	"min", "max", "math", "clear", "copy", "len", "kernel", "cell", "element", "compiled", "facet", "side"}

func newScheduler(d *dag) *scheduler {
	s := &scheduler{d: d, names: map[int]string{}, used: map[string]bool{}, counter: map[level]int{}}
	s.reserve(reservedLocals...)
	return s
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

// basisVar is the loop variable of the basis loop of element ei.
func basisVar(ei int) string { return fmt.Sprintf("a%d", ei) }

// ref is the operand for node id: its variable, the input or table entry
// it reads, or its constant.
func (s *scheduler) ref(id int) expr {
	n := &s.d.nodes[id]
	switch n.op {
	case opConst:
		return numLit{n.val}
	case opLeaf:
		return leafExpr(n)
	}
	name, ok := s.names[id]
	if !ok {
		panic(fmt.Sprintf("gogen: node %d used before it is scheduled", id))
	}
	return varRef{name}
}

// leafExpr is what a leaf reads.
func leafExpr(n *node) expr {
	q := varRef{"q"}
	switch n.leaf {
	case leafCoord, leafPrev, leafRec:
		return inputRef{n.leaf, intLit{n.idx}}
	case leafTime, leafStep:
		return inputRef{kind: n.leaf}
	case leafTable:
		if n.idx < 0 {
			return tableRef{tab: n.tab, point: q}
		}
		return tableRef{n.tab, q, intLit{n.idx}}
	case leafBasis:
		return tableRef{n.tab, q, basisIndex(basisVar(n.elem-1), n.stride, n.off)}
	}
	panic(fmt.Sprintf("gogen: leaf of kind %d", n.leaf))
}

// basisIndex is v·stride + off.
func basisIndex(v string, stride, off int) expr {
	return idxAdd(idxMul(varRef{v}, stride), intLit{off})
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

// define returns, in creation order, the definitions of the needed nodes
// of level lv (and, for lvBasis, of the basis loop of element elem−1)
// that are not yet scheduled.
func (s *scheduler) define(need map[int]bool, lv level, elem int) []stmt {
	var out []stmt
	for id := range s.d.nodes {
		if !need[id] || s.d.nodes[id].lv != lv || s.d.nodes[id].elem != elem {
			continue
		}
		if _, done := s.names[id]; done {
			continue
		}
		x := s.expr(id)
		out = append(out, defStmt{s.newName(id, lv), x})
	}
	return out
}

func (s *scheduler) newName(id int, lv level) string {
	for _, h := range []string{s.d.nodes[id].hint, s.d.nodes[id].alt} {
		if h != "" && !s.used[h] {
			s.used[h] = true
			s.names[id] = h
			return h
		}
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

// expr is the defining expression of node id.
func (s *scheduler) expr(id int) expr {
	n := &s.d.nodes[id]
	switch n.op {
	case opAdd:
		var x expr
		for i, a := range s.addOrder(n) {
			an := &s.d.nodes[a]
			switch {
			case i == 0:
				x = s.ref(a)
			case an.op == opNeg:
				x = binary{'-', x, s.ref(an.args[0])}
			case an.op == opConst && an.val < 0:
				x = binary{'-', x, numLit{-an.val}}
			default:
				x = binary{'+', x, s.ref(a)}
			}
		}
		return x
	case opMul:
		x := s.ref(n.args[0])
		for _, a := range n.args[1:] {
			x = binary{'*', x, s.ref(a)}
		}
		return x
	case opDiv:
		return binary{'/', s.ref(n.args[0]), s.ref(n.args[1])}
	case opNeg:
		return negate{s.ref(n.args[0])}
	case opFn:
		if n.fn == ir.Sign {
			s.usesSign = true
		}
		return call{op: opFn, fn: n.fn, args: []expr{s.ref(n.args[0])}}
	case opMin, opMax, opPow:
		s.usesMin = s.usesMin || n.op == opMin
		s.usesMax = s.usesMax || n.op == opMax
		return call{op: n.op, args: []expr{s.ref(n.args[0]), s.ref(n.args[1])}}
	}
	panic(fmt.Sprintf("gogen: no expression for node kind %d", n.op))
}
