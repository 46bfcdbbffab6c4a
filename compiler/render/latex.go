package render

import (
	"fmt"
	"io"
	"strings"
	"unicode/utf8"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
)

// The LaTeX document of a derivation has the stages of the text one,
// under the same numbers, so that a reviewer can hold the two side by
// side. Every equation is numbered (amsmath's align) and labelled
// eq:<stage>.<row>; a long equation is broken between the terms of its
// sums, never inside a term, and the lines after the first are indented;
// the notes are set from their markup (compiler.Note.TeX).

// lineWidth is the width, in characters of the Unicode text rendering, at
// which an equation is broken: about what fits on an A4 line with 2 cm
// margins at 10 pt, where mathematical symbols set wider than text
// (common practice, no source).
const lineWidth = 72

// piece is a part of an equation the writer may break after: its LaTeX
// and the width of its text rendering.
type piece struct {
	tex   string
	width int
}

type latexWriter struct {
	t     *textWriter
	stage int
	row   int // equations in the current stage
}

func (l *latexWriter) printf(format string, a ...any) { l.t.printf(format, a...) }

// fixed is a piece of plain LaTeX with the given visible width.
func fixed(tex string, width int) piece { return piece{tex, width} }

// terms are the pieces of an expression: one per top-level term.
func (l *latexWriter) terms(e ir.Expr) []piece {
	tex := notation.Terms(e, notation.LaTeX, l.t.names)
	txt := notation.Terms(e, notation.Text, l.t.names)
	out := make([]piece, len(tex))
	for i := range tex {
		out[i] = piece{tex[i], utf8.RuneCountInString(txt[i]) + 1}
	}
	return out
}

// expr is an expression as a single piece (not broken).
func (l *latexWriter) expr(e ir.Expr) piece {
	return piece{l.t.e(e), utf8.RuneCountInString(notation.Expr(e, notation.Text, l.t.names))}
}

// section starts stage n.
func (l *latexWriter) section(n int, title string) {
	l.stage, l.row = n, 0
	l.printf("\\subsection*{%d.\\ %s}\n", n, title)
}

// row is one equation: lhs, the alignment point before rel, and the right
// side in pieces.
func row(lhs, rel string, rhs ...piece) []piece {
	return append([]piece{fixed(lhs, utf8.RuneCountInString(lhs)/3), fixed("&"+rel, 2)}, rhs...)
}

// equations sets rows as one numbered align. A row's pieces are written
// in order and broken where a line would pass lineWidth, never before the
// alignment point (the piece that starts with &); continuation lines are
// indented and unnumbered.
func (l *latexWriter) equations(rows ...[]piece) {
	if len(rows) == 0 {
		return
	}
	l.printf("\\begin{align}\n")
	for i, r := range rows {
		l.row++
		used, aligned := 0, false
		for j, p := range r {
			if j > 0 && used+p.width > lineWidth && !strings.HasPrefix(p.tex, "&") && !strings.HasPrefix(r[j-1].tex, "&") {
				if aligned {
					l.printf(" \\nonumber \\\\\n&\\qquad")
				} else {
					l.printf(" \\nonumber \\\\\n\\qquad")
				}
				used = 8
			}
			aligned = aligned || strings.HasPrefix(p.tex, "&")
			if j > 0 {
				l.printf(" ")
			}
			l.printf("%s", p.tex)
			used += p.width
		}
		l.printf(" \\label{eq:%d.%d}", l.stage, l.row)
		if i < len(rows)-1 {
			l.printf(" \\\\")
		}
		l.printf("\n")
	}
	l.printf("\\end{align}\n")
}

// notes sets notes as a list.
func (l *latexWriter) notes(ns []compiler.Note) {
	if len(ns) == 0 {
		return
	}
	l.printf("\\begin{itemize}\n")
	for _, n := range ns {
		prefix := ""
		if n.Kind == compiler.Warning {
			prefix = "\\textbf{Warning:} "
		}
		l.printf("\\item %s%s\n", prefix, n.TeX)
	}
	l.printf("\\end{itemize}\n")
}

// para sets a sentence of markup as a paragraph.
func (l *latexWriter) para(markup string, a ...any) {
	l.printf("\\noindent %s\n\n", fmt.Sprintf(markup, a...))
}

func (l *latexWriter) name(s string) string { return notation.TeXName(s) }

// integral is ∫_Ω [integrand] dx as pieces; the integrand is bracketed
// when it is a sum, so that a broken line cannot be misread.
func (l *latexWriter) integral(domain string, integrand ir.Expr, measure string) []piece {
	ts := l.terms(integrand)
	if len(ts) == 1 {
		return []piece{fixed("\\int_{"+domain+"} "+ts[0].tex+" \\,\\mathrm{d}"+measure, ts[0].width+5)}
	}
	out := []piece{fixed("\\int_{"+domain+"} \\bigl[", 3)}
	out = append(out, ts...)
	return append(out, fixed("\\bigr] \\,\\mathrm{d}"+measure, 3))
}

// boundary is the pieces of a form's boundary integrals.
func (l *latexWriter) boundary(bs []compiler.BoundaryPart) []piece {
	var out []piece
	for _, b := range bs {
		out = append(out, fixed("+", 1))
		out = append(out, l.integral("\\Gamma_{"+l.name(b.Side)+"}", b.Integrand, "s")...)
	}
	return out
}

// stabTerm is ± Σ_K (first, test operator)_K as pieces, the test operator
// broken between its terms.
func (l *latexWriter) stabTerm(sign int, first string, firstWidth int, test ir.Expr) []piece {
	s := "+"
	if sign < 0 {
		s = "-"
	}
	out := []piece{fixed(s+" \\sum_K \\bigl("+first+",", firstWidth+6)}
	out = append(out, l.terms(test)...)
	return append(out, fixed("\\bigr)_K", 3))
}

// sumK is + Σ_K (e)_K as pieces, e broken between its terms.
func (l *latexWriter) sumK(e ir.Expr) []piece {
	out := []piece{fixed("+ \\sum_K \\bigl(", 5)}
	out = append(out, l.terms(e)...)
	return append(out, fixed("\\bigr)_K", 3))
}

// adjoint sets the rows L^*_u(v) = … of the adjoint, op naming the
// operator (L or L').
func (l *latexWriter) adjoint(d *compiler.Derivation, op string) {
	var rows [][]piece
	for i, a := range d.Adjoint {
		rows = append(rows, row(fmt.Sprintf("%s^*_{%s}(%s)", op, l.name(l.t.m.Unknowns[i].Name), l.t.testList()), "=", l.terms(a)...))
	}
	l.equations(rows...)
}

// WriteLaTeX prints the derivation as a complete LaTeX document (amsmath,
// amssymb): the stages of WriteText under the same numbers, with numbered
// equations.
func WriteLaTeX(w io.Writer, d *compiler.Derivation) error {
	m := d.Model
	t := &textWriter{w: w, s: notation.LaTeX, names: namesFor(m), m: m}
	l := &latexWriter{t: t}
	l.printf("%% Derivation of model %s, written by formwright.\n", m.Name)
	l.printf("\\documentclass[a4paper]{article}\n\\usepackage{amsmath,amssymb}\n\\usepackage[margin=2cm]{geometry}\n")
	l.printf("\\allowdisplaybreaks\n\\begin{document}\n")
	l.printf("\\section*{Derivation of model \\texttt{%s}}\n", notation.TeXProse(m.Name))
	l.printf("\\noindent From \\texttt{%s}, dimension %d.\n", notation.TeXProse(m.File), m.Dim)
	l.printf("\\begin{itemize}\n")
	for _, u := range m.Unknowns {
		rank := "scalar"
		if u.Rank == 1 {
			rank = "vector"
		}
		l.printf("\\item unknown $%s$: %s %s, tested with $%s$\n", t.trial(u.Index), rank, notation.TeXProse(u.Element.String()), t.test(u.Index))
	}
	for _, c := range m.Coefs {
		l.printf("\\item given $%s = %s$\n", t.e(c.Sym), t.e(c.Def))
	}
	l.printf("\\end{itemize}\n")

	l.section(1, fmt.Sprintf("Operator as written, $L(%s) = f$", t.unknownList()))
	var rows [][]piece
	for k, eq := range m.Equations {
		rows = append(rows, append(l.terms(eq.Written), fixed("&= "+t.e(d.Sources[k]), 4)))
	}
	l.equations(rows...)

	l.section(2, "Normalised (product rules applied, like terms collected)")
	rows = nil
	for k, eq := range m.Equations {
		rows = append(rows, row("L_{"+l.name(m.Unknowns[eq.For].Name)+"}", "=", l.terms(d.Normalised[k])...))
	}
	l.equations(rows...)

	g := d.Galerkin
	if d.Linear != nil {
		l.linearisation(d)
		l.section(6, fmt.Sprintf("Residual form, Galerkin part: $F(%s; %s) = 0$", t.unknownList(), t.testList()))
		r := row("F", "=", l.integral("\\Omega", compiler.Simplify(ir.Sub(g.Bilinear.Pos(), g.Bilinear, g.Source), m.Dim), "x")...)
		l.equations(append(r, l.boundary(g.Boundary)...))
	} else {
		l.section(3, "Formal adjoint, $\\int L(u)\\cdot v = \\int u\\cdot L^*(v)$ for $u$, $v$ vanishing on $\\partial\\Omega$")
		l.adjoint(d, "L")
		l.section(4, "Split by derivative order")
		l.split(d.Split, "L")
		l.section(5, fmt.Sprintf("Galerkin form, $B(%s; %s) = F(%s)$", t.unknownList(), t.testList(), t.testList()))
		b := row("B", "=", l.integral("\\Omega", g.Bilinear, "x")...)
		l.equations(append(b, l.boundary(g.Boundary)...), row("F", "=", l.integral("\\Omega", g.Source, "x")...))
		if len(g.Boundary) > 0 {
			l.para("The boundary integrands are of $B - F$: terms without the unknown move to $F$ with their sign changed.")
		}
	}
	rows = nil
	for i, q := range g.Flux {
		if q != nil {
			rows = append(rows, row("\\mathrm{flux}("+t.trial(i)+")", "=", l.expr(q)))
		}
	}
	if len(rows) > 0 {
		l.equations(rows...)
		l.para("The conormal flux: $\\int L(u)\\cdot v = B - \\int_{\\partial\\Omega} \\mathrm{flux}\\cdot v$.")
	}
	l.notes(d.Notes)
	if d.Linear != nil {
		for i := range d.Forms {
			if d.Forms[i].Method == compiler.Galerkin {
				l.jacobian(&d.Forms[i], "F")
			}
		}
	}
	stage := 6
	if d.Linear != nil {
		stage = 7
	}
	for i := range d.Forms {
		f := &d.Forms[i]
		if f.Method == compiler.Galerkin {
			continue
		}
		l.section(stage, notation.TeXProse(methodTitle(f.Method)))
		stage++
		lhs, rhs := "B", "F"
		if d.Linear != nil {
			lhs, rhs = "F", "0"
		}
		form := []piece{fixed("&"+lhs, 1)}
		for _, s := range f.Stab {
			first := fmt.Sprintf("%s R_{%s}", t.e(s.Tau), l.name(m.Unknowns[s.For].Name))
			form = append(form, l.stabTerm(s.Sign, first, 6, s.TestOp)...)
		}
		if f.Cross != nil {
			form = append(form, l.sumK(f.Cross)...)
		}
		for _, c := range f.Capture {
			form = append(form, l.sumK(c.Integrand(m))...)
		}
		form = append(form, fixed("= "+rhs, 3))
		rows := [][]piece{form}
		for _, s := range f.Stab {
			rows = append(rows, row("R_{"+l.name(m.Unknowns[s.For].Name)+"}", "=", l.terms(s.Residual)...))
			rows = append(rows, row(t.e(s.Tau), "=", l.expr(compiler.Simplify(m.Tau[s.For], m.Dim))))
		}
		for _, fs := range f.Fine {
			rows = append(rows, row(t.e(fs.Sym), "=", l.terms(fs.Def)...))
		}
		for _, c := range f.Capture {
			rows = append(rows, row(t.e(c.Kappa), "=", l.terms(compiler.Simplify(m.Capture[c.For], m.Dim))...))
		}
		for _, x := range f.Dropped {
			dropped := []piece{fixed("\\text{dropped:}", 3), fixed("& \\sum_K \\bigl(", 4)}
			dropped = append(dropped, l.terms(x)...)
			rows = append(rows, append(dropped, fixed("\\bigr)_K", 3)))
		}
		l.equations(rows[:1]...)
		l.equations(rows[1:]...)
		if len(f.Stab) == 0 {
			l.para("No stabilisation term: the operator has no part this method acts on.")
		}
		l.notes(f.Notes)
		if f.Jacobian != nil {
			l.jacobian(f, "F_{\\mathrm{"+f.Method.String()+"}}")
		}
	}
	if d.Picard != nil {
		l.picard(d, stage)
	}
	l.printf("\\end{document}\n")
	return t.err
}

func (l *latexWriter) split(split []compiler.Split, op string) {
	m := l.t.m
	var rows [][]piece
	for _, s := range split {
		for p, part := range s.Parts {
			if part != nil {
				lhs := fmt.Sprintf("%s^{\\mathrm{%s}}_{%s}", op, compiler.Part(p), l.name(m.Unknowns[s.For].Name))
				rows = append(rows, row(lhs, "=", l.terms(part)...))
			}
		}
	}
	l.equations(rows...)
}

// linearisation sets stages 3 to 5 of a nonlinear model.
func (l *latexWriter) linearisation(d *compiler.Derivation) {
	m := d.Model
	t := l.t
	lin := d.Linear
	l.section(3, "Linearised operator, $L'(u)\\delta u = \\frac{\\mathrm{d}}{\\mathrm{d}\\varepsilon} L(u + \\varepsilon\\delta u)\\big|_{\\varepsilon=0}$ (Gateaux derivative)")
	var rows [][]piece
	for k, eq := range m.Equations {
		lhs := fmt.Sprintf("L'_{%s}(%s)[%s]", l.name(m.Unknowns[eq.For].Name), t.unknownList(), t.incrementList())
		rows = append(rows, row(lhs, "=", l.terms(lin.Operator[k])...))
	}
	l.equations(rows...)
	for k, a := range lin.Advection {
		if a != nil {
			l.para("Advective velocity of the equation for $%s$ (first-order part of $L'$): $a = %s$.", l.name(m.Unknowns[m.Equations[k].For].Name), t.e(a))
		}
	}
	l.section(4, "Formal adjoint of the linearisation, $\\int L'(u)\\delta u\\cdot v = \\int \\delta u\\cdot L'(u)^*(v)$ for $\\delta u$, $v$ vanishing on $\\partial\\Omega$")
	l.adjoint(d, "L'")
	l.section(5, "Split of the linearisation by the derivative order on $\\delta u$")
	l.split(lin.Split, "L'")
}

// jacobian sets the Jacobian of one method's residual form F (LaTeX name).
func (l *latexWriter) jacobian(f *compiler.MethodForm, name string) {
	m := l.t.m
	t := l.t
	j := f.Jacobian
	l.para("Jacobian $J(%s; %s, %s) = \\frac{\\mathrm{d}}{\\mathrm{d}\\varepsilon} %s(u + \\varepsilon\\,\\delta u; v)\\big|_{\\varepsilon=0}$:", t.unknownList(), t.incrementList(), t.testList(), name)
	r := row("J", "=", l.integral("\\Omega", j.Galerkin, "x")...)
	r = append(r, l.boundary(j.Boundary)...)
	for _, s := range j.Stab {
		u := l.name(m.Unknowns[s.For].Name)
		first := fmt.Sprintf("%s L'_{%s}(u)[\\delta u]", t.e(s.Tau), u)
		if s.TauVar != nil {
			first = fmt.Sprintf("%s R_{%s} + %s", t.e(s.TauVar), u, first)
		}
		r = append(r, l.stabTerm(s.Sign, first, 14, s.TestOp)...)
		if s.TestVar != nil {
			r = append(r, l.stabTerm(s.Sign, fmt.Sprintf("%s R_{%s}", t.e(s.Tau), u), 6, s.TestVar)...)
		}
	}
	if j.Fine != nil {
		r = append(r, l.sumK(j.Fine)...)
	}
	if j.Capture != nil {
		r = append(r, l.sumK(j.Capture)...)
	}
	rows := [][]piece{r}
	for _, g := range j.Defs {
		rows = append(rows, row(t.e(g.Sym), "=", l.terms(g.Def)...))
	}
	l.equations(rows...)
	var notes []compiler.Note
	if len(j.Approximations) == 0 {
		notes = append(notes, compiler.Note{Kind: compiler.Assumption, TeX: "$J$ is the exact derivative of the residual form: no approximation"})
	}
	notes = append(notes, j.Approximations...)
	l.notes(append(notes, j.Notes...))
}

// picard sets the Picard linearisation as the last stage.
func (l *latexWriter) picard(d *compiler.Derivation, stage int) {
	m := d.Model
	t := l.t
	pl := d.Picard
	l.section(stage, "Picard linearisation (second choice), $\\hat L(u^{\\mathrm{prev}})u = \\hat f$")
	var rows [][]piece
	for k := range m.Equations {
		rows = append(rows, append(l.terms(pl.Operators[k]), fixed("&= "+t.e(pl.Sources[k]), 4)))
	}
	l.equations(rows...)
	rows = nil
	for i, tau := range pl.Tau {
		if tau != nil {
			rows = append(rows, row(t.e(m.TauSym[i]), "=", l.expr(tau)))
		}
	}
	l.equations(rows...)
	l.notes(pl.Notes)
}
