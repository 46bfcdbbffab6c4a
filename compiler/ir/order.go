package ir

import "strings"

// kindOrder fixes the order of node types in canonical sums and products:
// numbers first, then named leaves, then compound nodes.
func kindOrder(e Expr) int {
	switch e.(type) {
	case *Num:
		return 0
	case *Const:
		return 1
	case *Coord:
		return 2
	case *Time:
		return 3
	case *Sym:
		return 4
	case *Named:
		return 5
	case *CellQ:
		return 6
	case *Call:
		return 7
	case *Pow:
		return 8
	case *Mul:
		return 9
	case *Add:
		return 10
	case *Comp:
		return 11
	case *Vec:
		return 12
	case *Dot:
		return 13
	case *DDot:
		return 14
	case *Outer:
		return 22
	case *Partial:
		return 15
	case *Grad:
		return 16
	case *Div:
		return 17
	case *Lap:
		return 18
	case *TimeDeriv:
		return 19
	case *Field:
		return 20
	case *FieldD:
		return 21
	}
	panic("ir: unknown node")
}

func cmpInt(a, b int) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// Compare is a total order on expressions, used to put sums and products in
// canonical order. Positions are ignored.
func Compare(a, b Expr) int {
	if a == b {
		return 0 // one node: shared subexpressions compare at once
	}
	if c, done := compareHead(a, b); done || c != 0 {
		return c
	}
	ka, kb := Children(a), Children(b)
	if c := cmpInt(len(ka), len(kb)); c != 0 {
		return c
	}
	for i := range ka {
		if c := Compare(ka[i], kb[i]); c != 0 {
			return c
		}
	}
	return 0
}

// compareHead compares two nodes without their children: their kinds,
// then the fields that are not children. done reports that the
// comparison is complete (leaves, and nodes that differ already).
func compareHead(a, b Expr) (c int, done bool) {
	if c := cmpInt(kindOrder(a), kindOrder(b)); c != 0 {
		return c, true
	}
	switch a := a.(type) {
	case *Num:
		return a.Val.Cmp(b.(*Num).Val), true
	case *Const:
		return strings.Compare(a.Name, b.(*Const).Name), true
	case *Coord:
		return cmpInt(a.Axis, b.(*Coord).Axis), true
	case *Time:
		return 0, true
	case *Sym:
		bs := b.(*Sym)
		if c := cmpInt(int(a.Kind), int(bs.Kind)); c != 0 {
			return c, true
		}
		return strings.Compare(a.Name, bs.Name), true
	case *Named:
		// A Named stands for one component of one symbol, whose
		// definition is fixed (and simplified) when lowering names it:
		// the symbol and the component decide. Not descending into the
		// definitions keeps comparisons cheap where definitions nest.
		bn := b.(*Named)
		if c := Compare(a.Sym, bn.Sym); c != 0 {
			return c, true
		}
		if c := cmpInt(a.I, bn.I); c != 0 {
			return c, true
		}
		return cmpInt(a.J, bn.J), true
	case *CellQ:
		bq := b.(*CellQ)
		if c := strings.Compare(a.Q.String(), bq.Q.String()); c != 0 {
			return c, true
		}
		if c := cmpInt(a.I, bq.I); c != 0 {
			return c, true
		}
		return cmpInt(a.J, bq.J), true
	case *Field:
		bf := b.(*Field)
		if c := cmpInt(int(a.Role), int(bf.Role)); c != 0 {
			return c, true
		}
		return cmpInt(a.Index, bf.Index), true
	case *FieldD:
		bf := b.(*FieldD)
		if c := Compare(a.Field, bf.Field); c != 0 {
			return c, true
		}
		if c := cmpInt(a.Comp, bf.Comp); c != 0 {
			return c, true
		}
		if c := cmpInt(int(a.DT), int(bf.DT)); c != 0 {
			return c, true
		}
		// Lower total derivative order first, then lexicographic.
		ta := int(a.D[0]) + int(a.D[1]) + int(a.D[2])
		tb := int(bf.D[0]) + int(bf.D[1]) + int(bf.D[2])
		if c := cmpInt(ta, tb); c != 0 {
			return c, true
		}
		for k := 0; k < 3; k++ {
			if c := cmpInt(int(bf.D[k]), int(a.D[k])); c != 0 {
				return c, true
			}
		}
		return 0, true
	case *Call:
		bc := b.(*Call)
		if c := cmpInt(int(a.Fn), int(bc.Fn)); c != 0 {
			return c, true
		}
	case *Comp:
		if c := cmpInt(a.I, b.(*Comp).I); c != 0 {
			return c, true
		}
	case *Partial:
		if c := cmpInt(a.Axis, b.(*Partial).Axis); c != 0 {
			return c, true
		}
	}
	return 0, false
}

// Equal reports structural equality, ignoring positions. Pairs of nodes
// already compared are remembered, so two graphs with shared
// subexpressions compare in time linear in their number of nodes.
func Equal(a, b Expr) bool { return equal(a, b, map[[2]Expr]bool{}) }

func equal(a, b Expr, memo map[[2]Expr]bool) bool {
	if a == b {
		return true
	}
	key := [2]Expr{a, b}
	if v, ok := memo[key]; ok {
		return v
	}
	v := func() bool {
		if c, done := compareHead(a, b); done || c != 0 {
			return c == 0
		}
		ka, kb := Children(a), Children(b)
		if len(ka) != len(kb) {
			return false
		}
		for i := range ka {
			if !equal(ka[i], kb[i], memo) {
				return false
			}
		}
		return true
	}()
	memo[key] = v
	return v
}
