package compiler

import (
	"fmt"

	"github.com/formwright/formwright/compiler/ir"
)

// Nonlinear reports whether the model's discrete problem is nonlinear in
// its unknowns: some operator term is not linear in them, or some τ
// depends on them. Such a model is solved by Newton's method on the
// residual form F(u; v) = 0 (or by the Picard linearisation of Picard).
// previous(u) is a known field, so a model that lags its nonlinearity
// with it is linear.
func (m *Model) Nonlinear() bool {
	return m.operatorNonlinear() || m.captureReadsState()
}

// operatorNonlinear reports whether an operator term or a τ is nonlinear
// in the unknowns (Nonlinear without the capture diffusivities).
func (m *Model) operatorNonlinear() bool {
	for _, eq := range m.Equations {
		for _, t := range additiveTerms(eq.Written) {
			if deg, bad := trialDegree(t); bad != nil || deg > 1 {
				return true
			}
		}
	}
	for _, tau := range m.Tau {
		if tau != nil && ir.HasRole(tau, ir.Trial) {
			return true
		}
	}
	return false
}

// stabiliseNonlinear is Stabilise for a nonlinear operator: the residual
// R(u) = L(u) − f and τ(u) at the state, and the test operator read off
// the linearisation (Linearise) where the linear theory reads the
// operator: SUPG L′_A(u) v, GLS L′(u) v, VMS −L′(u)* v.
func stabiliseNonlinear(m *Model, meth Method, lin *Linearisation) []StabTerm {
	var out []StabTerm
	for k, eq := range m.Equations {
		i := eq.For
		if m.TauSym[i] == nil {
			continue // no τ: the method cannot be derived (Model.CheckMethod)
		}
		var op ir.Expr
		sign := 1
		switch meth {
		case SUPG:
			part := lin.Split[k].FirstOrder(m.Dim)
			if part == nil {
				continue
			}
			op = Simplify(withRole(part, ir.Increment, ir.Test), m.Dim)
		case GLS:
			op = Simplify(withRole(lin.Operator[k], ir.Increment, ir.Test), m.Dim)
		case VMS:
			op = lin.Adjoint[i]
			sign = -1
		default:
			return nil
		}
		if ir.IsZero(op) {
			continue
		}
		out = append(out, StabTerm{For: i, Sign: sign, Tau: m.TauSym[i], Residual: residual(m, eq, eq.Pos), TestOp: op})
	}
	return out
}

// JacobianOptions choose the approximations of a derived Jacobian. The
// zero value asks for the exact derivative of the residual form.
type JacobianOptions struct {
	// FreezeTau holds τ at the iterate: the terms of δτ are left out.
	FreezeTau bool
	// FreezeTest holds the test operator of the stabilisation terms at
	// the iterate: the terms of δ(P v) are left out.
	FreezeTest bool
}

// Definition is a symbol that a derived form uses with its definition
// (here the Gateaux derivatives δτ and δu′).
type Definition struct {
	Sym *ir.Sym
	Def ir.Expr
}

// StabJacobian is the derivative of one stabilisation term
// Sign·Σ_K (τ R, P v)_K:
//
//	Sign·Σ_K (δτ R + τ δR, P v)_K + Sign·Σ_K (τ R, δ(P v))_K
//
// with δR = L′(u)δu the linearised operator.
type StabJacobian struct {
	For  int
	Sign int
	Tau  *ir.Sym
	// TauVar is δτ (a Gateaux symbol), nil when τ does not depend on the
	// unknowns or is frozen.
	TauVar *ir.Sym
	// Residual is R(u), ResidualVar δR = L′(u)δu, TestOp P v and TestVar
	// δ(P v) (nil when the test operator does not depend on the unknowns
	// or is frozen).
	Residual, ResidualVar ir.Expr
	TestOp, TestVar       ir.Expr
}

// Integrand is the term's contribution to the cell integrand of J.
func (s StabJacobian) Integrand(dim int) ir.Expr {
	p := s.Residual.Pos()
	sign := ir.Int(p, int64(s.Sign))
	parts := []ir.Expr{ir.Prod(p, sign, s.Tau, contract(p, s.ResidualVar, s.TestOp))}
	if s.TauVar != nil {
		parts = append(parts, ir.Prod(p, sign, s.TauVar, contract(p, s.Residual, s.TestOp)))
	}
	if s.TestVar != nil {
		parts = append(parts, ir.Prod(p, sign, s.Tau, contract(p, s.Residual, s.TestVar)))
	}
	return Simplify(ir.Sum(p, parts...), dim)
}

// JacobianForm is the derived Jacobian of one method's residual form,
//
//	J(u; δu, v) = d/dε F(u + εδu; v)|ε=0,
//
// term by term: the Galerkin part, the boundary integrals, the
// stabilisation terms and the fine-scale terms of VMS.
type JacobianForm struct {
	Options  JacobianOptions
	Galerkin ir.Expr // cell integrand of the Galerkin part
	Boundary []BoundaryPart
	Stab     []StabJacobian
	Fine     ir.Expr // derivative of MethodForm.Cross (nil when none)
	// Capture is the derivative of the discontinuity-capturing terms,
	// Σ_K (κ_dc ∇δu + δκ_dc ∇u, ∇v)_K (nil when none).
	Capture ir.Expr
	// Defs are the Gateaux symbols the terms use: δτ and δu′.
	Defs []*Definition
	// Approximations says where J differs from the exact derivative of F
	// (empty: it is exact).
	Approximations []Note
	Notes          []Note
}

// CellIntegrand is the whole cell integrand of J.
func (j *JacobianForm) CellIntegrand(dim int) ir.Expr {
	p := j.Galerkin.Pos()
	parts := []ir.Expr{j.Galerkin}
	for _, s := range j.Stab {
		parts = append(parts, s.Integrand(dim))
	}
	if j.Fine != nil {
		parts = append(parts, j.Fine)
	}
	if j.Capture != nil {
		parts = append(parts, j.Capture)
	}
	return Simplify(ir.Sum(p, parts...), dim)
}

// deriveJacobian derives J(u; δu, v) for one method's form: the Gateaux
// derivative (gateaux) of every part of the residual form in the direction
// of the increments δu, previous(·) held. τ and the fine scales u′ = −τR,
// which depend on u, differentiate to the Gateaux symbols δτ and δu′,
// whose definitions are derived too; opts leaves out the δτ terms or those
// of the test operator.
func deriveJacobian(m *Model, d *Derivation, f *MethodForm, opts JacobianOptions) (*JacobianForm, error) {
	j := &JacobianForm{Options: opts}
	fieldDir := fieldDirection(ir.Trial, ir.Increment)
	plain := direction{Field: fieldDir, dim: m.Dim}
	defs := map[string]*Definition{}
	var order []string
	define := func(of *ir.Sym, def ir.Expr) *ir.Sym {
		name := "delta_" + of.Name
		if g, ok := defs[name]; ok {
			return g.Sym
		}
		g := &Definition{Sym: &ir.Sym{At: of.At, Name: name, Kind: ir.Gateaux, R: of.R, Deps: of.Deps, Of: of}, Def: def}
		defs[name] = g
		order = append(order, name)
		return g.Sym
	}
	tauVar := map[string]*ir.Sym{}
	frozenTau := false
	for i, ts := range m.TauSym {
		if ts == nil || !ir.HasRole(m.Tau[i], ir.Trial) {
			continue
		}
		if opts.FreezeTau {
			// An approximation only where the form has the τ.
			for _, s := range f.Stab {
				frozenTau = frozenTau || s.Tau == ts
			}
			continue
		}
		def := Simplify(gateaux(m.Tau[i], plain), m.Dim)
		if !ir.IsZero(def) {
			tauVar[ts.Name] = define(ts, def)
		}
	}
	fineDefs := map[string]ir.Expr{}
	for _, fs := range f.Fine {
		fineDefs[fs.Sym.Name] = fs.Def
	}
	var full direction
	full = direction{Field: fieldDir, dim: m.Dim, Sym: func(s *ir.Sym) ir.Expr {
		switch s.Kind {
		case ir.Tau:
			if g := tauVar[s.Name]; g != nil {
				return g
			}
		case ir.FineScale:
			def, ok := fineDefs[s.Name]
			if !ok {
				return nil
			}
			dd := Simplify(gateaux(def, full), m.Dim)
			if ir.IsZero(dd) {
				return nil
			}
			return define(s, dd)
		case ir.Capture:
			def := m.captureDefinition(s)
			if def == nil {
				return nil
			}
			dd := Simplify(gateaux(def, full), m.Dim)
			if ir.IsZero(dd) {
				return nil
			}
			return define(s, dd)
		}
		return nil
	}}
	g := d.Galerkin
	j.Galerkin = Simplify(gateaux(ir.Sub(g.Bilinear.Pos(), g.Bilinear, g.Source), full), m.Dim)
	for _, b := range g.Boundary {
		if in := Simplify(gateaux(b.Integrand, full), m.Dim); !ir.IsZero(in) {
			j.Boundary = append(j.Boundary, BoundaryPart{Side: b.Side, Integrand: in})
		}
	}
	frozenTest, frozenStep := false, false
	for _, s := range f.Stab {
		sj := StabJacobian{For: s.For, Sign: s.Sign, Tau: s.Tau, Residual: s.Residual, TestOp: s.TestOp,
			ResidualVar: Simplify(gateaux(s.Residual, plain), m.Dim), TauVar: tauVar[s.Tau.Name]}
		// In a transient model R holds ∂ₜu, which one backward Euler step
		// turns into (u − uⁿ)/Δt: the terms where R multiplies δτ or δ(P v)
		// would need uⁿ inside the Jacobian's coefficients.
		stepped := ir.Contains(s.Residual, func(e ir.Expr) bool { _, ok := e.(*ir.TimeDeriv); return ok })
		if stepped && sj.TauVar != nil {
			sj.TauVar, frozenStep = nil, true
		}
		if tv := Simplify(gateaux(s.TestOp, plain), m.Dim); !ir.IsZero(tv) {
			switch {
			case opts.FreezeTest:
				frozenTest = true
			case stepped:
				frozenStep = true
			default:
				sj.TestVar = tv
			}
		}
		j.Stab = append(j.Stab, sj)
	}
	if f.Cross != nil {
		if fv := Simplify(gateaux(f.Cross, full), m.Dim); !ir.IsZero(fv) {
			j.Fine = fv
		}
	}
	j.Capture = captureJacobian(m, f.Capture, full)
	// Keep the definitions the terms use, directly or through another one.
	used := map[string]bool{}
	var mark func(e ir.Expr)
	mark = func(e ir.Expr) {
		if e == nil {
			return
		}
		ir.Inspect(e, func(x ir.Expr) bool {
			if s, ok := x.(*ir.Sym); ok && s.Kind == ir.Gateaux && !used[s.Name] {
				used[s.Name] = true
				mark(defs[s.Name].Def)
			}
			return true
		})
	}
	mark(j.Galerkin)
	mark(j.Fine)
	mark(j.Capture)
	for _, b := range j.Boundary {
		mark(b.Integrand)
	}
	for _, s := range j.Stab {
		if s.TauVar != nil {
			mark(s.TauVar)
		}
	}
	for _, name := range order {
		if used[name] {
			j.Defs = append(j.Defs, defs[name])
		}
	}
	// What the Jacobian leaves out, and why that is acceptable.
	if frozenTau {
		j.Approximations = append(j.Approximations, newNote(Warning, `$\tau$ is frozen at the iterate: the terms $\pm\sum_K (\delta\tau\, R, P v)_K$ are left out of $J$ (they vanish with the residual, so the solution is the same, but Newton converges linearly)`))
	}
	if frozenTest {
		j.Approximations = append(j.Approximations, newNote(Warning, `the test operator $P$ of the stabilisation terms is frozen at the iterate: the terms $\pm\sum_K (\tau R, \delta(P v))_K$ are left out of $J$ (they vanish with the residual, so the solution is the same, but Newton converges linearly)`))
	}
	if frozenStep {
		j.Approximations = append(j.Approximations, newNote(Warning, `the model is transient: $R$ holds $\partial_t u$, which a backward Euler step replaces by $(u - u^n)/\Delta t$, and the kernels of one step read the iterate but not the old level $u^n$; so the terms $\pm\sum_K (\delta\tau\, R, P v)_K$ and $\pm\sum_K (\tau R, \delta(P v))_K$ are left out of $J$ ($\tau$ and the test operator frozen at the iterate; they vanish with the residual, so the solution is the same, but Newton converges linearly)`))
	}
	for _, eq := range m.Equations {
		if ir.HasRole(eq.Written, ir.Previous) {
			j.Approximations = append(j.Approximations, newNote(Warning, `previous(\ldots) in the equation for %s is an explicit lag in the model: $J$ holds it at the iterate and leaves out the derivative through it, so Newton converges linearly`, tnList([]string{m.Unknowns[eq.For].Name})))
		}
	}
	if readsNormOfState(m) && !opts.FreezeTau {
		j.Notes = append(j.Notes, newNote(Assumption, `$\tau$ reads the norm of an unknown, which has no derivative where the unknown vanishes: there $\delta|a| = a\cdot\delta a/|a|$ is taken as 0 (a subgradient), written $\mathrm{sign}(|a|)\,(a\cdot\delta a)/(1 + |a| - \mathrm{sign}(|a|))$`))
	}
	return j, nil
}

// readsNormOfState reports whether some τ applies norm(·) to an
// expression of the unknowns.
func readsNormOfState(m *Model) bool {
	for _, t := range m.Tau {
		if t != nil && ir.Contains(t, func(e ir.Expr) bool {
			c, ok := e.(*ir.Call)
			return ok && c.Fn == ir.Norm && ir.HasRole(c.Args[0], ir.Trial)
		}) {
			return true
		}
	}
	return false
}

// linearisationNotes are the notes on the linearisation stage.
func linearisationNotes(m *Model, lin *Linearisation) []Note {
	var notes []Note
	add := func(k NoteKind, f string, a ...any) { notes = append(notes, newNote(k, f, a...)) }
	what := `the operator is nonlinear in the unknowns`
	if onlyCaptureNonlinear(m) {
		what = `the operator is linear, but the discontinuity-capturing diffusivity reads the unknowns`
	}
	add(Assumption, `%s: the discrete problem is the residual form $F(u; v) = 0$, solved by Newton's method with the Jacobian $J(u; \delta u, v) = \mathrm{d}/\mathrm{d}\varepsilon\,F(u + \varepsilon\delta u; v)|_{\varepsilon=0}$ (Dennis \& Schnabel 1983); the linearised operator $L'(u)\delta u = \mathrm{d}/\mathrm{d}\varepsilon\,L(u + \varepsilon\delta u)|_{\varepsilon=0}$ is the Gateaux derivative, computed symbolically`, what)
	for k, a := range lin.Advection {
		if a != nil && ir.HasRole(a, ir.Trial) {
			add(Assumption, `the advective velocity of the equation for $%s$ is read off the first-order part of $L'$: it depends on the unknowns, so SUPG, GLS and VMS advect the test function with it at $u_h$`, tn(m.Unknowns[m.Equations[k].For].Name))
		}
	}
	for _, eq := range m.Equations {
		if ir.HasRole(eq.Written, ir.Previous) {
			add(Warning, `the equation for $%s$ also reads previous(\ldots): the linearisation holds it fixed (an explicit lag), so Newton converges linearly`, tn(m.Unknowns[eq.For].Name))
		}
	}
	return notes
}

// LowerNonlinear lowers one method's residual form and its Jacobian to
// the two forms of ir.NonlinearForm. The state u becomes the iterate u_k
// (FieldD with Role Previous) and the increment δu the trial function; the
// fine-scale and Gateaux symbols are substituted by their definitions.
func (d *Derivation) LowerNonlinear(meth Method) (*ir.NonlinearForm, error) {
	m := d.Model
	if d.Linear == nil {
		return nil, fmt.Errorf("model %s is linear in its unknowns: lower it with Lower", m.Name)
	}
	form := d.form(meth)
	if form == nil {
		return nil, fmt.Errorf("method %s was not derived", meth)
	}
	l := newLowerer(m)
	l.newton = true
	for _, fs := range form.Fine {
		l.fine[fs.Sym.Name] = fs.Def
	}
	for _, g := range form.Jacobian.Defs {
		l.fine[g.Sym.Name] = g.Def
	}
	p := m.Equations[0].Pos
	residual := []ir.Expr{d.Galerkin.Bilinear, ir.Neg(p, d.Galerkin.Source)}
	for _, s := range form.Stab {
		residual = append(residual, s.Integrand(m.Dim))
	}
	if form.Cross != nil {
		residual = append(residual, form.Cross)
	}
	if c := captureIntegrand(m, form.Capture); c != nil {
		residual = append(residual, c)
	}
	j := form.Jacobian
	step := &ir.LoweredForm{Method: meth.String(), Dim: m.Dim}
	for _, u := range m.Unknowns {
		step.Unknowns = append(step.Unknowns, ir.LoweredUnknown{Name: u.Name, Rank: u.Rank, Element: u.Element, Constraint: m.IsConstraint(u.Index)})
	}
	in, err := l.collect(Simplify(ir.Sum(p, j.CellIntegrand(m.Dim), ir.Sum(p, residual...)), m.Dim), ir.Domain{})
	if err != nil {
		return nil, err
	}
	step.Integrals = append(step.Integrals, in)
	for _, side := range m.ConditionParts() {
		var parts []ir.Expr
		for _, b := range d.Galerkin.Boundary {
			if b.Side == side {
				parts = append(parts, b.Integrand)
			}
		}
		for _, b := range j.Boundary {
			if b.Side == side {
				parts = append(parts, b.Integrand)
			}
		}
		if len(parts) == 0 {
			continue
		}
		in, err := l.collect(Simplify(ir.Sum(p, parts...), m.Dim), ir.Domain{Side: side})
		if err != nil {
			return nil, err
		}
		step.Integrals = append(step.Integrals, in)
	}
	l.conditions(step)
	if d.recovers(meth) {
		recoverSecondDerivatives(step, m.Dim)
	}
	step.MaxDerivative = maxDeriv(step.Integrals)
	nf := &ir.NonlinearForm{}
	for _, a := range j.Approximations {
		nf.Approximations = append(nf.Approximations, a.Text)
	}
	res, jac := *step, *step
	res.Integrals, jac.Integrals = nil, nil
	for _, in := range step.Integrals {
		if len(in.Linear) > 0 {
			res.Integrals = append(res.Integrals, ir.Integral{Domain: in.Domain, Linear: in.Linear})
		}
		if len(in.Bilinear) > 0 {
			jac.Integrals = append(jac.Integrals, ir.Integral{Domain: in.Domain, Bilinear: in.Bilinear})
		}
	}
	res.MaxDerivative, jac.MaxDerivative = maxDeriv(res.Integrals), maxDeriv(jac.Integrals)
	nf.Residual, nf.Jacobian = &res, &jac
	return nf, nil
}

// form returns the derived form of a method, or nil.
func (d *Derivation) form(meth Method) *MethodForm {
	for i := range d.Forms {
		if d.Forms[i].Method == meth {
			return &d.Forms[i]
		}
	}
	return nil
}
