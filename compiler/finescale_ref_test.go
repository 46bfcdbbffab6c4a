package compiler

// The fine-scale advection of residual-based VMS as it was derived before
// the general expansion (fineScaleExpansion) replaced it: a special case
// for a convecting velocity lagged by previous(U). It is kept here, in a
// test file, as the reference that TestFineScaleMatchesSpecialCase
// compares the general rule with.

import (
	"fmt"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
)

// refFineScale is the fine-scale velocity U′ = −τ_U R_U of a convected vector
// unknown U in residual-based VMS, evaluated at the previous iterate
// because the model lags its convecting velocity (Picard).
type refFineScale struct {
	Unknown int
	// Sym (fine_<U>) stands for Def in derived forms; lowering substitutes.
	Sym *ir.Sym
	Def ir.Expr
}

// refFineScaleAdvection prepares residual-based VMS turbulence modelling for
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
func refFineScaleAdvection(m *Model) (fs []*refFineScale, delta []ir.Expr, skipped []string) {
	delta = make([]ir.Expr, len(m.Equations))
	for k, eq := range m.Equations {
		U := m.Unknowns[eq.For]
		if U.Rank != 1 || m.TauSym[U.Index] == nil {
			continue
		}
		if !refReadsPrevious(eq.Written, U.Index) {
			continue
		}
		if ir.Contains(eq.Written, func(e ir.Expr) bool { _, ok := e.(*ir.TimeDeriv); return ok }) {
			skipped = append(skipped, fmt.Sprintf("the equation for %[1]s is transient, so its fine-scale velocity %[1]s′ = −τ R_%[1]s would need ∂ₜ%[1]s at the previous iterate, which the time stepping does not provide: the VMS form has no cross- or Reynolds-stress terms (Bazilevs et al. 2007), only −(τR, L*v)", U.Name))
			continue
		}
		var fine *refFineScale
		var terms []ir.Expr
		for _, t := range additiveTerms(eq.Written) {
			if !refReadsPrevious(t, U.Index) {
				continue
			}
			why := ""
			switch order, dt := derivOrder(t); {
			case dt || order != 1:
				why = "it is not a first-order term"
			case refDifferentiatesPrevious(t, U.Index):
				why = fmt.Sprintf("it differentiates previous(%s)", U.Name)
			case !refOnlyTrial(t, U.Index):
				why = fmt.Sprintf("it acts on another unknown than %s", U.Name)
			case !refLinearInPrevious(m.Dim, t, U.Index):
				why = fmt.Sprintf("it is not linear in previous(%s)", U.Name)
			}
			if why != "" {
				skipped = append(skipped, fmt.Sprintf("%s (%s) reads the lagged velocity but is left as written in the VMS form: the fine-scale velocity enters only first-order terms linear in it, without its derivatives", refRenderShort(t), why))
				continue
			}
			if fine == nil {
				fine = refNewFineScale(m, eq, U)
				fs = append(fs, fine)
			}
			terms = append(terms, refReplacePrevious(t, U.Index, fine.Sym))
		}
		if len(terms) > 0 {
			delta[k] = Simplify(ir.Sum(eq.Pos, terms...), m.Dim)
		}
	}
	return fs, delta, skipped
}

func refNewFineScale(m *Model, eq *Equation, U *Unknown) *refFineScale {
	p := eq.Pos
	r := withRole(residual(m, eq, p), ir.Trial, ir.Previous)
	def := Simplify(ir.Neg(p, ir.Prod(p, m.TauSym[U.Index], r)), m.Dim)
	return &refFineScale{
		Unknown: U.Index,
		Sym:     &ir.Sym{At: ir.At{P: p}, Name: "fine_" + U.Name, Kind: ir.FineScale, R: 1, Deps: ir.DepX | ir.DepY | ir.DepZ | ir.DepT},
		Def:     def,
	}
}

func refIsPrevious(e ir.Expr, u int) bool {
	f, ok := e.(*ir.Field)
	return ok && f.Role == ir.Previous && f.Index == u
}

func refReadsPrevious(t ir.Expr, u int) bool {
	return ir.Contains(t, func(e ir.Expr) bool { return refIsPrevious(e, u) })
}

// refDifferentiatesPrevious reports whether previous(u) occurs under a
// derivative in t.
func refDifferentiatesPrevious(t ir.Expr, u int) bool {
	found := false
	var walk func(e ir.Expr, under bool)
	walk = func(e ir.Expr, under bool) {
		if found {
			return
		}
		if refIsPrevious(e, u) && under {
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

// refOnlyTrial reports whether every trial field in t is unknown u.
func refOnlyTrial(t ir.Expr, u int) bool {
	return !ir.Contains(t, func(e ir.Expr) bool {
		f, ok := e.(*ir.Field)
		return ok && f.Role == ir.Trial && f.Index != u
	})
}

// refLinearInPrevious checks t(2·previous(u)) = 2·t(previous(u)) and
// t(3·previous(u)) = 3·t(previous(u)) symbolically: t is homogeneous of
// degree 1 in previous(u).
func refLinearInPrevious(dim int, t ir.Expr, u int) bool {
	for _, s := range []int64{2, 3} {
		p := t.Pos()
		scaled := ir.MapUp(t, func(n ir.Expr) ir.Expr {
			if refIsPrevious(n, u) {
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

func refReplacePrevious(t ir.Expr, u int, by ir.Expr) ir.Expr {
	return ir.MapUp(t, func(n ir.Expr) ir.Expr {
		if refIsPrevious(n, u) {
			return by
		}
		return n
	})
}

// refRenderShort names a term in a note by its position.
func refRenderShort(t ir.Expr) string {
	if p := t.Pos(); p != (source.Pos{}) {
		return "the term at " + p.String()
	}
	return "a term"
}

// refAddFineScale adds the fine-scale advection of residual-based VMS to a
// VMS form (refFineScaleAdvection): the cross-stress integrand Σ (δL u_h)·v
// and, in each row's test operator, −δL with the test function in place of
// the unknown. It returns the convection terms it could not rewrite.
func refAddFineScale(m *Model, f *MethodForm) []string {
	fs, delta, skipped := refFineScaleAdvection(m)
	if len(fs) == 0 {
		return skipped
	}
	for _, x := range fs {
		f.Fine = append(f.Fine, &FineScale{Unknown: x.Unknown, Sym: x.Sym, Def: x.Def})
	}
	var cross []ir.Expr
	for k, eq := range m.Equations {
		if delta[k] == nil {
			continue
		}
		cross = append(cross, contract(eq.Pos, delta[k], m.Test(eq.For)))
		for i := range f.Stab {
			if s := &f.Stab[i]; s.For == eq.For {
				s.TestOp = Simplify(ir.Sub(eq.Pos, s.TestOp, toTest(delta[k])), m.Dim)
			}
		}
	}
	f.Cross = Simplify(ir.Sum(m.Equations[0].Pos, cross...), m.Dim)
	return skipped
}
