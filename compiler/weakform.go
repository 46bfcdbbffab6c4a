package compiler

import (
	"fmt"
	"slices"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
)

// Normal is the outward unit normal on boundary integrals.
var Normal = &ir.Sym{Name: ir.Normal.String(), Kind: ir.CellQuantity, R: 1, Q: ir.Normal}

// BoundaryPart is a boundary integral on one side.
type BoundaryPart struct {
	Side string
	// Integrand over the side, linear in the test functions; terms with the
	// unknown belong to B, the rest (with a minus sign) to F.
	Integrand ir.Expr
}

// GalerkinForm is the Galerkin weak form B(u, v) = F(v).
type GalerkinForm struct {
	// Bilinear is the integrand of B over the cells, after integrating
	// second-order terms by parts once.
	Bilinear ir.Expr
	// Source is the integrand of F over the cells, (f, v).
	Source ir.Expr
	// Boundary holds the side integrals kept from flux and Robin
	// conditions, as integrands of B − F.
	Boundary []BoundaryPart
	// Flux is, per equation, the conormal flux q that integration by parts
	// produced: ∫ L(u)·v = B(u, v) − ∫_∂Ω q·v (nil where there is none).
	Flux []ir.Expr
}

// WeakGalerkin derives the Galerkin form: each equation tested with its
// test function, second-order terms integrated by parts once, boundary
// integrals kept where a flux or Robin condition is given (the prescribed
// flux replaces q there) and dropped where a value is prescribed (the test
// function vanishes there) or nothing is said (zero flux, the natural
// condition).
func WeakGalerkin(m *Model) (*GalerkinForm, error) {
	g := &GalerkinForm{Flux: make([]ir.Expr, len(m.Unknowns))}
	var vol, src []ir.Expr
	for _, eq := range m.Equations {
		v := m.Test(eq.For)
		var flux []ir.Expr
		for _, t := range additiveTerms(eq.Written) {
			order, _ := derivOrder(t)
			if order < 2 {
				vol = append(vol, contract(t.Pos(), t, v))
				continue
			}
			a, _, err := ibp(m.Dim, t, v)
			if err != nil {
				return nil, err
			}
			vol = append(vol, a)
			q, err := conormal(m.Dim, t)
			if err != nil {
				return nil, err
			}
			flux = append(flux, q)
		}
		src = append(src, contract(eq.Pos, eq.Source, v))
		if len(flux) > 0 {
			g.Flux[eq.For] = Simplify(ir.Sum(eq.Pos, flux...), m.Dim)
		}
	}
	p := m.Equations[0].Pos
	g.Bilinear = Simplify(ir.Sum(p, vol...), m.Dim)
	g.Source = Simplify(ir.Sum(p, src...), m.Dim)
	for _, side := range m.ConditionParts() {
		var parts []ir.Expr
		for _, bc := range m.BCs {
			if bc.Kind == ValueBC || !slices.Contains(bc.Sides, side) {
				continue
			}
			// −∫ q·v with q the prescribed flux g (which may hold u: Robin).
			parts = append(parts, ir.Neg(bc.Pos, contract(bc.Pos, bc.Value, m.Test(bc.Unknown))))
		}
		if len(parts) > 0 {
			if in := Simplify(ir.Sum(p, parts...), m.Dim); !ir.IsZero(in) {
				g.Boundary = append(g.Boundary, BoundaryPart{Side: side, Integrand: in})
			}
		}
	}
	return g, nil
}

// ibp integrates the pairing ∫ t·w by parts once:
// ∫ t·w = ∫ vol + ∫_∂Ω bnd.
func ibp(dim int, t, w ir.Expr) (vol, bnd ir.Expr, err error) {
	p := t.Pos()
	at := ir.At{P: p}
	n := ir.Expr(&ir.Sym{At: at, Name: Normal.Name, Kind: Normal.Kind, R: 1, Q: Normal.Q})
	switch t := t.(type) {
	case *ir.Mul:
		// The factor with the highest derivative of the unknown is
		// integrated by parts; in a nonlinear term the others may hold the
		// unknown too (k(u) Δu).
		field, rest := highestOrderFactor(t)
		if field != nil && mulOf(p, rest...).Rank() == 0 {
			return ibp(dim, field, mulOf(p, append(rest, w)...))
		}
	case *ir.Div: // ∫ (∇·F)·w = −∫ F:∇w + ∫_∂Ω (F n)·w
		return ir.Neg(p, contract(p, t.X, &ir.Grad{At: at, X: w})),
			contract(p, &ir.Dot{At: at, A: t.X, B: n}, w), nil
	case *ir.Lap:
		return ibp(dim, &ir.Div{At: at, X: &ir.Grad{At: at, X: t.X}}, w)
	case *ir.Partial: // ∫ ∂_k Y·w = −∫ Y·∂_k w + ∫_∂Ω n_k Y·w
		return ir.Neg(p, contract(p, t.X, &ir.Partial{At: at, X: w, Axis: t.Axis})),
			mulOf(p, &ir.Comp{At: at, X: n, I: t.Axis}, contract(p, t.X, w)), nil
	case *ir.Grad: // ∫ ∇S·w = −∫ S·∇·w + ∫_∂Ω S·(w n)
		return ir.Neg(p, contract(p, t.X, &ir.Div{At: at, X: w})),
			contract(p, t.X, &ir.Dot{At: at, A: w, B: n}), nil
	case *ir.Dot:
		if !ir.HasRole(t.A, ir.Trial) && t.A.Rank() == 1 && t.B.Rank() == 1 {
			return ibp(dim, t.B, mulOf(p, w, t.A))
		}
	}
	return nil, nil, &UnsupportedError{p, fmt.Sprintf("cannot integrate this %s term by parts", nodeName(t))}
}

// conormal is the flux q of one second-order term: ∫_∂Ω bnd = −∫_∂Ω q·w,
// read off by pairing with unit test values.
func conormal(dim int, t ir.Expr) (ir.Expr, error) {
	p := t.Pos()
	if t.Rank() == 0 {
		_, b, err := ibp(dim, t, ir.Int(p, 1))
		if err != nil {
			return nil, err
		}
		return Simplify(ir.Neg(p, b), dim), nil
	}
	el := make([]ir.Expr, dim)
	for k := range el {
		unit := make([]ir.Expr, dim)
		for i := range unit {
			unit[i] = ir.Int(p, 0)
		}
		unit[k] = ir.Int(p, 1)
		_, b, err := ibp(dim, t, &ir.Vec{At: ir.At{P: p}, Elems: unit})
		if err != nil {
			return nil, err
		}
		el[k] = ir.Neg(p, b)
	}
	return Simplify(&ir.Vec{At: ir.At{P: p}, Elems: el}, dim), nil
}

// StabTerm is one equation's stabilisation term ±Σ_K (τ R, P v)_K.
type StabTerm struct {
	For      int
	Sign     int // +1 for SUPG and GLS, −1 for VMS
	Tau      *ir.Sym
	Residual ir.Expr // R(u_h) = L u_h − f
	TestOp   ir.Expr // a·∇v (SUPG), L v (GLS) or L* v (VMS)
}

// Integrand is Sign · τ · R · (P v), the term's contribution to the cell
// integrand.
func (s StabTerm) Integrand(dim int) ir.Expr {
	p := s.Residual.Pos()
	return Simplify(mulOf(p, ir.Int(p, int64(s.Sign)), s.Tau, contract(p, s.Residual, s.TestOp)), dim)
}

// Stabilise derives the stabilisation terms of a residual-based method from
// the variational multiscale split u = u_h + u′ with the fine-scale model
// u′ ≈ −τ R(u_h) (Hughes 1995; Hughes, Feijóo, Mazzei & Quincy 1998,
// CMAME 166):
//
//	SUPG: + Σ_K (τ R(u_h), L_A v_h)_K   (Brooks & Hughes 1982, CMAME 32)
//	GLS:  + Σ_K (τ R(u_h), L v_h)_K     (Hughes, Franca & Hulbert 1989, CMAME 73)
//	VMS:  − Σ_K (τ R(u_h), L* v_h)_K    (Hughes 1995, CMAME 127)
//
// row by row of the block operator with the block-diagonal τ of each
// equation, so that for a system the pressure-stabilising and grad–div
// terms follow from the coupling terms of the operator.
func Stabilise(m *Model, meth Method, split []Split, adj []ir.Expr) []StabTerm {
	var out []StabTerm
	for k, eq := range m.Equations {
		i := eq.For
		p := eq.Pos
		var op ir.Expr
		sign := 1
		switch meth {
		case SUPG:
			first := split[k].FirstOrder(m.Dim)
			if first == nil {
				continue
			}
			op = Simplify(toTest(first), m.Dim)
		case GLS:
			op = Simplify(toTest(eq.Written), m.Dim)
		case VMS:
			op = adj[i]
			sign = -1
		default:
			return nil
		}
		if ir.IsZero(op) {
			continue
		}
		out = append(out, StabTerm{
			For:      i,
			Sign:     sign,
			Tau:      m.TauSym[i],
			Residual: residual(m, eq, p),
			TestOp:   op,
		})
	}
	return out
}

func residual(m *Model, eq *Equation, p source.Pos) ir.Expr {
	return Simplify(ir.Sub(p, eq.Written, eq.Source), m.Dim)
}

// highestOrderFactor splits a product into the factor with the highest
// derivative order on the unknown (the first of them) and the others;
// for a product linear in the unknown it is trialFactor.
func highestOrderFactor(m *ir.Mul) (field ir.Expr, rest []ir.Expr) {
	best, at := -1, -1
	for i, f := range m.Factors {
		if !ir.HasRole(f, ir.Trial) {
			continue
		}
		if o, _ := derivOrder(f); o > best {
			best, at = o, i
		}
	}
	if at < 0 {
		return nil, m.Factors
	}
	return m.Factors[at], productExcept(m.P, m.Factors, at)
}
