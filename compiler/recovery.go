package compiler

import (
	"github.com/formwright/formwright/compiler/ir"
)

// Recovery says whether lowering reconstructs the second derivatives that
// the strong residual of a stabilised method loses on linear elements.
type Recovery uint8

const (
	// RecoverAuto reconstructs them where the derivation says the
	// residual loses them: a stabilised method, every unknown on linear
	// simplices (P1) in two or three dimensions, a diffusive part in the
	// operator, a steady model. Not in one dimension: there the plain P1
	// residual with the optimal τ (coth Pe − 1/Pe) makes SUPG nodally
	// exact for constant coefficients (Christie, Griffiths, Mitchell &
	// Zienkiewicz 1976; Brooks & Hughes 1982), a property the recovered
	// residual would break (measured: nodal errors up to 0.03 instead of
	// 1e-10, TestSUPGNodallyExact1D with the recovery on).
	RecoverAuto Recovery = iota
	// RecoverOff keeps the residual as the elements give it (its second
	// derivatives vanish inside each P1 cell).
	RecoverOff
)

// recovers reports whether Lower reconstructs the lost second derivatives
// in the forms of meth (see recoverSecondDerivatives).
func (d *Derivation) recovers(meth Method) bool {
	m := d.Model
	return d.Options.Recovery == RecoverAuto && meth != Galerkin && m.Dim >= 2 && m.IsSimplexP1() && !m.transient() && !m.captures() && hasDiffusion(d.Split)
}

// captures reports whether the model has a discontinuity-capturing term.
// The recovery is not applied with one: the capturing operator's
// calibration (Codina's constant, the regularisation scales) and its
// Newton behaviour were measured with the plain P1 residual, and with the
// recovery held fixed in the Jacobian Newton's line search stalled on a
// smooth problem (measured, TestCaptureSmoothCost).
func (m *Model) captures() bool {
	for _, c := range m.Capture {
		if c != nil {
			return true
		}
	}
	return false
}

// transient reports whether some equation has a time derivative.
func (m *Model) transient() bool {
	for _, eq := range m.Equations {
		if ir.Contains(eq.Written, func(e ir.Expr) bool { _, ok := e.(*ir.TimeDeriv); return ok }) {
			return true
		}
	}
	return false
}

// hasDiffusion reports whether the split has a diffusive part.
func hasDiffusion(split []Split) bool {
	for _, s := range split {
		if s.Parts[Diffusive] != nil {
			return true
		}
	}
	return false
}

// recoverSecondDerivatives puts recovered second derivatives (FieldD with
// Role ir.Recovered) where the lowered form reads second derivatives of
// the unknown that linear elements make vanish inside each cell. The
// recovered derivative D_ij u ≈ ½(∂_j G_i + ∂_i G_j) is read from the
// recovered gradient G_h of the iterate, the lumped-mass L² projection of
// ∇u_h onto the continuous linear element that the runtime computes before
// each assembly (runtime/problem). With it the strong residual of SUPG, GLS
// and VMS keeps its diffusive part on P1, as in the reconstruction of
// Jansen, Collis, Whiting & Shakib (1999, CMAME 174, 153–170).
//
//   - In a coefficient, a second derivative of the iterate (Role Previous)
//     becomes the recovered one. In a Newton step that is the residual
//     F(u_k) and the Jacobian's coefficients; the Jacobian terms that
//     carry a second derivative of the increment δu stay as they are (zero
//     on P1): J holds the recovered field fixed at the iterate, a
//     documented approximation (JacobianForm.Approximations).
//   - In a linear form, a bilinear term c·D_ij u·D^β v (zero on P1) becomes
//     the linear term −c·D̃_ij u·D^β v with the recovery of the previous
//     iterate: the solve iterates (Picard, a defect correction with a
//     fixed matrix) until the recovered field matches the solution. Terms
//     whose test function is differentiated twice stay: they vanish on
//     affine P1 cells whatever the trial factor.
//
// It reports whether it changed the form.
func recoverSecondDerivatives(lf *ir.LoweredForm, dim int) bool {
	fields := map[int]*ir.Field{}
	rec := func(f *ir.FieldD) *ir.FieldD {
		nf := fields[f.Field.Index]
		if nf == nil {
			c := *f.Field
			c.Role = ir.Recovered
			nf = &c
			fields[c.Index] = nf
		}
		return &ir.FieldD{At: f.At, Field: nf, Comp: f.Comp, D: f.D}
	}
	second := func(f *ir.FieldD) bool { return f != nil && f.DT == 0 && int(f.D[0])+int(f.D[1])+int(f.D[2]) == 2 }
	changed := false
	mapper := ir.Mapper(func(e ir.Expr) ir.Expr {
		if f, ok := e.(*ir.FieldD); ok && f.Field.Role == ir.Previous && second(f) {
			changed = true
			return rec(f)
		}
		return e
	})
	for k := range lf.Integrals {
		in := &lf.Integrals[k]
		var bil []ir.Term
		var moved []ir.Term
		for _, t := range in.Bilinear {
			t.Coef = mapper(t.Coef)
			if !lf.Newton && second(t.Trial) && !second(t.Test) {
				p := t.Coef.Pos()
				moved = append(moved, ir.Term{Test: t.Test, Coef: ir.Neg(p, ir.Prod(p, t.Coef, rec(t.Trial)))})
				changed = true
				continue
			}
			bil = append(bil, t)
		}
		in.Bilinear = bil
		for i := range in.Linear {
			in.Linear[i].Coef = mapper(in.Linear[i].Coef)
		}
		for _, t := range moved {
			merged := false
			for i, l := range in.Linear {
				if l.Test.Field.Index == t.Test.Field.Index && l.Test.Comp == t.Test.Comp && l.Test.D == t.Test.D {
					in.Linear[i].Coef = Simplify(ir.Sum(l.Coef.Pos(), l.Coef, t.Coef), dim)
					merged = true
					break
				}
			}
			if !merged {
				t.Coef = Simplify(t.Coef, dim)
				in.Linear = append(in.Linear, t)
			}
		}
	}
	return changed
}
