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
func FormHash(lf *LoweredForm) string {
	var b strings.Builder
	fmt.Fprintf(&b, "formwright-form/1 %s dim=%d\n", lf.Method, lf.Dim)
	if lf.Newton {
		b.WriteString("newton step\n")
	}
	for _, u := range lf.Unknowns {
		fmt.Fprintf(&b, "unknown %s %d %s\n", u.Name, u.Rank, u.Element)
	}
	for _, in := range lf.Integrals {
		fmt.Fprintf(&b, "integral side=%q\n", in.Domain.Side)
		for _, t := range in.Bilinear {
			fmt.Fprintf(&b, " b %s %s %s\n", Debug(t.Test), Debug(t.Trial), Debug(t.Coef))
		}
		for _, t := range in.Linear {
			fmt.Fprintf(&b, " l %s %s\n", Debug(t.Test), Debug(t.Coef))
		}
	}
	for _, d := range lf.Dirichlet {
		fmt.Fprintf(&b, "dirichlet %q %d %d %s\n", d.Side, d.Unknown, d.Comp, Debug(d.Value))
	}
	for _, mc := range lf.Means {
		fmt.Fprintf(&b, "mean %d %s\n", mc.Unknown, Debug(mc.Value))
	}
	sum := sha256.Sum256([]byte(b.String()))
	return hex.EncodeToString(sum[:16])
}
