package gogen

import (
	"fmt"
	"math"
	"sort"
	"strings"
)

// Pre-integration on affine cells (the tensor-contraction representation
// of Kirby & Logg 2006, ACM TOMS 32 [memory]): a term whose coefficient
// is constant in the cell contributes
//
//	A_ij += Σ_(b,a) M^{ba}_ij G_ba,
//
// with M^{ba} the reference integral of the pair (reference derivative b
// of test function i, reference derivative a of trial function j), a
// constant of the generated code, and G_ba a geometry factor (adjugate
// entries of J over powers of det J, times the coefficient) computed once
// per cell.

// prod is c · Π ids (c = 1 when ids is non-empty and no factor is given).
type prod struct {
	c   float64
	ids []int
}

// accum is one entry of an element matrix or vector: array[index] += Σ
// terms (= when assign).
type accum struct {
	comment []string
	array   string // acc or rhs; A or b once written directly
	index   int
	terms   []prod
	assign  bool
}

// block is the part of the element matrix that couples one test
// component (rows ro..ro+nr−1) with one trial component (columns
// co..co+nc−1), or a part of the element vector (nc = 0).
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
// of reference derivatives (a == -1: the linear form, R^a = 1). The sum
// is accumulated in double-double arithmetic (exact products by fused
// multiply-add, compensated sums: Ogita, Rump & Oishi 2005, SIAM J. Sci.
// Comput. 26 [memory]) and rounded to the rational it is (snapRational),
// so that 1/6 comes out as the double nearest to 1/6 and prints as 1.0 / 6.
// Entries below tol·max|entry| are set to zero: they are round-off of sums
// that vanish exactly (tolerance common practice, no source; it bounds the
// relative change of an entry by about 1e-14).
func (g *bodyGen) preMatrix(tei, b, uei, a, nr, nc int) [][]float64 {
	M := make([][]float64, nr)
	mx := 0.0
	for i := range M {
		M[i] = make([]float64, max(nc, 1))
		for j := range M[i] {
			var s, comp float64
			for q := 0; q < g.nq; q++ {
				r := g.refAt(tei, b, q, i)
				p := g.wts[q] * r
				e := math.FMA(g.wts[q], r, -p)
				if a >= 0 {
					r2 := g.refAt(uei, a, q, j)
					p2 := p * r2
					e = math.FMA(p, r2, -p2) + e*r2
					p = p2
				}
				t := s + p
				bp := t - s
				comp += (s - (t - bp)) + (p - bp) + e
				s = t
			}
			M[i][j] = snapRational(s + comp)
			mx = math.Max(mx, math.Abs(M[i][j]))
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

// blocks sorts the groups into the blocks of the element matrix and vector.
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

// pick returns the groups of b integrated in advance (cellA) or not.
func (b *block) pick(cellA bool) []*group {
	var out []*group
	for _, gr := range b.groups {
		if gr.cellA == cellA {
			out = append(out, gr)
		}
	}
	return out
}

// upper capitalises the first letter of s.
func upper(s string) string { return strings.ToUpper(s[:1]) + s[1:] }

// span names the entries of a block for its comment.
func (b *block) span() string {
	if b.nc == 0 {
		return fmt.Sprintf("rows %d..%d of the right-hand side", b.ro, b.ro+b.nr-1)
	}
	return fmt.Sprintf("rows %d..%d, columns %d..%d", b.ro, b.ro+b.nr-1, b.co, b.co+b.nc-1)
}

// preIntegrate builds the entries of the groups integrated in advance
// (strategy A): per entry Σ_k M_k G_k(1) + Σ_atoms atom·(Σ_k M_k G_k(atom)).
// The geometric sums are ready before the coefficient atoms (τ, the end of
// the longest dependency chain of a cell), which then cost one
// multiply-add each. The nodes the entries read are added to roots.
func (g *bodyGen) preIntegrate(blocks []*block, sym bool, cm *commenter, side string, roots *[]int) []accum {
	var out []accum
	for _, b := range blocks {
		gs := b.pick(true)
		if len(gs) == 0 {
			continue
		}
		atoms := map[[2]int]map[int][]int{}
		rpow := map[[2]int]int{}
		for _, gr := range gs {
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
		keys := sortedKeys(atoms)
		mats := map[[2]int][][]float64{}
		inner := map[[2]int]map[int]int{}
		late := map[int]bool{}
		var lateIDs []int
		for _, k := range keys {
			// G = Σ_atoms atom · (scale·r^p·Σ λ K_b K_a).
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
			mats[k] = g.preMatrix(b.tei, k[0], b.uei, k[1], b.nr, b.nc)
		}
		sort.Ints(lateIDs)
		first := true
		for i := 0; i < b.nr; i++ {
			for j := 0; j < max(b.nc, 1); j++ {
				r, c := b.ro+i, b.co+j
				e := accum{array: "rhs", index: r}
				if b.nc != 0 {
					if sym && r > c {
						continue
					}
					e = accum{array: "acc", index: r*g.n + c}
				}
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
							e.terms = append(e.terms, prod{m * v, nil})
						}
						continue
					}
					e.terms = append(e.terms, prod{m, []int{one}})
					*roots = append(*roots, one)
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
						e.terms = appendProd(g, e.terms, roots, a, g.d.add(sum...))
					}
				}
				if len(e.terms) == 0 {
					continue
				}
				if first {
					e.comment = cm.blockComment(upper(b.span())+", integrated in advance (affine cell, coefficients constant in the cell).", gs, side)
					first = false
				}
				out = append(out, e)
			}
		}
	}
	return out
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

// appendProd appends the product a·b to terms, folding constants, and
// adds the non-constant factors to roots.
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

func sortedKeys[V any](m map[[2]int]V) [][2]int {
	var ks [][2]int
	for k := range m {
		ks = append(ks, k)
	}
	sort.Slice(ks, func(i, j int) bool {
		if ks[i][0] != ks[j][0] {
			return ks[i][0] < ks[j][0]
		}
		return ks[i][1] < ks[j][1]
	})
	return ks
}
