package compiler

import (
	"fmt"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
)

// FineScale is the fine-scale velocity U′ = −τ_U R_U of a convected vector
// unknown U in residual-based VMS, evaluated at the previous iterate
// because the model lags its convecting velocity (Picard).
type FineScale struct {
	Unknown int
	// Sym (fine_<U>) stands for Def in derived forms; lowering substitutes.
	Sym *ir.Sym
	Def ir.Expr
}

// fineScaleAdvection prepares residual-based VMS turbulence modelling for
// a model whose convecting velocity is the previous iterate previous(U) of
// a vector unknown U with a τ (Bazilevs, Calo, Cottrell, Hughes, Reali &
// Scovazzi 2007, CMAME 197). In the VMS form the convecting velocity
// becomes previous(U) + U′: the Galerkin convection gains the cross-stress
// term (v, (∇u_h) U′), and the test operator gains −(∇v) U′, which paired
// with τR = −u′ is the Reynolds-stress term −(∇v, u′ ⊗ U′) of the
// conservation form. Only terms of U's own equation that are first order,
// linear in previous(U) and do not differentiate it are rewritten (the
// convection (∇u) previous(u)); others are reported in skipped, as
// warnings for the derivation. A transient model gets no fine-scale
// advection: its U′ would need ∂ₜU at the previous iterate, which the
// time stepping does not provide.
//
// It returns the fine-scale velocities and, per equation (m.Equations
// order), δL: the rewritten terms, nil where there are none.
func fineScaleAdvection(m *Model) (fs []*FineScale, delta []ir.Expr, skipped []string) {
	delta = make([]ir.Expr, len(m.Equations))
	for k, eq := range m.Equations {
		U := m.Unknowns[eq.For]
		if U.Rank != 1 || m.TauSym[U.Index] == nil {
			continue
		}
		if !readsPrevious(eq.Written, U.Index) {
			continue
		}
		if ir.Contains(eq.Written, func(e ir.Expr) bool { _, ok := e.(*ir.TimeDeriv); return ok }) {
			skipped = append(skipped, fmt.Sprintf("the equation for %[1]s is transient, so its fine-scale velocity %[1]s′ = −τ R_%[1]s would need ∂ₜ%[1]s at the previous iterate, which the time stepping does not provide: the VMS form has no cross- or Reynolds-stress terms (Bazilevs et al. 2007), only −(τR, L*v)", U.Name))
			continue
		}
		var fine *FineScale
		var terms []ir.Expr
		for _, t := range additiveTerms(eq.Written) {
			if !readsPrevious(t, U.Index) {
				continue
			}
			why := ""
			switch order, dt := derivOrder(t); {
			case dt || order != 1:
				why = "it is not a first-order term"
			case differentiatesPrevious(t, U.Index):
				why = fmt.Sprintf("it differentiates previous(%s)", U.Name)
			case !onlyTrial(t, U.Index):
				why = fmt.Sprintf("it acts on another unknown than %s", U.Name)
			case !linearInPrevious(m.Dim, t, U.Index):
				why = fmt.Sprintf("it is not linear in previous(%s)", U.Name)
			}
			if why != "" {
				skipped = append(skipped, fmt.Sprintf("%s (%s) reads the lagged velocity but is left as written in the VMS form: the fine-scale velocity enters only first-order terms linear in it, without its derivatives", renderShort(t), why))
				continue
			}
			if fine == nil {
				fine = newFineScale(m, eq, U)
				fs = append(fs, fine)
			}
			terms = append(terms, replacePrevious(t, U.Index, fine.Sym))
		}
		if len(terms) > 0 {
			delta[k] = Simplify(ir.Sum(eq.Pos, terms...), m.Dim)
		}
	}
	return fs, delta, skipped
}

func newFineScale(m *Model, eq *Equation, U *Unknown) *FineScale {
	p := eq.Pos
	r := withRole(residual(m, eq, p), ir.Trial, ir.Previous)
	def := Simplify(ir.Neg(p, ir.Prod(p, m.TauSym[U.Index], r)), m.Dim)
	return &FineScale{
		Unknown: U.Index,
		Sym:     &ir.Sym{At: ir.At{P: p}, Name: "fine_" + U.Name, Kind: ir.FineScale, R: 1, Deps: ir.DepX | ir.DepY | ir.DepZ | ir.DepT},
		Def:     def,
	}
}

func isPrevious(e ir.Expr, u int) bool {
	f, ok := e.(*ir.Field)
	return ok && f.Role == ir.Previous && f.Index == u
}

func readsPrevious(t ir.Expr, u int) bool {
	return ir.Contains(t, func(e ir.Expr) bool { return isPrevious(e, u) })
}

// differentiatesPrevious reports whether previous(u) occurs under a
// derivative in t.
func differentiatesPrevious(t ir.Expr, u int) bool {
	found := false
	var walk func(e ir.Expr, under bool)
	walk = func(e ir.Expr, under bool) {
		if found {
			return
		}
		if isPrevious(e, u) && under {
			found = true
			return
		}
		switch e.(type) {
		case *ir.Grad, *ir.Div, *ir.Lap, *ir.Partial, *ir.TimeDeriv:
			under = true
		}
		for _, k := range ir.Children(e) {
			walk(k, under)
		}
	}
	walk(t, false)
	return found
}

// onlyTrial reports whether every trial field in t is unknown u.
func onlyTrial(t ir.Expr, u int) bool {
	return !ir.Contains(t, func(e ir.Expr) bool {
		f, ok := e.(*ir.Field)
		return ok && f.Role == ir.Trial && f.Index != u
	})
}

// linearInPrevious checks t(2·previous(u)) = 2·t(previous(u)) and
// t(3·previous(u)) = 3·t(previous(u)) symbolically: t is homogeneous of
// degree 1 in previous(u).
func linearInPrevious(dim int, t ir.Expr, u int) bool {
	for _, s := range []int64{2, 3} {
		p := t.Pos()
		scaled := ir.MapUp(t, func(n ir.Expr) ir.Expr {
			if isPrevious(n, u) {
				return ir.Prod(p, ir.Int(p, s), n)
			}
			return n
		})
		if !ir.IsZero(Simplify(ir.Sub(p, scaled, ir.Prod(p, ir.Int(p, s), t)), dim)) {
			return false
		}
	}
	return true
}

func replacePrevious(t ir.Expr, u int, by ir.Expr) ir.Expr {
	return ir.MapUp(t, func(n ir.Expr) ir.Expr {
		if isPrevious(n, u) {
			return by
		}
		return n
	})
}

// renderShort names a term in a note by its position.
func renderShort(t ir.Expr) string {
	if p := t.Pos(); p != (source.Pos{}) {
		return "the term at " + p.String()
	}
	return "a term"
}
