package gogen

import "slices"

// Accumulation at the quadrature points (strategy B), for the groups not
// integrated in advance. For each test derivative β of a block,
// t_β[j] = Σ_α w·coef_αβ·D^α φ_j, then A_ij += Σ_β D^β φ_i · t_β[j] and
// b_i += Σ_β w·coef_β·D^β φ_i. Elements with few nodes get one statement
// per entry; larger ones (loop mode) one loop over the basis-function
// pairs of a block.

// loopAccum is the accumulation of one block over all basis-function
// pairs in loop mode: acc[(ro+i)·N+co+j] += Σ v[i]·t[j] (rhs[ro+i] += Σ
// v[i]·t when nc == 0, t a scalar).
type loopAccum struct {
	comment        []string
	ro, co, nr, nc int
	upper          bool // j from i (symmetric diagonal block)
	pairs          [][2]int
}

// beta is the column factor t_β of one test derivative (or of several
// merged into one row factor, tDs).
type beta struct {
	tD     [3]uint8
	tDs    [][3]uint8
	t      []int
	alphas []*group
}

// columnFactors builds t_β[j] = Σ_coef (w·coef)·(Σ_α with that coef D^α φ_j)
// for the point-wise groups of a bilinear block: equal coefficients (the
// two halves of a Laplacian) share a product. Test derivatives whose
// column factors are the same nodes (the two halves of a test-side
// Laplacian in GLS and VMS) then share one row factor, their sum: the
// point's update has one rank less.
func (g *bodyGen) columnFactors(b *block, gs []*group, w int) []*beta {
	var betas []*beta
	for _, gr := range gs {
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
	for _, be := range betas {
		var coefs []int
		for _, gr := range be.alphas {
			if !slices.Contains(coefs, gr.coef) {
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
	return merged
}

// pointwise builds the accumulations of the groups not integrated in
// advance: unrolled entries, or (loop mode) one loop per block. The nodes
// they read are added to roots.
func (g *bodyGen) pointwise(bil, lin []*block, sym bool, cm *commenter, side string, roots *[]int) ([]accum, []loopAccum) {
	var out []accum
	var loops []loopAccum
	w := -1
	weight := func() int {
		if w < 0 {
			w = g.weight()
		}
		return w
	}
	for _, b := range bil {
		gs := b.pick(false)
		if len(gs) == 0 {
			continue
		}
		betas := g.columnFactors(b, gs, weight())
		if g.loop {
			if sym && b.ro > b.co {
				continue
			}
			la := loopAccum{comment: cm.blockComment(upper(b.span())+", at each quadrature point, in a loop over all basis-function pairs.", gs, side),
				ro: b.ro, co: b.co, nr: b.nr, nc: b.nc, upper: sym && b.ro == b.co}
			for _, be := range betas {
				v := g.basisSum(b.tei, symA, be.tDs)
				la.pairs = append(la.pairs, [2]int{v, be.t[0]})
				*roots = append(*roots, v, be.t[0])
			}
			loops = append(loops, la)
			continue
		}
		first := true
		for i := 0; i < b.nr; i++ {
			for j := 0; j < b.nc; j++ {
				r, c := b.ro+i, b.co+j
				if sym && r > c {
					continue
				}
				e := accum{array: "acc", index: r*g.n + c}
				for _, be := range betas {
					e.terms = appendProd(g, e.terms, roots, g.basisSum(b.tei, i, be.tDs), be.t[j])
				}
				if len(e.terms) == 0 {
					continue
				}
				if first {
					e.comment = cm.blockComment(upper(b.span())+", at each quadrature point.", gs, side)
					first = false
				}
				out = append(out, e)
			}
		}
	}
	for _, b := range lin {
		gs := b.pick(false)
		if len(gs) == 0 {
			continue
		}
		weight()
		if g.loop {
			la := loopAccum{comment: cm.blockComment(upper(b.span())+", at each quadrature point, in a loop over all basis functions.", gs, side), ro: b.ro, nr: b.nr}
			for _, gr := range gs {
				v, wc := g.basis(b.tei, symA, gr.key.tD), g.d.mul(w, gr.coef)
				la.pairs = append(la.pairs, [2]int{v, wc})
				*roots = append(*roots, v, wc)
			}
			loops = append(loops, la)
			continue
		}
		first := true
		for i := 0; i < b.nr; i++ {
			e := accum{array: "rhs", index: b.ro + i}
			for _, gr := range gs {
				wc := g.d.mul(w, gr.coef)
				e.terms = appendProd(g, e.terms, roots, g.basis(b.tei, i, gr.key.tD), wc)
			}
			if len(e.terms) == 0 {
				continue
			}
			if first {
				e.comment = cm.blockComment(upper(b.span())+", at each quadrature point.", gs, side)
				first = false
			}
			out = append(out, e)
		}
	}
	return out, loops
}
