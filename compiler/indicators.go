package compiler

import (
	"github.com/formwright/formwright/compiler/ir"
)

// Indicator is a quantity per cell that shows how a stabilised method
// acts on a mesh, as a lowered scalar expression: τ of an equation, or
// the element Péclet number of an advective–diffusive equation.
type Indicator struct {
	Name string
	Expr ir.Expr
}

// Indicators returns τ of every equation that has one ("tau_u") and the
// element Péclet number Pe_h = |a| h/(2κ) of every equation with both an
// advective and a diffusive part ("peclet_u"), h the cell diameter. a is
// read off the advective part as the coefficients of the first
// derivatives of the equation's unknown (component 1 of a vector
// unknown), κ off the diffusive part as minus the mean coefficient of its
// second derivatives ∂²u/∂x_k² (exact for κΔu and for ∇·(κ∇u) with κ
// constant in the cell; a mean for a diffusion tensor). Equations where
// this does not yield a positive κ get no Péclet number.
func (d *Derivation) Indicators() []Indicator {
	m := d.Model
	l := newLowerer(m)
	split := d.Split
	if d.Linear != nil {
		// A nonlinear model: τ reads the solution, and a and κ come from
		// the linearisation at it (the coefficients of δu's derivatives).
		l.newton = true
		split = d.Linear.Split
	}
	var out []Indicator
	for i, ts := range m.TauSym {
		if ts != nil && m.Tau[i] != nil {
			out = append(out, Indicator{"tau_" + m.Unknowns[i].Name, l.Lower(ts)[0]})
		}
	}
	for _, sp := range split {
		adv, dif := sp.Parts[Advective], sp.Parts[Diffusive]
		if adv == nil || dif == nil {
			continue
		}
		u := m.Unknowns[sp.For]
		p := u.Pos
		var a2 []ir.Expr
		for k := 0; k < m.Dim; k++ {
			var D [3]uint8
			D[k] = 1
			if ak := l.trialCoef(adv, sp.For, D); !ir.IsZero(ak) {
				a2 = append(a2, &ir.Pow{At: ir.At{P: p}, Base: ak, Exp: ir.Int(p, 2)})
			}
		}
		if len(a2) == 0 {
			continue // first-order terms of other unknowns only (∇p)
		}
		var kappa []ir.Expr
		for k := 0; k < m.Dim; k++ {
			var D [3]uint8
			D[k] = 2
			kappa = append(kappa, l.trialCoef(dif, sp.For, D))
		}
		// κ = −(1/d) Σ_k c_kk
		kap := Simplify(ir.Prod(p, ir.Rat(p, -1, int64(m.Dim)), ir.Sum(p, kappa...)), m.Dim)
		if ir.IsZero(kap) {
			continue
		}
		if n, ok := kap.(*ir.Num); ok && n.Val.Sign() < 0 {
			continue
		}
		speed := &ir.Pow{At: ir.At{P: p}, Base: ir.Sum(p, a2...), Exp: ir.Rat(p, 1, 2)}
		h := &ir.CellQ{At: ir.At{P: p}, Q: ir.Diameter}
		pe := ir.Prod(p, speed, h, &ir.Pow{At: ir.At{P: p}, Base: ir.Prod(p, ir.Int(p, 2), kap), Exp: ir.Int(p, -1)})
		out = append(out, Indicator{"peclet_" + u.Name, Simplify(pe, m.Dim)})
	}
	return out
}

// trialCoef is the coefficient of D u (component 1 of unknown i) in
// component 1 of the operator part op, lowered: the sum over its terms of
// the factors beside that trial derivative, 0 when there is none.
func (l *lowerer) trialCoef(op ir.Expr, i int, D [3]uint8) ir.Expr {
	low := l.Lower(op)[0]
	ms, err := l.monomials(low)
	p := op.Pos()
	if err != nil {
		return ir.Int(p, 0)
	}
	var parts []ir.Expr
	for _, mo := range ms {
		if mo.trial != nil && mo.trial.Field.Index == i && mo.trial.Comp == 0 && mo.trial.D == D && mo.trial.DT == 0 {
			parts = append(parts, mulOf(p, mo.coef...))
		}
	}
	if len(parts) == 0 {
		return ir.Int(p, 0)
	}
	return Simplify(ir.Sum(p, parts...), l.dim)
}
