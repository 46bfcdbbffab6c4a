package compiler

import (
	"fmt"
	"slices"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang"
)

// Discontinuity capturing.
//
// Residual-based stabilisation (SUPG, GLS, VMS) removes the global
// oscillations of the Galerkin method but still over- and undershoots near
// sharp interior and boundary layers. A discontinuity-capturing (DC) term
// adds, inside each cell, a diffusivity that is proportional to the local
// residual and so vanishes with it: it is consistent (up to the
// regularisation floor, and on P1 up to the second-order part the residual
// loses inside each cell), but nonlinear, since it reads the discrete
// solution. The model states the diffusivity,
//
//	capture for U = EXPR
//
// where EXPR may read residual(U), the strong residual R(u_h) = L u_h − f
// of U's equation, and the unknown itself. The compiler adds
//
//	+ Σ_K (κ_dc ∇u_h, ∇v_h)_K
//
// (κ_dc a scalar, or for a scalar unknown a d×d tensor such as the
// crosswind projection) to the form of every stabilised method of the
// model, derives it, and linearises it for Newton's method exactly: the
// Jacobian holds Σ_K (κ_dc ∇δu + δκ_dc ∇u, ∇v)_K with δκ_dc the Gateaux
// derivative of the definition, residual included. The library module
// capturing (stdlib/modules/capturing.fw) has the published
// diffusivities, with the smooth regularisation that lets Newton's method
// converge. A Picard model (PicardModel) lags κ_dc at the previous
// iterate; solve takes one such step before Newton's method.
//
// References (formulas, and the titles below, recalled from memory, as
// written in the module):
// R. Codina, A discontinuity-capturing crosswind-dissipation for the
// finite element solution of the convection-diffusion equation, Comput.
// Methods Appl. Mech. Engrg. 110 (1993) 325–342; T.E. Tezduyar & Y.J. Park,
// Discontinuity-capturing finite element formulations for nonlinear
// convection-diffusion-reaction equations, CMAME 59 (1986) 307–325;
// Y. Bazilevs, V.M. Calo, T.E. Tezduyar & T.J.R. Hughes, YZβ
// discontinuity capturing for advection-dominated processes with
// application to arterial drug delivery, Int. J. Numer. Meth. Fluids 54
// (2007) 593–608.

// CaptureTerm is the discontinuity-capturing term of one equation in one
// method's form: Σ_K (κ_dc ∇u, ∇v)_K.
type CaptureTerm struct {
	For   int
	Kappa *ir.Sym // κ_dc, defined by Model.Capture[For]
}

// Integrand is the term's cell integrand: κ ∇u·∇v for a scalar unknown
// (with a tensor κ, (κ∇u)·∇v), κ ∇u:∇v for a vector unknown.
func (c CaptureTerm) Integrand(m *Model) ir.Expr {
	p := c.Kappa.Pos()
	at := ir.At{P: p}
	gu := &ir.Grad{At: at, X: m.Trial(c.For)}
	gv := &ir.Grad{At: at, X: m.Test(c.For)}
	var flux ir.Expr
	if c.Kappa.R == 2 {
		flux = &ir.Dot{At: at, A: c.Kappa, B: gu}
	} else {
		flux = mulOf(p, c.Kappa, gu)
	}
	return Simplify(contract(p, flux, gv), m.Dim)
}

// HasCapture reports whether some equation has a discontinuity-capturing
// term.
func (m *Model) HasCapture() bool {
	return slices.ContainsFunc(m.Capture, func(e ir.Expr) bool { return e != nil })
}

// captureTerms are the capture terms of one method's form: one per
// equation with a capture statement, for every stabilised method (the
// Galerkin form has none: DC is a complement of residual-based
// stabilisation, not a replacement for it).
func captureTerms(m *Model, meth Method) []CaptureTerm {
	if meth == Galerkin {
		return nil
	}
	var out []CaptureTerm
	for _, eq := range m.Equations {
		if s := m.captureSym(eq.For); s != nil {
			out = append(out, CaptureTerm{For: eq.For, Kappa: s})
		}
	}
	return out
}

func (m *Model) captureSym(i int) *ir.Sym {
	if i < len(m.CaptureSym) {
		return m.CaptureSym[i]
	}
	return nil
}

// captureDefinition returns the definition of a capture symbol, or nil.
func (m *Model) captureDefinition(s *ir.Sym) ir.Expr {
	for i, cs := range m.CaptureSym {
		if cs != nil && cs.Name == s.Name {
			return m.Capture[i]
		}
	}
	return nil
}

// captureIntegrand is the sum of the capture terms' integrands (nil when
// there are none).
func captureIntegrand(m *Model, terms []CaptureTerm) ir.Expr {
	if len(terms) == 0 {
		return nil
	}
	var parts []ir.Expr
	for _, c := range terms {
		parts = append(parts, c.Integrand(m))
	}
	return Simplify(ir.Sum(parts[0].Pos(), parts...), m.Dim)
}

// captureNotes are the notes on the capture terms of one method.
func captureNotes(m *Model, f *MethodForm) []Note {
	if len(f.Capture) == 0 {
		return nil
	}
	var notes []Note
	add := func(k NoteKind, s string, a ...any) { notes = append(notes, newNote(k, s, a...)) }
	for _, c := range f.Capture {
		u := tn(m.Unknowns[c.For].Name)
		add(Assumption, `discontinuity capturing for $%s$: the term $\sum_K (\kappa_{\mathrm{dc}}\,\nabla %s, \nabla v)_K$ is added to the stabilised form, with the diffusivity of the model's capture statement, which reads the residual $R_{%s}(u_h)$ and so vanishes where the discrete solution satisfies the equation (consistent, but nonlinear in $%s$); residual-based discontinuity capturing after Hughes, Mallet \& Mizukami 1986, Tezduyar \& Park 1986 and Codina 1993`, u, u, u, u)
		if m.IsSimplexP1() && hasSecondOrder(m, c.For) {
			add(Warning, `on P1 the residual in the capture diffusivity loses its second-order part inside each cell, as the residual of the stabilisation terms does`)
		}
	}
	add(Assumption, `the capture term is differentiated exactly for Newton's method, $\delta\kappa_{\mathrm{dc}}$ included; a diffusivity that divides by $|\nabla u|$ or takes $|R|$ must be regularised ($(|\nabla u|^2 + \varepsilon^2)^{1/2}$ and $(R^2 + \varepsilon_R^2)^{1/2}$, as the library module capturing does) so that its derivative exists everywhere`)
	return notes
}

// hasSecondOrder reports whether the equation for unknown i has a term of
// derivative order two or more.
func hasSecondOrder(m *Model, i int) bool {
	for _, eq := range m.Equations {
		if eq.For != i {
			continue
		}
		for _, t := range additiveTerms(eq.Written) {
			if o, _ := derivOrder(t); o >= 2 {
				return true
			}
		}
	}
	return false
}

// checkCapture reads the capture statements: at most one per unknown,
// after its equation; the value a scalar, or for a scalar unknown a d×d
// tensor; residual(U) may appear in it. A stabilised method must be
// derived (the term belongs to the stabilised forms), and the model must
// be steady (the residual of a transient model holds ∂ₜu, which a time
// step replaces by a difference the capture diffusivity cannot see yet).
func (c *checker) checkCapture(f *lang.File) {
	m := c.m
	m.Capture = make([]ir.Expr, len(m.Unknowns))
	m.CaptureSym = make([]*ir.Sym, len(m.Unknowns))
	for _, s := range f.Stmts {
		s, ok := s.(*lang.CaptureStmt)
		if !ok {
			continue
		}
		u := c.lookupUnknown(s.For)
		if u == nil {
			continue
		}
		if m.Capture[u.Index] != nil {
			c.errorf(s.For.Pos, s.For.End, "", "second capture statement for %q", u.Name)
			continue
		}
		eq := c.equationFor(u.Index)
		if eq == nil {
			if !c.partial && len(c.errs) == 0 {
				c.errorf(s.For.Pos, s.For.End, fmt.Sprintf("add \"equation for %s: ... = ...\"", u.Name), "capture for %q, which has no equation", u.Name)
			}
			continue
		}
		if ir.Contains(eq.Written, func(e ir.Expr) bool { _, ok := e.(*ir.TimeDeriv); return ok }) {
			c.errorf(s.Pos(), s.For.End, "discontinuity capturing is available for steady models", "capture in a transient model")
			continue
		}
		save := c.residualFor
		c.residualFor = true
		v := c.exprWith(s.Value, false)
		c.residualFor = save
		if v == nil {
			continue
		}
		switch {
		case v.Rank() == 0:
		case v.Rank() == 2 && u.Rank == 0:
		default:
			c.errorf(s.Value.Pos(), s.Value.End(), "the capture diffusivity is a scalar, or for a scalar unknown a matrix (an anisotropic diffusivity)", "capture diffusivity must be a scalar, not a %s", rankName(v.Rank()))
			continue
		}
		if !slices.ContainsFunc(m.Methods, func(x Method) bool { return x != Galerkin }) && !c.partial {
			c.errorf(s.Pos(), s.For.End, "add \"stabilise supg\" (or gls, vms): the capture term is added to the stabilised forms", "capture without a stabilised method")
			continue
		}
		m.Capture[u.Index] = v
		m.CaptureSym[u.Index] = &ir.Sym{At: ir.At{P: s.For.Pos}, Name: "kappa_dc_" + u.Name, Kind: ir.Capture, R: v.Rank()}
	}
}

// equationFor returns the checked equation of unknown i, or nil.
func (c *checker) equationFor(i int) *Equation {
	for _, eq := range c.m.Equations {
		if eq.For == i {
			return eq
		}
	}
	return nil
}

// residualCall is residual(U) in a capture statement: the residual
// R(u) = L u − f of U's equation, with the unknown as the state.
func (c *checker) residualCall(e *lang.Call) ir.Expr {
	if !c.residualFor {
		c.errorf(e.FuncPos, e.End(), "residual(U) is read by a capture diffusivity (capture for U = ...)", "residual(...) is not allowed here")
		return nil
	}
	if len(e.Args) != 1 {
		c.errorf(e.FuncPos, e.End(), "", "residual takes 1 argument, not %d", len(e.Args))
		return nil
	}
	id, ok := e.Args[0].(*lang.Ident)
	var u *Unknown
	if ok {
		u = c.unknowns[id.Name]
	}
	if u == nil {
		c.errorf(e.Args[0].Pos(), e.Args[0].End(), "", "residual(...) takes the name of an unknown")
		return nil
	}
	eq := c.equationFor(u.Index)
	if eq == nil {
		c.errorf(e.Args[0].Pos(), e.Args[0].End(), "", "%q has no equation", u.Name)
		return nil
	}
	return residual(c.m, eq, e.Pos())
}

// captureJacobian is the Gateaux derivative of the capture terms of a
// form (nil when there are none).
func captureJacobian(m *Model, terms []CaptureTerm, dir direction) ir.Expr {
	in := captureIntegrand(m, terms)
	if in == nil {
		return nil
	}
	if d := Simplify(gateaux(in, dir), m.Dim); !ir.IsZero(d) {
		return d
	}
	return nil
}

// lagCapture evaluates the capture diffusivities of a Picard model at the
// previous iterate: the term becomes Σ_K (κ_dc(u_prev) ∇u, ∇v)_K, linear
// in u (the lagged-diffusivity iteration of the DC literature, e.g.
// Codina 1993).
func lagCapture(pm *Model, pl *PicardLinearisation) {
	if !pm.HasCapture() {
		return
	}
	lagged := make([]ir.Expr, len(pm.Capture))
	for i, c := range pm.Capture {
		if c != nil {
			lagged[i] = withRole(c, ir.Trial, ir.Previous)
		}
	}
	pm.Capture = lagged
	pl.Notes = append(pl.Notes, newNote(Assumption, `the discontinuity-capturing diffusivity is evaluated at the previous iterate, $\kappa_{\mathrm{dc}}(u^{n-1})$, so the capture term is linear in $u$`))
}

// captureReadsState reports whether a capture diffusivity reads the
// unknowns (its residual or gradient), which makes the problem nonlinear.
func (m *Model) captureReadsState() bool {
	for _, c := range m.Capture {
		if c != nil && ir.HasRole(c, ir.Trial) {
			return true
		}
	}
	return false
}

// onlyCaptureNonlinear reports whether a model is nonlinear only through
// its capture diffusivities: its operator and τ are linear in the
// unknowns.
func onlyCaptureNonlinear(m *Model) bool {
	return m.captureReadsState() && !m.operatorNonlinear()
}
