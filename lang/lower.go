package lang

import (
	"github.com/formwright/formwright/lang/source"

	"fmt"
	"strconv"
)

// lowerer turns grammar structs into AST nodes, keeping positions exactly.
// It reports the few errors the grammar cannot express (a dimension or an
// index that is not a whole number).
type lowerer struct {
	errs *source.ErrorList
	bad  bool // an error was reported for the current statement
}

func (lw *lowerer) errorf(from, to source.Pos, hint, format string, args ...any) {
	lw.bad = true
	lw.errs.Append(from, to, fmt.Sprintf(format, args...), hint)
}

func lowerName(n *name) Name {
	return Name{Pos: posOf(n.Pos), End: posOf(n.EndPos), Text: n.Text}
}

func lowerNames(ns []*name) []Name {
	out := make([]Name, len(ns))
	for i, n := range ns {
		out[i] = lowerName(n)
	}
	return out
}

// stmt lowers one statement; it returns nil if the statement had an error.
func (lw *lowerer) stmt(s *statement) Stmt {
	lw.bad = false
	sp := spanOf(s.Pos, s.EndPos)
	var out Stmt
	switch {
	case s.Model != nil:
		out = &ModelStmt{Span: sp, Name: lowerName(s.Model.Name)}
	case s.Dimension != nil:
		d := s.Dimension.Dim
		out = &DimensionStmt{Span: sp, Dim: lw.wholeNumber(d, "dimension"), DimPos: posOf(d.Pos), DimEnd: posOf(d.EndPos)}
	case s.Sides != nil:
		out = &SidesStmt{Span: sp, Names: lowerNames(s.Sides.Names)}
	case s.Use != nil:
		names := make([]Name, len(s.Use.Names))
		for i, n := range s.Use.Names {
			names[i] = Name{Pos: posOf(n.Pos), End: posOf(n.EndPos), Text: n.Text}
		}
		out = &UseStmt{Span: sp, Names: names}
	case s.Unknown != nil:
		u := s.Unknown
		out = &UnknownStmt{Span: sp, Name: lowerName(u.Name), Rank: u.Rank, Element: lowerName(u.Element)}
	case s.Given != nil:
		out = &GivenStmt{Span: sp, Name: lowerName(s.Given.Name), Value: lw.sum(s.Given.Value)}
	case s.Formula != nil:
		f := s.Formula
		out = &FormulaStmt{Span: sp, Name: lowerName(f.Name), Params: lowerNames(f.Params), Body: lw.sum(f.Body)}
	case s.Equation != nil:
		e := s.Equation
		out = &EquationStmt{Span: sp, For: lowerName(e.For), LHS: lw.sum(e.LHS), RHS: lw.sum(e.RHS)}
	case s.Boundary != nil:
		b := s.Boundary
		st := &BoundaryStmt{Span: sp, Sides: lowerNames(b.Sides), Value: lw.sum(b.Value)}
		if b.Flux != nil {
			st.Flux, st.Target = true, lowerName(b.Flux.Name)
		} else {
			st.Target = lowerName(b.Target)
		}
		out = st
	case s.Stabilise != nil:
		out = &StabiliseStmt{Span: sp, Methods: lowerNames(s.Stabilise.Methods)}
	case s.Tau != nil:
		out = &TauStmt{Span: sp, For: lowerName(s.Tau.For), Value: lw.sum(s.Tau.Value)}
	case s.Capture != nil:
		out = &CaptureStmt{Span: sp, For: lowerName(s.Capture.For), Value: lw.sum(s.Capture.Value)}
	case s.Mean != nil:
		out = &MeanStmt{Span: sp, Target: lowerName(s.Mean.Target), Value: lw.sum(s.Mean.Value)}
	case s.Quadrature != nil:
		d := s.Quadrature.Degree
		out = &QuadratureStmt{Span: sp, Degree: lw.wholeNumber(d, "quadrature degree"), DegreePos: posOf(d.Pos), DegreeEnd: posOf(d.EndPos)}
	case s.Part != nil:
		out = &PartStmt{Span: sp, Name: lowerName(s.Part.Name), Set: lw.partSet(s.Part.Set)}
	default:
		panic("lang: statement with no alternative set")
	}
	if lw.bad {
		return nil
	}
	return out
}

// wholeNumber returns the value of a literal that must be a non-negative
// whole number written with digits only.
func (lw *lowerer) wholeNumber(n *numberLit, what string) int {
	from, to := posOf(n.Pos), posOf(n.EndPos)
	for _, c := range n.Text {
		if c < '0' || c > '9' {
			lw.errorf(from, to, "", "%s must be a whole number, not %q", what, n.Text)
			return 0
		}
	}
	v, err := strconv.Atoi(n.Text)
	if err != nil || v > 1<<20 {
		lw.errorf(from, to, "", "%s %s is too large", what, n.Text)
		return 0
	}
	return v
}

func (lw *lowerer) sum(s *sum) Expr {
	x := lw.product(s.Head)
	for _, t := range s.Tail {
		y := lw.product(t.Operand)
		x = &Binary{Span: spanOf(s.Pos, t.EndPos), Op: t.Op, OpPos: posOf(t.Pos), X: x, Y: y}
	}
	return x
}

func (lw *lowerer) product(p *product) Expr {
	x := lw.unary(p.Head)
	for _, t := range p.Tail {
		y := lw.unary(t.Operand)
		x = &Binary{Span: spanOf(p.Pos, t.EndPos), Op: t.Op, OpPos: posOf(t.Pos), X: x, Y: y}
	}
	return x
}

func (lw *lowerer) unary(u *unary) Expr {
	if u.Operand != nil {
		return &Unary{Span: spanOf(u.Pos, u.EndPos), Op: u.Op, X: lw.unary(u.Operand)}
	}
	return lw.power(u.Power)
}

func (lw *lowerer) power(p *power) Expr {
	x := lw.postfix(p.Base)
	if p.Exponent == nil {
		return x
	}
	return &Binary{Span: spanOf(p.Pos, p.EndPos), Op: "^", OpPos: posOf(p.Exponent.Pos), X: x, Y: lw.unary(p.Exponent.Operand)}
}

func (lw *lowerer) postfix(p *postfix) Expr {
	x := lw.primary(p.Operand)
	for _, s := range p.Subscripts {
		x = &Index{Span: spanOf(p.Pos, s.EndPos), X: x, Index: lw.wholeNumber(s.Index, "an index"), IndexPos: posOf(s.Index.Pos)}
	}
	return x
}

func (lw *lowerer) primary(p *primary) Expr {
	sp := spanOf(p.Pos, p.EndPos)
	switch {
	case p.Number != nil:
		return &Number{Span: sp, Text: p.Number.Text}
	case p.Ref != nil:
		n := p.Ref.Name
		if p.Ref.Call == nil {
			return &Ident{Span: sp, Name: n.Text}
		}
		args := make([]Expr, len(p.Ref.Call.Args))
		for i, a := range p.Ref.Call.Args {
			args[i] = lw.sum(a)
		}
		return &Call{Span: sp, Func: n.Text, FuncPos: posOf(n.Pos), Args: args}
	case p.Group != nil:
		return lw.sum(p.Group.Inner)
	case p.List != nil:
		elems := make([]Expr, len(p.List.Elems))
		for i, e := range p.List.Elems {
			elems[i] = lw.sum(e)
		}
		return &List{Span: sp, Elems: elems}
	}
	panic("lang: primary with no alternative set")
}

// partSet folds a chain of set operations to the left.
func (lw *lowerer) partSet(p *partSet) PartSet {
	x := lw.partOperand(p.Head)
	for _, t := range p.Tail {
		y := lw.partOperand(t.Operand)
		x = &PartBinary{Span: spanOf(p.Pos, t.EndPos), Op: t.Op, OpPos: posOf(t.Pos), X: x, Y: y}
	}
	return x
}

func (lw *lowerer) partOperand(p *partOperand) PartSet {
	switch {
	case p.Name != nil:
		return &PartName{Span: spanOf(p.Pos, p.EndPos), Name: p.Name.Text}
	case p.Group != nil:
		return lw.partSet(p.Group)
	case p.Where != nil:
		w := &PartWhere{Span: spanOf(p.Pos, p.EndPos), Terms: []Expr{lw.sum(p.Where.Head)}}
		for _, t := range p.Where.Tail {
			w.Rels = append(w.Rels, t.Rel)
			w.RelPos = append(w.RelPos, posOf(t.Pos))
			w.Terms = append(w.Terms, lw.sum(t.Operand))
		}
		return w
	}
	panic("lang: part operand with no alternative set")
}
