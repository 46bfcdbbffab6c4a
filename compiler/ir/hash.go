package ir

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"strings"
)

// FormHash is a content hash of a lowered form: two forms with the same
// hash have the same unknowns, elements, terms, coefficients and boundary
// data. Compiled kernels are registered under it, so the runtime can tell
// whether a compiled kernel implements exactly the form it was given.
//
// Expressions enter the hash through shapeHasher, which hashes shared
// subexpressions once, so the cost is linear in the number of distinct
// nodes.
func FormHash(lf *LoweredForm) string {
	h := shapeHasher{}
	var b strings.Builder
	fmt.Fprintf(&b, "formwright-form/2 %s dim=%d\n", lf.Method, lf.Dim)
	if lf.Newton {
		b.WriteString("newton step\n")
	}
	if lf.Degree > 0 {
		fmt.Fprintf(&b, "quadrature %d\n", lf.Degree)
	}
	for _, u := range lf.Unknowns {
		fmt.Fprintf(&b, "unknown %s %d %s\n", u.Name, u.Rank, u.Element)
	}
	for _, in := range lf.Integrals {
		fmt.Fprintf(&b, "integral side=%q\n", in.Domain.Side)
		for _, t := range in.Bilinear {
			fmt.Fprintf(&b, " b %s %s %s\n", h.of(t.Test), h.of(t.Trial), h.of(t.Coef))
		}
		for _, t := range in.Linear {
			fmt.Fprintf(&b, " l %s %s\n", h.of(t.Test), h.of(t.Coef))
		}
	}
	for _, d := range lf.Dirichlet {
		fmt.Fprintf(&b, "dirichlet %q %d %d %s\n", d.Side, d.Unknown, d.Comp, h.of(d.Value))
	}
	for _, mc := range lf.Means {
		fmt.Fprintf(&b, "mean %d %s\n", mc.Unknown, h.of(mc.Value))
	}
	sum := sha256.Sum256([]byte(b.String()))
	return hex.EncodeToString(sum[:16])
}

// shapeHasher hashes expressions by structure: the hash of a node is the
// SHA-256 of its head (nodeHead) and the hashes of its children, memoised
// per node.
type shapeHasher map[Expr]string

func (h shapeHasher) of(e Expr) string {
	if e == nil {
		return "nil"
	}
	if v, ok := h[e]; ok {
		return v
	}
	head, leaf := nodeHead(e)
	s := sha256.New()
	s.Write([]byte(head))
	if !leaf {
		for _, k := range Children(e) {
			s.Write([]byte{0})
			s.Write([]byte(h.of(k)))
		}
	}
	v := hex.EncodeToString(s.Sum(nil)[:16])
	h[e] = v
	return v
}
