package render

import (
	"fmt"
	"strings"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
)

// The stages of a nonlinear model's derivation: the linearised operator,
// its adjoint and split, the Jacobian of each method's residual form, and
// the Picard linearisation.

func (t *textWriter) incrementList() string {
	var s []string
	for _, u := range t.m.Unknowns {
		s = append(s, t.e(&ir.Field{Name: u.Name, Index: u.Index, Role: ir.Increment, R: u.Rank}))
	}
	return strings.Join(s, ", ")
}

// linearisation prints stages 3 to 5 of a nonlinear model.
func (t *textWriter) linearisation(d *compiler.Derivation) {
	m := d.Model
	lin := d.Linear
	t.printf("\n3. Linearised operator, L′(u)δu = d/dε L(u + εδu)|ε=0 (Gateaux derivative)\n")
	for k, eq := range m.Equations {
		name := m.Unknowns[eq.For].Name
		t.printf("   L′_%s(%s)[%s] = %s\n", name, t.unknownList(), t.incrementList(), t.e(lin.Operator[k]))
	}
	for k, a := range lin.Advection {
		if a != nil {
			t.printf("   advective velocity of the equation for %s (first-order part of L′): a = %s\n", m.Unknowns[m.Equations[k].For].Name, t.e(a))
		}
	}
	t.printf("\n4. Formal adjoint of the linearisation, ∫ L′(u)δu·v = ∫ δu·L′(u)*(v) for δu, v vanishing on ∂Ω\n")
	for i, a := range d.Adjoint {
		t.printf("   L′*_%s(%s) = %s\n", m.Unknowns[i].Name, t.testList(), t.e(a))
	}
	t.printf("\n5. Split of the linearisation by the derivative order on δu\n")
	t.split(lin.Split, "L′")
}

// jacobian prints the Jacobian of one method's residual form, named name.
func (t *textWriter) jacobian(f *compiler.MethodForm, name string) {
	m := t.m
	j := f.Jacobian
	t.printf("   Jacobian J(%s; %s, %s) = d/dε %s(u + εδu; v)|ε=0:\n", t.unknownList(), t.incrementList(), t.testList(), name)
	t.printf("     J = ∫_Ω %s dx", t.e(j.Galerkin))
	for _, b := range j.Boundary {
		t.printf(" + ∫_%s [%s] ds", b.Side, t.e(b.Integrand))
	}
	for _, s := range j.Stab {
		sign := "+"
		if s.Sign < 0 {
			sign = "−"
		}
		u := m.Unknowns[s.For].Name
		first := fmt.Sprintf("%s L′_%s(u)[δu]", t.e(s.Tau), u)
		if s.TauVar != nil {
			first = fmt.Sprintf("%s R_%s + %s", t.e(s.TauVar), u, first)
		}
		t.printf("\n         %s Σ_K (%s, %s)_K", sign, first, t.e(s.TestOp))
		if s.TestVar != nil {
			t.printf(" %s Σ_K (%s R_%s, %s)_K", sign, t.e(s.Tau), u, t.e(s.TestVar))
		}
	}
	if j.Fine != nil {
		t.printf("\n         + Σ_K (%s)_K", t.e(j.Fine))
	}
	if j.Capture != nil {
		t.printf("\n         + Σ_K (%s)_K", t.e(j.Capture))
	}
	t.printf("\n")
	for _, g := range j.Defs {
		t.printf("     %s = %s\n", t.e(g.Sym), t.e(g.Def))
	}
	if len(j.Approximations) == 0 {
		t.printf("     J is the exact derivative of %s: no approximation\n", name)
	}
	for _, a := range j.Approximations {
		t.printf("     approximation: %s\n", a.Text)
	}
	t.notes(j.Notes)
}

// picard prints the Picard linearisation as the last stage.
func (t *textWriter) picard(d *compiler.Derivation, stage int) {
	m := d.Model
	pl := d.Picard
	t.printf("\n%d. Picard linearisation (second choice), L̂(u⁽ᵖʳᵉᵛ⁾)u = f̂\n", stage)
	for k, eq := range m.Equations {
		t.printf("   equation for %s:  %s = %s\n", m.Unknowns[eq.For].Name, t.e(pl.Operators[k]), t.e(pl.Sources[k]))
	}
	for i, tau := range pl.Tau {
		if tau != nil {
			t.printf("   %s = %s\n", t.e(m.TauSym[i]), t.e(tau))
		}
	}
	t.notes(pl.Notes)
}

// JSON.

type jsonNonlinear struct {
	Linearised []jsonRow      `json:"linearised"`
	Advection  []jsonRow      `json:"advection"`
	Split      []jsonSplit    `json:"split"`
	Jacobians  []jsonJacobian `json:"jacobians"`
	Picard     jsonPicard     `json:"picard"`
}

type jsonJacobian struct {
	Method         string         `json:"method"`
	Cell           *Expression    `json:"cell"`
	Boundary       []jsonBoundary `json:"boundary"`
	Terms          []jsonStabJac  `json:"terms"`
	Fine           *Expression    `json:"fine_scale_terms,omitempty"`
	Capture        *Expression    `json:"capture_terms,omitempty"`
	Definitions    []jsonDef      `json:"definitions"`
	Approximations []string       `json:"approximations"`
	Notes          []jsonNote     `json:"notes"`
}

type jsonStabJac struct {
	For           string      `json:"for"`
	Sign          int         `json:"sign"`
	TauVariation  *Expression `json:"tau_variation,omitempty"`
	Linearised    *Expression `json:"residual_variation"`
	TestVariation *Expression `json:"test_variation,omitempty"`
}

type jsonDef struct {
	Symbol     *Expression `json:"symbol"`
	Definition *Expression `json:"definition"`
}

type jsonPicard struct {
	Operators []jsonRow  `json:"operators"`
	Sources   []jsonRow  `json:"sources"`
	Tau       []jsonRow  `json:"tau"`
	Notes     []jsonNote `json:"notes"`
}

func jsonOfNonlinear(d *compiler.Derivation) *jsonNonlinear {
	m := d.Model
	names := namesFor(m)
	lin := d.Linear
	out := &jsonNonlinear{Linearised: []jsonRow{}, Advection: []jsonRow{}, Split: []jsonSplit{}, Jacobians: []jsonJacobian{}}
	for k, eq := range m.Equations {
		name := m.Unknowns[eq.For].Name
		out.Linearised = append(out.Linearised, jsonRow{name, jexpr(lin.Operator[k], names)})
		if a := lin.Advection[k]; a != nil {
			out.Advection = append(out.Advection, jsonRow{name, jexpr(a, names)})
		}
	}
	for _, s := range lin.Split {
		out.Split = append(out.Split, jsonSplit{m.Unknowns[s.For].Name, jexpr(s.Parts[0], names), jexpr(s.Parts[1], names), jexpr(s.Parts[2], names), jexpr(s.Parts[3], names), jexpr(s.Parts[4], names)})
	}
	for _, f := range d.Forms {
		j := f.Jacobian
		if j == nil {
			continue
		}
		jj := jsonJacobian{Method: f.Method.String(), Cell: jexpr(j.CellIntegrand(m.Dim), names), Boundary: []jsonBoundary{}, Terms: []jsonStabJac{},
			Fine: jexpr(j.Fine, names), Capture: jexpr(j.Capture, names), Definitions: []jsonDef{}, Approximations: noteTexts(j.Approximations), Notes: jnotes(j.Notes)}
		for _, b := range j.Boundary {
			jj.Boundary = append(jj.Boundary, jsonBoundary{b.Side, jexpr(b.Integrand, names)})
		}
		for _, s := range j.Stab {
			js := jsonStabJac{For: m.Unknowns[s.For].Name, Sign: s.Sign, Linearised: jexpr(s.ResidualVar, names), TestVariation: jexpr(s.TestVar, names)}
			if s.TauVar != nil {
				js.TauVariation = jexpr(s.TauVar, names)
			}
			jj.Terms = append(jj.Terms, js)
		}
		for _, g := range j.Defs {
			jj.Definitions = append(jj.Definitions, jsonDef{jexpr(g.Sym, names), jexpr(g.Def, names)})
		}
		out.Jacobians = append(out.Jacobians, jj)
	}
	pl := d.Picard
	out.Picard = jsonPicard{Operators: []jsonRow{}, Sources: []jsonRow{}, Tau: []jsonRow{}, Notes: jnotes(pl.Notes)}
	for k, eq := range m.Equations {
		name := m.Unknowns[eq.For].Name
		out.Picard.Operators = append(out.Picard.Operators, jsonRow{name, jexpr(pl.Operators[k], names)})
		out.Picard.Sources = append(out.Picard.Sources, jsonRow{name, jexpr(pl.Sources[k], names)})
	}
	for i, tau := range pl.Tau {
		if tau != nil {
			out.Picard.Tau = append(out.Picard.Tau, jsonRow{m.Unknowns[i].Name, jexpr(tau, names)})
		}
	}
	return out
}

// noteTexts are the texts of notes.
func noteTexts(ns []compiler.Note) []string {
	out := []string{}
	for _, n := range ns {
		out = append(out, n.Text)
	}
	return out
}
