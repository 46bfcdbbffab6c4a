package notation

import (
	"fmt"
	"math/big"
	"strings"

	"github.com/formwright/formwright/compiler/ir"
)

// Style selects a notation.
type Style uint8

// Notations.
const (
	// Syntax is the model language's own syntax; the compiler's checker
	// reads it back (test functions as test(u), τ as tau_u).
	Syntax Style = iota
	// Text is Unicode mathematics for terminals: ∇, Δ, ·, τ.
	Text
	// LaTeX is amsmath source.
	LaTeX
)

// Names gives display names; the zero value uses the model's names.
type Names struct {
	// Test maps an unknown's index to its test function's display name;
	// missing entries print as v_<name>.
	Test map[int]string
}

// Precedence levels, lowest first.
const (
	precAdd = iota + 1
	precMul
	precUnary
	precPow
	precAtom
)

type printer struct {
	style Style
	names Names
	// left is how many more nodes the printer may write (MaxNodes).
	left *int
}

// MaxNodes bounds the nodes one Expr call writes. An expression whose
// subexpressions are shared (a chain of formulas that each use the
// previous one twice) is small as a graph but can be exponentially long
// as text: past the bound, subexpressions are written as "…", so a
// derivation of such a model stays readable and finite. Such text does
// not read back.
const MaxNodes = 20000

// Expr prints e in the given style.
func Expr(e ir.Expr, s Style, n Names) string {
	left := MaxNodes
	p := printer{s, n, &left}
	str, _ := p.expr(e)
	return str
}

func (p printer) wrap(s string, prec, min int) string {
	if prec >= min {
		return s
	}
	if p.style == LaTeX {
		return `\left(` + s + `\right)`
	}
	return "(" + s + ")"
}

func (p printer) sub(e ir.Expr, min int) string {
	s, prec := p.expr(e)
	return p.wrap(s, prec, min)
}

var greek = map[string]string{
	"alpha": "α", "beta": "β", "gamma": "γ", "delta": "δ", "epsilon": "ε", "eps": "ε", "zeta": "ζ", "eta": "η",
	"theta": "θ", "kappa": "κ", "lambda": "λ", "mu": "μ", "nu": "ν", "xi": "ξ", "rho": "ρ", "sigma": "σ",
	"tau": "τ", "phi": "φ", "chi": "χ", "psi": "ψ", "omega": "ω",
}

var latexGreek = map[string]string{
	"alpha": `\alpha`, "beta": `\beta`, "gamma": `\gamma`, "delta": `\delta`, "epsilon": `\varepsilon`, "eps": `\varepsilon`,
	"zeta": `\zeta`, "eta": `\eta`, "theta": `\theta`, "kappa": `\kappa`, "lambda": `\lambda`, "mu": `\mu`, "nu": `\nu`,
	"xi": `\xi`, "rho": `\rho`, "sigma": `\sigma`, "tau": `\tau`, "phi": `\varphi`, "chi": `\chi`, "psi": `\psi`, "omega": `\omega`,
}

// name renders an identifier, turning Greek letter names into letters and
// a trailing _part into a subscript.
func (p printer) name(s string) string {
	base, subs, hasSub := strings.Cut(s, "_")
	switch p.style {
	case Text:
		if g, ok := greek[base]; ok {
			base = g
		}
		if hasSub {
			return base + "_" + subs
		}
		return base
	case LaTeX:
		if g, ok := latexGreek[base]; ok {
			base = g
		} else if len(base) > 1 {
			base = `\mathrm{` + latexEscape(base) + `}`
		}
		if hasSub {
			return base + `_{\mathrm{` + latexEscape(subs) + `}}`
		}
		return base
	}
	return s
}

func latexEscape(s string) string { return strings.ReplaceAll(s, "_", `\_`) }

func (p printer) testName(f *ir.Field) string {
	if n, ok := p.names.Test[f.Index]; ok {
		return p.name(n)
	}
	return p.name("v_" + f.Name)
}

func superscript(s string) (string, bool) {
	var b strings.Builder
	for _, r := range s {
		sr, ok := superscripts[r]
		if !ok {
			return "", false
		}
		b.WriteRune(sr)
	}
	return b.String(), true
}

// expr returns the printed expression and its precedence.
func (p printer) expr(e ir.Expr) (string, int) {
	if *p.left <= 0 {
		return "…", precAtom
	}
	*p.left--
	switch e := e.(type) {
	case *ir.Num:
		return p.num(e.Val)
	case *ir.Const:
		switch p.style {
		case Text:
			return "π", precAtom
		case LaTeX:
			return `\pi`, precAtom
		}
		return e.Name, precAtom
	case *ir.Coord:
		return ir.AxisName(e.Axis), precAtom
	case *ir.Time:
		return "t", precAtom
	case *ir.Sym:
		return p.sym(e), precAtom
	case *ir.Named:
		s := p.sym(e.Sym)
		switch e.Sym.R {
		case 1:
			return p.component(s, e.I), precAtom
		case 2:
			return p.component(p.component(s, e.I), e.J), precAtom
		}
		return s, precAtom
	case *ir.Field:
		switch e.Role {
		case ir.Test:
			if p.style == Syntax {
				return "test(" + e.Name + ")", precAtom
			}
			return p.testName(e), precAtom
		case ir.Previous:
			if p.style == Syntax {
				return "previous(" + e.Name + ")", precAtom
			}
			if p.style == LaTeX {
				return p.name(e.Name) + `^{\mathrm{prev}}`, precAtom
			}
			return p.name(e.Name) + "⁽ᵖʳᵉᵛ⁾", precAtom
		case ir.Increment:
			switch p.style {
			case Syntax:
				return "increment(" + e.Name + ")", precAtom
			case LaTeX:
				return `\delta ` + p.name(e.Name), precAtom
			}
			return "δ" + p.name(e.Name), precAtom
		case ir.Recovered:
			// Only in lowered forms: the second derivatives recovered
			// from the iterate's projected gradient.
			switch p.style {
			case Syntax:
				return "recovered(" + e.Name + ")", precAtom
			case LaTeX:
				return p.name(e.Name) + `^{\mathrm{rec}}`, precAtom
			}
			return p.name(e.Name) + "⁽ʳᵉᶜ⁾", precAtom
		}
		return p.name(e.Name), precAtom
	case *ir.Add:
		return p.add(e)
	case *ir.Mul:
		return p.mul(e)
	case *ir.Pow:
		return p.pow(e)
	case *ir.Call:
		return p.call(e)
	case *ir.Vec:
		el := make([]string, len(e.Elems))
		for i, x := range e.Elems {
			el[i], _ = p.expr(x)
		}
		if p.style == LaTeX {
			return `\begin{bmatrix}` + strings.Join(el, ` \\ `) + `\end{bmatrix}`, precAtom
		}
		return "[" + strings.Join(el, ", ") + "]", precAtom
	case *ir.Comp:
		return p.component(p.sub(e.X, precAtom), e.I), precAtom
	case *ir.Dot:
		return p.binop(e.A, e.B, " . ", "·", ` \cdot `), precMul
	case *ir.DDot:
		if p.style == Syntax {
			return "ddot(" + p.sub(e.A, 0) + ", " + p.sub(e.B, 0) + ")", precAtom
		}
		return p.binop(e.A, e.B, "", ":", ` : `), precMul
	case *ir.Outer:
		if p.style == Syntax {
			return "outer(" + p.sub(e.A, 0) + ", " + p.sub(e.B, 0) + ")", precAtom
		}
		return p.binop(e.A, e.B, "", "⊗", ` \otimes `), precMul
	case *ir.Grad:
		return p.diffOp("grad", "∇", `\nabla `, e.X), precUnary
	case *ir.Div:
		return p.diffOp("div", "∇·", `\nabla\cdot `, e.X), precUnary
	case *ir.Lap:
		return p.diffOp("lap", "Δ", `\Delta `, e.X), precUnary
	case *ir.Partial:
		ax := ir.AxisName(e.Axis)
		switch p.style {
		case Syntax:
			return "partial(" + p.sub(e.X, 0) + ", " + ax + ")", precAtom
		case LaTeX:
			return `\partial_{` + ax + `} ` + p.sub(e.X, precAtom), precUnary
		}
		return "∂" + subscriptAxis(ax) + p.sub(e.X, precAtom), precUnary
	case *ir.TimeDeriv:
		switch p.style {
		case Syntax:
			return "partial(" + p.sub(e.X, 0) + ", t)", precAtom
		case LaTeX:
			return `\partial_{t} ` + p.sub(e.X, precAtom), precUnary
		}
		return "∂ₜ" + p.sub(e.X, precAtom), precUnary
	case *ir.FieldD:
		return p.fieldD(e), precAtom
	case *ir.CellQ:
		switch e.Q.Rank() {
		case 2:
			return fmt.Sprintf("%v[%d][%d]", e.Q, e.I+1, e.J+1), precAtom
		case 1:
			return fmt.Sprintf("%v[%d]", e.Q, e.I+1), precAtom
		}
		return e.Q.String(), precAtom
	}
	return fmt.Sprintf("<%T>", e), precAtom
}

func subscriptAxis(ax string) string {
	switch ax {
	case "x":
		return "ₓ"
	}
	return "_" + ax
}

func (p printer) fieldD(f *ir.FieldD) string {
	var base string
	switch f.Field.Role {
	case ir.Test:
		base = "test(" + f.Field.Name + ")"
	case ir.Previous:
		base = "previous(" + f.Field.Name + ")"
	case ir.Increment:
		base = "increment(" + f.Field.Name + ")"
	case ir.Recovered:
		base = "recovered(" + f.Field.Name + ")"
	default:
		base = f.Field.Name
	}
	if f.Field.R > 0 {
		base = fmt.Sprintf("%s[%d]", base, f.Comp+1)
	}
	var axes []string
	for k := 0; k < 3; k++ {
		for i := 0; i < int(f.D[k]); i++ {
			axes = append(axes, ir.AxisName(k))
		}
	}
	for i := 0; i < int(f.DT); i++ {
		base = "partial(" + base + ", t)"
	}
	if len(axes) == 0 {
		return base
	}
	return "partial(" + base + ", " + strings.Join(axes, ", ") + ")"
}

func (p printer) sym(s *ir.Sym) string {
	switch s.Kind {
	case ir.FineScale:
		// fine_<U> reads U′ in the printed derivation.
		u := strings.TrimPrefix(s.Name, "fine_")
		switch p.style {
		case Text:
			return p.name(u) + "′"
		case LaTeX:
			return p.name(u) + "'"
		}
	case ir.LaggedFineScale:
		// fine_prev_<U> reads U′ at the previous iterate.
		u := strings.TrimPrefix(s.Name, "fine_prev_")
		switch p.style {
		case Text:
			return p.name(u) + "′⁽ᵖʳᵉᵛ⁾"
		case LaTeX:
			return p.name(u) + `'^{\mathrm{prev}}`
		}
	case ir.Gateaux:
		// delta_<X> reads δX.
		if s.Of != nil {
			switch p.style {
			case Text:
				return "δ" + p.sym(s.Of)
			case LaTeX:
				return `\delta ` + p.sym(s.Of)
			}
		}
	}
	switch s.Name {
	case "diam(K)":
		switch p.style {
		case Text:
			return "h_K"
		case LaTeX:
			return `h_K`
		}
	case "meas(K)":
		switch p.style {
		case Text:
			return "|K|"
		case LaTeX:
			return `|K|`
		}
	case "time_step":
		switch p.style {
		case Text:
			return "Δt"
		case LaTeX:
			return `\Delta t`
		}
	case "inverse_estimate":
		switch p.style {
		case Text:
			return "C_inv"
		case LaTeX:
			return `C_{\mathrm{inv}}`
		}
	case "n":
		if p.style == LaTeX {
			return `\mathbf{n}`
		}
	}
	return p.name(s.Name)
}

func (p printer) num(r *big.Rat) (string, int) {
	if r.Sign() < 0 {
		s, _ := p.num(new(big.Rat).Neg(r))
		return p.minus() + s, precUnary
	}
	if r.IsInt() {
		return r.Num().String(), precAtom
	}
	if p.style == LaTeX {
		return `\frac{` + r.Num().String() + `}{` + r.Denom().String() + `}`, precAtom
	}
	return r.RatString(), precMul
}

func (p printer) binop(a, b ir.Expr, syn, txt, tex string) string {
	op := map[Style]string{Syntax: syn, Text: txt, LaTeX: tex}[p.style]
	return p.sub(a, precUnary) + op + p.sub(b, precUnary)
}

func (p printer) diffOp(syn, txt, tex string, x ir.Expr) string {
	switch p.style {
	case Syntax:
		return syn + "(" + p.sub(x, 0) + ")"
	case LaTeX:
		return tex + p.sub(x, precAtom)
	}
	return txt + p.sub(x, precAtom)
}

// minus is the minus sign: ASCII in the model syntax and LaTeX, U+2212 in
// Unicode text.
func (p printer) minus() string {
	if p.style == Text {
		return "−"
	}
	return "-"
}

// negated reports whether a term prints with a leading minus, and returns
// the term without it.
func negated(e ir.Expr) (ir.Expr, bool) {
	switch e := e.(type) {
	case *ir.Num:
		if e.Val.Sign() < 0 {
			return &ir.Num{At: e.At, Val: new(big.Rat).Neg(e.Val)}, true
		}
	case *ir.Mul:
		if n, ok := e.Factors[0].(*ir.Num); ok && n.Val.Sign() < 0 {
			abs := new(big.Rat).Neg(n.Val)
			rest := e.Factors[1:]
			if abs.Cmp(big.NewRat(1, 1)) != 0 {
				rest = append([]ir.Expr{&ir.Num{At: n.At, Val: abs}}, rest...)
			}
			if len(rest) == 1 {
				return rest[0], true
			}
			return &ir.Mul{At: e.At, Factors: rest}, true
		}
	}
	return e, false
}

func (p printer) add(e *ir.Add) (string, int) {
	return strings.Join(p.terms(e), " "), precAdd
}

// terms prints the terms of a sum, each with the sign that joins it to
// the terms before it ("a", "+ b", "− c").
func (p printer) terms(e *ir.Add) []string {
	out := make([]string, len(e.Terms))
	for i, t := range e.Terms {
		pos, neg := negated(t)
		s := p.sub(pos, precMul)
		switch {
		case i == 0 && neg:
			out[i] = p.minus() + s
		case i == 0:
			out[i] = s
		case neg:
			out[i] = p.minus() + " " + s
		default:
			out[i] = "+ " + s
		}
	}
	return out
}

func (p printer) mul(e *ir.Mul) (string, int) {
	if pos, neg := negated(e); neg {
		return p.minus() + p.sub(pos, precMul), precMul
	}
	var num, den []ir.Expr
	for _, f := range e.Factors {
		if pw, ok := f.(*ir.Pow); ok {
			if k, ok := pw.Exp.(*ir.Num); ok && k.Val.Sign() < 0 {
				inv := new(big.Rat).Neg(k.Val)
				if inv.Cmp(big.NewRat(1, 1)) == 0 {
					den = append(den, pw.Base)
				} else {
					den = append(den, &ir.Pow{At: pw.At, Base: pw.Base, Exp: &ir.Num{At: k.At, Val: inv}})
				}
				continue
			}
		}
		if n, ok := f.(*ir.Num); ok && !n.Val.IsInt() && p.style != Syntax {
			if !n.Val.Num().IsInt64() || n.Val.Num().Int64() != 1 || len(e.Factors) == 1 {
				num = append(num, &ir.Num{At: n.At, Val: new(big.Rat).SetInt(n.Val.Num())})
			}
			den = append(den, &ir.Num{At: n.At, Val: new(big.Rat).SetInt(n.Val.Denom())})
			continue
		}
		num = append(num, f)
	}
	if len(num) == 0 {
		num = []ir.Expr{ir.Int(e.P, 1)}
	}
	prod := func(fs []ir.Expr) string {
		parts := make([]string, len(fs))
		for i, f := range fs {
			min := precUnary
			if _, ok := f.(*ir.Div); ok && i < len(fs)-1 && p.style != Syntax {
				min = precAtom // (∇·a) v, not ∇·a v
			}
			if p.style == Syntax {
				// Contractions bind like products in the language, so a dot
				// inside a product keeps its parentheses.
				min = precUnary
				if _, ok := f.(*ir.Dot); ok {
					min = precAtom
				}
				if n, ok := f.(*ir.Num); ok && !n.Val.IsInt() {
					min = precAtom
				}
			}
			parts[i] = p.sub(f, min)
		}
		sep := map[Style]string{Syntax: "*", Text: " ", LaTeX: `\,`}[p.style]
		return strings.Join(parts, sep)
	}
	if len(den) == 0 {
		return prod(num), precMul
	}
	if p.style == LaTeX {
		return `\frac{` + prod(num) + `}{` + prod(den) + `}`, precAtom
	}
	d := prod(den)
	if len(den) > 1 {
		d = "(" + d + ")"
	} else {
		d = p.sub(den[0], precPow)
	}
	return prod(num) + "/" + d, precMul
}

func (p printer) pow(e *ir.Pow) (string, int) {
	if k, ok := e.Exp.(*ir.Num); ok {
		if k.Val.Cmp(big.NewRat(1, 2)) == 0 {
			switch p.style {
			case Syntax:
				return "sqrt(" + p.sub(e.Base, 0) + ")", precAtom
			case LaTeX:
				return `\sqrt{` + p.sub(e.Base, 0) + `}`, precAtom
			}
			return "√" + p.sub(e.Base, precAtom), precUnary
		}
		if p.style == Text && k.Val.IsInt() {
			if s, ok := superscript(k.Val.Num().String()); ok {
				return p.sub(e.Base, precAtom) + s, precPow
			}
		}
		if k.Val.Sign() < 0 && p.style != Syntax {
			s, _ := p.mul(&ir.Mul{At: e.At, Factors: []ir.Expr{e}})
			return s, precMul
		}
	}
	switch p.style {
	case LaTeX:
		base := p.sub(e.Base, precAtom)
		switch {
		case strings.Contains(base, "^"): // u^{prev} squared: {u^{prev}}^{2}, not a double superscript
			base = "{" + base + "}"
		case strings.HasPrefix(base, `\delta `): // (δu)², not δ(u²)
			base = `\left(` + base + `\right)`
		}
		return base + "^{" + p.sub(e.Exp, 0) + "}", precPow
	}
	return p.sub(e.Base, precAtom) + "^" + p.sub(e.Exp, precAtom), precPow
}

// component writes component i (0-based) of the printed operand x.
func (p printer) component(x string, i int) string {
	if p.style == LaTeX {
		return fmt.Sprintf("{%s}_{%d}", x, i+1)
	}
	return fmt.Sprintf("%s[%d]", x, i+1)
}

func (p printer) call(e *ir.Call) (string, int) {
	args := make([]string, len(e.Args))
	for i, a := range e.Args {
		args[i] = p.sub(a, 0)
	}
	if p.style != Syntax {
		switch e.Fn {
		case ir.Abs:
			return "|" + args[0] + "|", precAtom
		case ir.Norm:
			if p.style == LaTeX {
				return `\lVert ` + args[0] + ` \rVert`, precAtom
			}
			return "‖" + args[0] + "‖", precAtom
		}
	}
	if p.style == LaTeX {
		return e.Fn.LaTeX() + `\left(` + strings.Join(args, ", ") + `\right)`, precAtom
	}
	return e.Fn.String() + "(" + strings.Join(args, ", ") + ")", precAtom
}

// Terms prints the top-level additive terms of e, each with the sign that
// joins it to the terms before it ("a", "+ b", "− c"), so that a writer
// can break a long sum between terms. An expression that is not a sum is
// one term.
func Terms(e ir.Expr, s Style, n Names) []string {
	left := MaxNodes
	p := printer{s, n, &left}
	if add, ok := e.(*ir.Add); ok {
		return p.terms(add)
	}
	str, _ := p.expr(e)
	return []string{str}
}
