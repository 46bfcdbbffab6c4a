package compiler

import (
	"fmt"
	"slices"
	"strings"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
)

// NoteKind says how a derivation note should be read.
type NoteKind uint8

// Note kinds.
const (
	Assumption NoteKind = iota // a fact the derivation relied on
	Warning                    // an assumption that does not hold exactly here
)

func (k NoteKind) String() string { return [...]string{"assumption", "warning"}[k] }

// Note is a short statement printed with a derivation stage, in two
// renderings of one source: Text (Unicode, for terminals and JSON) and
// TeX (LaTeX prose with inline math), made by newNote from the markup
// described in compiler/notation (notation.Plain).
type Note struct {
	Kind NoteKind
	Text string
	TeX  string
}

// newNote formats markup with args (names passed through notation.TeXName
// or TeXProse by the caller) and renders it both ways.
func newNote(kind NoteKind, markup string, args ...any) Note {
	tex := markup
	if len(args) > 0 {
		tex = fmt.Sprintf(markup, args...)
	}
	return Note{Kind: kind, Text: notation.Plain(tex), TeX: tex}
}

// tn is a model name for note markup math.
func tn(name string) string { return notation.TeXName(name) }

// tnList is a list of names (sides, unknowns) for note prose.
func tnList(names []string) string {
	out := make([]string, len(names))
	for i, n := range names {
		out[i] = notation.TeXProse(n)
		if n == ir.AllParts {
			out[i] = "the whole boundary"
		}
	}
	return strings.Join(out, ", ")
}

// MethodForm is the derived form of one method.
type MethodForm struct {
	Method Method
	Stab   []StabTerm
	// Fine and Cross are the terms of residual-based VMS beyond the linear
	// fine-scale term (fineScaleExpansion): the fine-scale quantities the
	// terms read, and the cell integrand of the terms (cross and Reynolds
	// stress; nil when there are none). Dropped lists the integrands the
	// expansion left out, which the notes explain.
	Fine    []*FineScale
	Cross   ir.Expr
	Dropped []ir.Expr
	// Capture holds the discontinuity-capturing terms (capture.go).
	Capture []CaptureTerm
	// Jacobian is the derivative of the method's residual form, for a
	// nonlinear model (nil for a linear one).
	Jacobian *JacobianForm
	Notes    []Note
}

// Derivation is everything derive prints, stage by stage.
type Derivation struct {
	Model      *Model
	Normalised []ir.Expr // L_i u, simplified (product rules applied)
	Sources    []ir.Expr // f_i
	// Adjoint is (L* v)_i, for a nonlinear model the adjoint of its
	// linearisation, (L′(u)* v)_i.
	Adjoint  []ir.Expr
	Split    []Split
	Galerkin *GalerkinForm
	Forms    []MethodForm
	Notes    []Note // notes on the operator and the Galerkin form
	// Linear is the linearisation of a nonlinear model's operator (nil for
	// a linear model), and Picard its Picard linearisation.
	Linear *Linearisation
	Picard *PicardLinearisation
	// Options are the options the derivation was made with.
	Options DeriveOptions
}

// DeriveOptions configure DeriveWith.
type DeriveOptions struct {
	// Jacobian says which approximations the Jacobian of a nonlinear model
	// makes (none by default).
	Jacobian JacobianOptions
	// Recovery says whether lowering reconstructs the second derivatives
	// the residual loses on linear elements (RecoverAuto by default).
	Recovery Recovery
}

// Derive runs every stage for the methods requested (all of the model's
// when methods is empty), with the exact Jacobian for a nonlinear model.
func Derive(m *Model, methods []Method) (*Derivation, error) {
	return DeriveWith(m, methods, DeriveOptions{})
}

// DeriveWith is Derive with options.
func DeriveWith(m *Model, methods []Method, opts DeriveOptions) (*Derivation, error) {
	d := &Derivation{Model: m, Options: opts}
	for _, eq := range m.Equations {
		d.Normalised = append(d.Normalised, Simplify(eq.Written, m.Dim))
		d.Sources = append(d.Sources, Simplify(eq.Source, m.Dim))
	}
	nonlinear := m.Nonlinear()
	var err error
	if nonlinear {
		if d.Linear, err = Linearise(m); err != nil {
			return nil, err
		}
		d.Adjoint = d.Linear.Adjoint
	} else if d.Adjoint, err = Adjoint(m); err != nil {
		return nil, err
	}
	var solenoidal []string
	for i, a := range d.Adjoint {
		d.Adjoint[i], solenoidal = dropVanishingDivergences(m, a, solenoidal)
	}
	d.Split = SplitOperator(m)
	if d.Galerkin, err = WeakGalerkin(m); err != nil {
		return nil, err
	}
	d.Notes = galerkinNotes(m)
	if len(solenoidal) > 0 {
		d.Notes = append(d.Notes, newNote(Assumption, `the divergence of %s vanishes identically (its definition differentiated and simplified), so the term $-(\nabla\cdot a)\,v$ of the formal adjoint (stage 3) is zero and left out`, strings.Join(solenoidal, " and ")))
	}
	for _, name := range m.FreeConstants() {
		d.Notes = append(d.Notes, newNote(Warning, "$%s$ is fixed only up to a constant: adding a constant to it changes no equation, and no value, Robin or mean condition holds it, so the discrete problem is singular; add a value condition on part of the boundary or the statement ``mean %s = 0''", tn(name), notation.TeXProse(baseName(name))))
	}
	if len(methods) == 0 {
		methods = m.Methods
	}
	if len(methods) == 0 {
		methods = []Method{Galerkin}
	}
	m.FineSym = m.FineSym[:0]
	for _, meth := range methods {
		f := MethodForm{Method: meth}
		if meth != Galerkin {
			if nonlinear {
				f.Stab = stabiliseNonlinear(m, meth, d.Linear)
			} else {
				f.Stab = Stabilise(m, meth, d.Split, d.Adjoint)
			}
			var expNotes []Note
			if meth == VMS {
				x, err := fineScaleExpansion(m)
				if err != nil {
					return nil, err
				}
				f.Fine, f.Cross, f.Dropped, expNotes = x.fine, x.terms, x.dropped, x.notes
				for _, fs := range f.Fine {
					m.FineSym = append(m.FineSym, fs.Sym)
				}
			}
			f.Notes = append(stabNotes(m, meth, d, &f), expNotes...)
			f.Capture = captureTerms(m, meth)
			f.Notes = append(f.Notes, captureNotes(m, &f)...)
		}
		if nonlinear {
			if f.Jacobian, err = deriveJacobian(m, d, &f, opts.Jacobian); err != nil {
				return nil, err
			}
			if d.recovers(meth) {
				f.Jacobian.Approximations = append(f.Jacobian.Approximations, newNote(Warning, `the second derivatives of $u_h$ in $R$ are recovered from the projected gradient $g_h$ of the iterate, and $J$ holds $g_h$ fixed there: it leaves out $\partial g_h/\partial u$, the derivative through the projection (it is not local to a cell). With $J$ alone Newton converges linearly near the solution, at a rate set by the size of the recovered terms; solving directly, the runtime corrects each step toward the exact Jacobian's by directional differences of the residual, recovery included`))
			}
			for _, g := range f.Jacobian.Defs {
				m.FineSym = append(m.FineSym, g.Sym)
			}
		}
		d.Forms = append(d.Forms, f)
	}
	if nonlinear {
		d.Notes = append(d.Notes, linearisationNotes(m, d.Linear)...)
		if d.Picard, err = Picard(m); err != nil {
			d.Notes = append(d.Notes, newNote(Warning, "no Picard linearisation: %s", notation.TeXProse(err.Error())))
		}
	}
	return d, nil
}

func galerkinNotes(m *Model) []Note {
	var notes []Note
	add := func(k NoteKind, f string, a ...any) { notes = append(notes, newNote(k, f, a...)) }
	add(Assumption, "second-order terms are integrated by parts once; first-order terms (including coupling terms such as a pressure gradient) are kept as written")
	for _, u := range m.Unknowns {
		var value, flux, robin, claimed []string
		for _, side := range m.ConditionParts() {
			kind := -1
			for _, bc := range m.BCs {
				if bc.Unknown == u.Index && slices.Contains(bc.Sides, side) {
					kind = int(bc.Kind)
				}
			}
			switch kind {
			case int(ValueBC):
				value = append(value, side)
			case int(FluxBC):
				flux = append(flux, side)
			case int(RobinBC):
				robin = append(robin, side)
			}
			if kind >= 0 {
				claimed = append(claimed, side)
			}
		}
		if len(value) > 0 {
			add(Assumption, "$%s$ is prescribed on %s: the test function vanishes there, so the boundary integral is dropped", tn(u.Name), tnList(value))
		}
		if len(flux) > 0 {
			add(Assumption, "the flux of $%s$ is prescribed on %s: the boundary integral is kept with the given flux in place of $q$", tn(u.Name), tnList(flux))
		}
		if len(robin) > 0 {
			add(Assumption, "a Robin condition on %s for $%s$: the part of the flux proportional to $%s$ enters $B$", tnList(robin), tn(u.Name), tn(u.Name))
		}
		switch {
		case len(claimed) == 0:
			add(Assumption, "no condition for $%s$ anywhere on the boundary: zero flux (the natural condition), so the boundary integral vanishes", tn(u.Name))
		case !slices.Contains(claimed, "all"):
			add(Assumption, "wherever the boundary has no condition for $%s$ (outside %s): zero flux (the natural condition), so the boundary integral vanishes there; solve reports how many facets of the mesh that is", tn(u.Name), tnList(claimed))
		}
	}
	if len(m.Parts) > 0 {
		var defs []string
		for _, p := range m.Parts {
			defs = append(defs, fmt.Sprintf("%s $= %s$", notation.TeXProse(p.Name), partTeX(p.Set)))
		}
		add(Assumption, "boundary parts of the model: %s; a condition in braces holds on the facets whose midpoint satisfies it (a midpoint on a threshold belongs to $\\le$, $\\ge$ and $=$, not to $<$ or $>$)", strings.Join(defs, "; "))
	}
	for _, mc := range m.Means {
		u := tn(m.Unknowns[mc.Unknown].Name)
		val := notation.Expr(mc.Value, notation.LaTeX, notation.Names{})
		add(Assumption, "the mean of $%[1]s$ over $\\Omega$ is prescribed, $\\frac{1}{|\\Omega|} \\int_\\Omega %[1]s\\,\\mathrm{d}x = %[2]s$: $%[1]s$ has no value condition, so the equations fix it only up to a constant. The solver fixes $%[1]s$ at one node, solves, and shifts $%[1]s$ by a constant to this mean", u, val)
	}
	for _, eq := range m.Equations {
		if ir.Contains(eq.Written, func(e ir.Expr) bool { _, ok := e.(*ir.TimeDeriv); return ok }) {
			add(Assumption, "test functions do not depend on time (semi-discretisation in space), so $\\partial_t v = 0$")
			break
		}
	}
	return notes
}

// coefVaries reports whether the unknown-free factors of a term vary in
// space.
func coefVaries(t ir.Expr) bool {
	varies := false
	ir.InspectOnce(t, func(e ir.Expr) bool {
		if s, ok := e.(*ir.Sym); ok && s.Kind == ir.Coefficient && s.Deps.Spatial() {
			varies = true
		}
		if _, ok := e.(*ir.Coord); ok {
			varies = true
		}
		return !varies
	})
	return varies
}

// advectionVelocityDivergence returns, for each advective term of the form
// b·∇u (or (∇u) b for vectors), ∇·b simplified.
func advectionDivergences(m *Model, split []Split) []ir.Expr {
	var out []ir.Expr
	for _, s := range split {
		adv := s.Parts[Advective]
		if adv == nil {
			continue
		}
		for _, t := range additiveTerms(adv) {
			ir.InspectOnce(t, func(e ir.Expr) bool {
				d, ok := e.(*ir.Dot)
				if !ok {
					return true
				}
				var b ir.Expr
				switch {
				case !ir.HasField(d.A) && d.A.Rank() == 1:
					b = d.A
				case !ir.HasField(d.B) && d.B.Rank() == 1:
					b = d.B
				}
				if b != nil {
					out = append(out, Simplify(&ir.Div{At: ir.At{P: b.Pos()}, X: substituteDefs(m, b)}, m.Dim))
				}
				return false
			})
		}
	}
	return out
}

// dropVanishingDivergences replaces by zero each divergence in e of a
// field that holds no unknown and whose divergence, with the given
// coefficients' definitions substituted, simplifies to zero: the formal
// adjoint of a·∇u is −∇·(a v) = −(∇·a)v − a·∇v, and for a solenoidal a
// given in closed form the first term is identically zero. It appends the
// markup of each such field to fields.
func dropVanishingDivergences(m *Model, e ir.Expr, fields []string) (ir.Expr, []string) {
	changed := false
	out := ir.MapUp(e, func(n ir.Expr) ir.Expr {
		d, ok := n.(*ir.Div)
		if !ok || ir.HasField(d.X) {
			return n
		}
		if !ir.IsZero(Simplify(&ir.Div{At: d.At, X: substituteDefs(m, d.X)}, m.Dim)) {
			return n
		}
		changed = true
		f := "$" + notation.Expr(d.X, notation.LaTeX, notation.Names{}) + "$"
		if !slices.Contains(fields, f) {
			fields = append(fields, f)
		}
		return ir.Zero(d.Pos(), 0, m.Dim)
	})
	if !changed {
		return e, fields
	}
	return Simplify(out, m.Dim), fields
}

// substituteDefs replaces coefficient symbols by their definitions, so that
// derivatives of them can be evaluated.
func substituteDefs(m *Model, e ir.Expr) ir.Expr {
	return ir.MapUp(e, func(n ir.Expr) ir.Expr {
		if s, ok := n.(*ir.Sym); ok && s.Kind == ir.Coefficient {
			if c := m.Coef(s.Name); c != nil {
				return substituteDefs(m, c.Def)
			}
		}
		return n
	})
}

func stabNotes(m *Model, meth Method, d *Derivation, f *MethodForm) []Note {
	var notes []Note
	add := func(k NoteKind, f string, a ...any) { notes = append(notes, newNote(k, f, a...)) }
	add(Assumption, `fine scales modelled as $u' \approx -\tau R(u_h)$, $R(u_h) = L u_h - f$; the stabilisation integrals are over cell interiors only`)
	if len(m.Unknowns) > 1 {
		add(Assumption, `$\tau$ is block-diagonal: one $\tau$ per equation (for flow, $\tau_M$ on momentum and $\tau_C$ on continuity)`)
	}
	if d.Linear != nil {
		switch meth {
		case SUPG:
			add(Assumption, `the operator is nonlinear: SUPG takes the first-order part of its linearisation $L'(u_h)$ (its advective and coupling terms, stage 3) on the test function, where the linear theory takes those of $L$; $R$ and $\tau$ are evaluated at $u_h$`)
		case GLS:
			add(Assumption, `the operator is nonlinear: GLS takes its linearisation $L'(u_h)$ on the test function, where the linear theory takes $L$; $R$ and $\tau$ are evaluated at $u_h$`)
		case VMS:
			add(Assumption, `the operator is nonlinear: VMS takes minus the adjoint of its linearisation, $L'(u_h)^*$, on the test function (the first-order term of the fine-scale expansion $L(u_h + u') = L(u_h) + L'(u_h)u' + \ldots$), where the linear theory takes $L^*$`)
		}
	}
	hasDiff, diffVaries := false, false
	for _, s := range d.Split {
		if s.Parts[Diffusive] != nil {
			hasDiff = true
			for _, t := range additiveTerms(m.Equations[indexOfEq(m, s.For)].Written) {
				if o, _ := derivOrder(t); o >= 2 && coefVaries(t) {
					diffVaries = true
				}
			}
		}
	}
	var coupling []string // the coupling terms, in markup math
	split := d.Split
	if d.Linear != nil {
		split = d.Linear.Split
	}
	for _, s := range split {
		if c := s.Parts[Coupling]; c != nil {
			coupling = append(coupling, "$"+notation.Expr(withRole(c, ir.Increment, ir.Trial), notation.LaTeX, notation.Names{})+"$")
		}
	}
	switch meth {
	case SUPG:
		what := "the advective operator acts"
		hasAdv := false
		for _, sp := range split {
			hasAdv = hasAdv || sp.Parts[Advective] != nil
		}
		switch {
		case len(coupling) > 0 && hasAdv:
			what = "the first-order operator acts (advection and the coupling terms " + strings.Join(coupling, " and ") + ", which give the pressure- and continuity-stabilising terms)"
		case len(coupling) > 0:
			what = "the first-order operator acts (here the coupling terms " + strings.Join(coupling, " and ") + ", which give the pressure- and continuity-stabilising terms)"
		}
		if hasDiff && !diffVaries {
			add(Assumption, `$B_D(u', v_h) = 0$ for the $H^1_0$ projector because the diffusivity is constant, so only %s on the test function`, what)
		}
		if diffVaries {
			add(Warning, `the diffusivity varies in space, so $B_D(u', v_h) = 0$ does not hold exactly under the $H^1_0$ projector; SUPG drops a term the VMS form keeps`)
		}
		if !hasDiff && len(coupling) > 0 {
			add(Assumption, `the operator has no diffusive part; %s on the test function`, strings.TrimPrefix(what, "the first-order operator acts "))
		}
	case GLS:
		divs := advectionDivergences(m, d.Split)
		allZero := true
		for _, dv := range divs {
			if !ir.IsZero(dv) {
				allZero = false
			}
		}
		if len(divs) == 0 {
			break
		}
		if allZero {
			add(Assumption, `$B_A(u', v_h) = -B_A(v_h, u')$: the advecting field is divergence-free and $u'$, $v_h$ vanish on the boundary, so the advective part of $L^*$ is $-L_A$ and GLS takes $+L v_h$`)
		} else {
			add(Warning, `the advecting field is not divergence-free ($\nabla\cdot a \neq 0$), so $B_A$ is not antisymmetric: GLS and VMS differ in their advective terms`)
		}
	}
	if meth == VMS && hasDiff {
		if cinv, which := m.InverseEstimate(); cinv > 0 {
			if m.usesInverseEstimate() {
				add(Assumption, `$\tau$ is bounded with the inverse-estimate constant $C_{\mathrm{inv}} = %g$ (%s; $\sup h^2\lVert\Delta v\rVert^2/\lVert\nabla v\rVert^2$, Harari \& Hughes 1992): where $\tau\kappa \le h^2/(2 C_{\mathrm{inv}})$, the negative diffusive term of $L^*$ takes at most half of the Galerkin diffusion, so the VMS form stays coercive (Franca, Frey \& Hughes 1992)`, cinv, notation.TeXProse(which))
			} else {
				add(Warning, `the diffusive part of $L^*$ enters the VMS form with a negative sign, so stability needs $\tau\kappa < h^2/C_{\mathrm{inv}}$, and here $C_{\mathrm{inv}} = %g$ (%s; $\sup h^2\lVert\Delta v\rVert^2/\lVert\nabla v\rVert^2$): a $\tau$ with diffusive limit $h^2/(c \kappa)$ needs $c > C_{\mathrm{inv}}$. The library's tau\_ffh bounds $\tau$ with inverse\_estimate (Franca, Frey \& Hughes 1992)`, cinv, notation.TeXProse(which))
			}
		}
	}
	if (meth == GLS || meth == VMS) && hasDiff && m.IsSimplexP1() {
		if diffVaries {
			add(Assumption, `on affine linear simplices (P1) second derivatives of $v_h$ vanish inside each cell; the diffusivity varies, so of the diffusive part of the test operator its first-order piece remains there (for $-\nabla\cdot(\kappa\nabla v_h)$ that is $-\nabla\kappa\cdot\nabla v_h$)`)
		} else {
			add(Assumption, `on affine linear simplices (P1) second derivatives of $v_h$ vanish inside each cell, and the diffusivity is constant, so the diffusive part of the test operator drops out there`)
		}
	}
	if hasDiff && m.IsSimplexP1() {
		lost := "the diffusive term"
		if diffVaries {
			lost = `the second-derivative part of the diffusive term (a varying diffusivity's first-order piece, such as $-\nabla\kappa\cdot\nabla u_h$, remains)`
		}
		effect := `the stabilising terms do not vanish for the exact solution, and the error they add shrinks only as the mesh resolves the diffusion`
		for _, sp := range split {
			if sp.Parts[Advective] != nil {
				effect = `near element P\'eclet number 1 the $L^2$ rate can fall below 2 until the mesh resolves the diffusion`
			}
		}
		switch {
		case d.recovers(meth):
			add(Assumption, `on P1 the second derivatives of $u_h$ vanish inside each cell, so the strong residual would lose %s; they are reconstructed instead: $\partial_i\partial_j u_h \approx \frac{1}{2}(\partial_j g_{h,i} + \partial_i g_{h,j})$ cell by cell, where $g_h$, continuous and P1, is the recovered gradient of $u_h$ (per component): at each interior node $a$ the lumped-mass $L^2$ projection $g_h(x_a) = \int_\Omega \varphi_a \nabla u_h\,\mathrm{d}x / \int_\Omega \varphi_a\,\mathrm{d}x$, at a boundary node the least-squares linear fit to the interior values nearby. It is computed from the current iterate before each assembly, so the residual is consistent to the order of the recovery (Jansen, Collis, Whiting \& Shakib 1999, CMAME 174). A linear problem iterates until $g_h$ matches $u_h$; switch the recovery off to solve it in one step`, lost)
		case d.Options.Recovery == RecoverAuto && m.Dim == 1:
			add(Warning, `on P1 the strong residual loses %s of $u_h$ inside each cell, so the method is only weakly consistent: %s (Jansen, Collis, Whiting \& Shakib 1999, CMAME 174); in one dimension the second derivatives are not recovered, since with the plain residual and the optimal $\tau$ SUPG is nodally exact for constant coefficients`, lost, effect)
		case d.Options.Recovery == RecoverAuto && m.captures() && m.Dim >= 2:
			add(Warning, `on P1 the strong residual loses %s of $u_h$ inside each cell, so the method is only weakly consistent: %s (Jansen, Collis, Whiting \& Shakib 1999, CMAME 174); the recovery of the second derivatives is not applied together with discontinuity capturing, whose calibration assumes the plain P1 residual`, lost, effect)
		case d.Options.Recovery == RecoverAuto && m.transient():
			add(Warning, `on P1 the strong residual loses %s of $u_h$ inside each cell, so the method is only weakly consistent: %s (Jansen, Collis, Whiting \& Shakib 1999, CMAME 174); the recovery of the second derivatives is not applied to time-stepped models`, lost, effect)
		default:
			add(Warning, `on P1 the strong residual loses %s of $u_h$ inside each cell, so the method is only weakly consistent: %s (Jansen, Collis, Whiting \& Shakib 1999, CMAME 174)`, lost, effect)
		}
	}
	return notes
}

func indexOfEq(m *Model, unknown int) int {
	for k, eq := range m.Equations {
		if eq.For == unknown {
			return k
		}
	}
	return 0
}

// usesInverseEstimate reports whether some τ of the model refers to the
// cell quantity inverse_estimate, directly or through coefficients.
func (m *Model) usesInverseEstimate() bool {
	seen := map[string]bool{}
	var uses func(e ir.Expr) bool
	uses = func(e ir.Expr) bool {
		found := false
		ir.InspectOnce(e, func(x ir.Expr) bool {
			s, ok := x.(*ir.Sym)
			if !ok || found {
				return !found
			}
			switch {
			case s.Kind == ir.CellQuantity && s.Q == ir.InverseEstimate:
				found = true
			case s.Kind == ir.Coefficient && !seen[s.Name]:
				seen[s.Name] = true
				if c := m.Coef(s.Name); c != nil && c.Def != nil {
					found = uses(c.Def)
				}
			}
			return !found
		})
		return found
	}
	for _, t := range m.Tau {
		if t != nil && uses(t) {
			return true
		}
	}
	return false
}

// baseName is an unknown's name without a component index.
func baseName(s string) string {
	for i, r := range s {
		if r == '[' {
			return s[:i]
		}
	}
	return s
}
