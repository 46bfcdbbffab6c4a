package gogen

import (
	"fmt"
	"strings"
	"unicode/utf8"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
)

// The derivation above the code. Every block of generated statements
// carries a comment that names what it computes (which rows and columns,
// integrated in advance or at each point), then, per method term, the
// term as the derivation writes it and the lowered terms of the block
// that it contributes, each with the model line it comes from:
//
//	// Integrated in advance (affine cell, coefficients constant in the
//	// cell): rows 0..2, columns 0..2.
//	//
//	//	Galerkin: B = ∫_Ω κ (∇c·∇v) + (a·∇c) v dx
//	//	  1/100 · ∂c/∂x · ∂v/∂x                   adr.fw:12
//	//	SUPG: + Σ_K (τ_c R_c, a·∇v)_K             adr.fw:15
//	//	  τ_c · ∂c/∂x · ∂v/∂x                     adr.fw:15
//
// The terms are a code block of a Go doc comment (a tab after "//"), the
// one form that gofmt keeps as written, so the comment reads the same in
// the Go and C kernels and survives formatting (a list item would be
// rewritten to "  - ").
//
// A lowered coefficient such as τ_c/4 + 1/100 mixes terms of the
// Galerkin form and of the stabilisation; its additive parts are
// attributed by the quantities they contain: a part with a τ belongs to
// the stabilisation term of that τ, one with a fine-scale velocity but no
// τ to the VMS cross-stress terms, one with a discontinuity-capturing
// diffusivity (or its Gateaux derivative) to the capture terms, the rest
// to the Galerkin form.

// Derived is the derived form of one method as the derivation prints it
// (formwright derive). Its texts head the term lists of the generated
// comments; without them the comments name the method and the kind of
// term only.
type Derived struct {
	// Galerkin is the Galerkin form, e.g. "B = ∫_Ω κ (∇c·∇v) dx, F = ∫_Ω f v dx".
	Galerkin string
	// Stab holds the stabilisation terms by the model name of their τ,
	// e.g. "tau_c": "+ Σ_K (τ_c R_c, a·∇v)_K".
	Stab map[string]string
	// Cross is the VMS cross-stress term, e.g. "+ Σ_K (…)_K".
	Cross string
	// Boundary holds the boundary integrals of the Galerkin form by side,
	// e.g. "right": "∫_right [c v − v/2] ds".
	Boundary map[string]string
}

// methodTitles are the method names as the comments write them.
var methodTitles = map[string]string{"galerkin": "Galerkin", "supg": "SUPG", "gls": "GLS", "vms": "VMS"}

// genericStab is the stabilisation term of each method in general form
// (compiler/weakform.go: Stabilise), used without a Derived text; %s is
// the τ.
var genericStab = map[string]string{
	"supg": "+ Σ_K (%s R, L_A v)_K", // the advective operator on the test function
	"gls":  "+ Σ_K (%s R, L v)_K",   // the whole operator
	"vms":  "− Σ_K (%s R, L* v)_K",  // minus the adjoint
}

// commenter renders the comments of one form.
type commenter struct {
	method  string
	derived *Derived
	names   notation.Names
	nfields int
}

func newCommenter(lf *ir.LoweredForm, d *Derived) *commenter {
	c := &commenter{method: lf.Method, derived: d, nfields: len(lf.Unknowns)}
	c.names = notation.Names{Test: map[int]string{}}
	if len(lf.Unknowns) == 1 {
		c.names.Test[0] = "v" // as the derivation names it
	}
	return c
}

func (c *commenter) title() string {
	if t, ok := methodTitles[c.method]; ok {
		return t
	}
	return sanitize(c.method)
}

// category is the method term a lowered term part belongs to.
type category struct {
	kind int    // 0 Galerkin, 1 a stabilisation term, 2 cross-stress, 3 discontinuity capturing
	tau  string // the τ's model name (kind 1)
}

// classify attributes a part of a lowered coefficient (see above).
func classify(e ir.Expr) (category, *ir.Named) {
	var tau, fine, capture *ir.Named
	ir.Inspect(e, func(x ir.Expr) bool {
		n, ok := x.(*ir.Named)
		if !ok {
			return true
		}
		switch n.Sym.Kind {
		case ir.Capture:
			if capture == nil {
				capture = n
			}
		case ir.Gateaux:
			if n.Sym.Of != nil && n.Sym.Of.Kind == ir.Capture && capture == nil {
				capture = n
			}
		case ir.Tau:
			if tau == nil {
				tau = n
			}
		case ir.FineScale:
			if fine == nil {
				fine = n
			}
		}
		return false // a Named stands for its name
	})
	switch {
	case tau != nil:
		return category{1, tau.Sym.Name}, tau
	case fine != nil:
		return category{kind: 2}, fine
	case capture != nil:
		return category{kind: 3}, capture
	}
	return category{}, nil
}

// parts splits a coefficient into its additive parts.
func parts(e ir.Expr) []ir.Expr {
	if a, ok := e.(*ir.Add); ok {
		return a.Terms
	}
	return []ir.Expr{e}
}

// entry is one line of a term list: the text and its model position.
type entry struct {
	text, at string
	heading  bool // a section heading: not aligned with the terms
}

// blockComment is the comment of a block: what it computes (head), then
// the method terms and the lowered terms of groups. side is "" for the
// cell integral.
func (c *commenter) blockComment(head string, groups []*group, side string) []string {
	type section struct {
		cat     category
		heading entry
		terms   []entry
	}
	var secs []*section
	find := func(cat category, named *ir.Named) *section {
		for _, s := range secs {
			if s.cat == cat {
				return s
			}
		}
		s := &section{cat: cat, heading: c.heading(cat, named, side)}
		secs = append(secs, s)
		return s
	}
	for _, gr := range groups {
		for _, t := range gr.terms {
			for _, p := range parts(t.Coef) {
				cat, named := classify(p)
				at := p.Pos()
				if !at.IsValid() {
					at = t.Coef.Pos()
				}
				s := find(cat, named)
				s.terms = append(s.terms, entry{text: c.termText(p, t), at: posText(at.File, at.Line)})
			}
		}
	}
	// Galerkin first, then the stabilisation terms in order of appearance.
	var ordered []*section
	for _, k := range []int{0, 1, 2, 3} {
		for _, s := range secs {
			if s.cat.kind == k {
				ordered = append(ordered, s)
			}
		}
	}
	var rows []entry
	for _, s := range ordered {
		h := s.heading
		h.heading = true
		rows = append(rows, h)
		for _, t := range s.terms {
			rows = append(rows, entry{text: "  " + t.text, at: t.at})
		}
	}
	return append(paragraph(head), codeBlock(rows)...)
}

// heading is the first line of a section: the method term.
func (c *commenter) heading(cat category, named *ir.Named, side string) entry {
	d := c.derived
	switch cat.kind {
	case 1:
		tau := notation.Expr(named, notation.Text, c.names)
		text := fmt.Sprintf("stabilisation term with %s", tau)
		if d != nil && d.Stab[cat.tau] != "" {
			text = d.Stab[cat.tau]
		} else if f, ok := genericStab[c.method]; ok {
			text = fmt.Sprintf(f, tau)
		}
		p := named.Sym.Pos()
		return entry{text: c.title() + ": " + sanitize(text), at: posText(p.File, p.Line)}
	case 2:
		text := "+ Σ_K (cross-stress terms of the fine-scale velocity)_K"
		if d != nil && d.Cross != "" {
			text = d.Cross
		}
		return entry{text: "VMS cross-stress: " + sanitize(text)}
	case 3:
		// The capture terms of capture.go in the compiler.
		return entry{text: "discontinuity capturing: + Σ_K (κ_dc ∇u, ∇v)_K and its derivative"}
	}
	if side != "" {
		text := "boundary integral on side " + quoteText(side)
		if d != nil && d.Boundary[side] != "" {
			text = d.Boundary[side]
		}
		return entry{text: "Galerkin: " + sanitize(text)}
	}
	text := "the Galerkin form B(u; v) = F(v)"
	if d != nil && d.Galerkin != "" {
		text = d.Galerkin
	}
	return entry{text: "Galerkin: " + sanitize(text)}
}

// termText renders one lowered term part: coefficient · trial · test.
func (c *commenter) termText(coef ir.Expr, t ir.Term) string {
	var fs []string
	if !ir.IsNum(coef, 1) {
		s := notation.Expr(c.display(coef), notation.Text, c.names)
		if _, sum := coef.(*ir.Add); sum {
			s = "(" + s + ")"
		}
		fs = append(fs, s)
	}
	if t.Trial != nil {
		fs = append(fs, c.fieldText(t.Trial))
	}
	fs = append(fs, c.fieldText(t.Test))
	return sanitize(strings.Join(fs, " · "))
}

// display replaces the previous-iterate leaves of a coefficient by their
// printed form, for notation.Expr (which prints lowered leaves in the
// model syntax). Named nodes print as their names and are kept.
func (c *commenter) display(e ir.Expr) ir.Expr {
	switch e := e.(type) {
	case *ir.FieldD:
		return &ir.Sym{At: e.At, Name: c.fieldText(e)}
	case *ir.Named:
		return e
	}
	kids := ir.Children(e)
	if len(kids) == 0 {
		return e
	}
	nk := make([]ir.Expr, len(kids))
	for i, k := range kids {
		nk[i] = c.display(k)
	}
	return ir.WithChildren(e, nk)
}

// fieldText renders a derivative of a field component: ∂²c/∂x∂y,
// ∂v/∂x, vel[1].
func (c *commenter) fieldText(f *ir.FieldD) string {
	base := notation.Expr(f.Field, notation.Text, c.names)
	if f.Field.R > 0 {
		base = fmt.Sprintf("%s[%d]", base, f.Comp+1)
	}
	order := int(f.D[0]) + int(f.D[1]) + int(f.D[2])
	if order == 0 {
		return base
	}
	var den strings.Builder
	for k := 0; k < 3; k++ {
		switch f.D[k] {
		case 0:
		case 1:
			den.WriteString("∂" + ir.AxisName(k))
		default:
			den.WriteString("∂" + ir.AxisName(k) + superDigit(int(f.D[k])))
		}
	}
	num := "∂"
	if order > 1 {
		num += superDigit(order)
	}
	if strings.ContainsAny(base, " +−") {
		base = "(" + base + ")"
	}
	return num + base + "/" + den.String()
}

func superDigit(n int) string {
	return string([]rune("⁰¹²³⁴⁵⁶⁷⁸⁹")[n%10])
}

// posText is "file:line" of a model position ("" if unknown).
func posText(file string, line int) string {
	if line <= 0 {
		return ""
	}
	return sanitize(fmt.Sprintf("%s:%d", baseName(file), line))
}

// quoteText quotes model text for a comment.
func quoteText(s string) string { return "“" + s + "”" }

// Comment lines are stored as the text after "//": a paragraph line
// starts with a space, a code line with a tab, an empty line is blank.

// paragraph splits text into comment lines of at most about 76 columns.
func paragraph(text string) []string {
	var out []string
	line := ""
	for _, w := range strings.Fields(sanitize(text)) {
		if line != "" && utf8.RuneCountInString(line)+1+utf8.RuneCountInString(w) > 76 {
			out = append(out, " "+line)
			line = ""
		}
		if line != "" {
			line += " "
		}
		line += w
	}
	if line != "" {
		out = append(out, " "+line)
	}
	return out
}

// codeBlock is a blank comment line and the rows as code lines, the
// positions aligned in a column.
func codeBlock(rows []entry) []string {
	if len(rows) == 0 {
		return nil
	}
	width := 0
	for _, r := range rows {
		if !r.heading {
			width = max(width, utf8.RuneCountInString(r.text))
		}
	}
	width = min(width, 56)
	out := []string{""}
	for _, r := range rows {
		s := r.text
		if r.at != "" {
			pad := max(2, width+2-utf8.RuneCountInString(s))
			s += strings.Repeat(" ", pad) + r.at
		}
		out = append(out, "\t"+strings.TrimRight(s, " "))
	}
	return out
}
