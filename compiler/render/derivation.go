package render

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
)

// namesFor picks test-function names: v for a single unknown, v_<name>
// otherwise.
func namesFor(m *compiler.Model) notation.Names {
	n := notation.Names{Test: map[int]string{}}
	if len(m.Unknowns) == 1 {
		n.Test[0] = "v"
	}
	return n
}

type textWriter struct {
	w     io.Writer
	s     notation.Style
	names notation.Names
	m     *compiler.Model
	err   error
}

func (t *textWriter) printf(format string, a ...any) {
	if t.err == nil {
		_, t.err = fmt.Fprintf(t.w, format, a...)
	}
}

func (t *textWriter) e(x ir.Expr) string { return notation.Expr(x, t.s, t.names) }

func (t *textWriter) test(i int) string {
	return notation.Expr(t.m.Test(i), t.s, t.names)
}

func (t *textWriter) trial(i int) string { return notation.Expr(t.m.Trial(i), t.s, t.names) }

func (t *textWriter) unknownList() string {
	var s []string
	for _, u := range t.m.Unknowns {
		s = append(s, t.trial(u.Index))
	}
	return strings.Join(s, ", ")
}

func (t *textWriter) testList() string {
	var s []string
	for _, u := range t.m.Unknowns {
		s = append(s, t.test(u.Index))
	}
	return strings.Join(s, ", ")
}

func (t *textWriter) notes(ns []compiler.Note) {
	for _, n := range ns {
		mark := "·"
		if n.Kind == compiler.Warning {
			mark = "warning:"
		}
		t.printf("     %s %s\n", mark, n.Text)
	}
}

// WriteText prints the derivation as Unicode text, stage by stage.
func WriteText(w io.Writer, d *compiler.Derivation) error {
	m := d.Model
	t := &textWriter{w: w, s: notation.Text, names: namesFor(m), m: m}
	t.printf("derivation of model %s (%s), dimension %d\n", m.Name, m.File, m.Dim)
	for _, u := range m.Unknowns {
		rank := "scalar"
		if u.Rank == 1 {
			rank = "vector"
		}
		t.printf("  unknown %s: %s %s, tested with %s\n", u.Name, rank, u.Element, t.test(u.Index))
	}
	for _, c := range m.Coefs {
		t.printf("  given %s = %s\n", t.e(c.Sym), t.e(c.Def))
	}
	t.printf("\n1. Operator as written, L(%s) = f\n", t.unknownList())
	for k, eq := range m.Equations {
		t.printf("   equation for %s:  %s = %s\n", m.Unknowns[eq.For].Name, t.e(eq.Written), t.e(d.Sources[k]))
	}
	t.printf("\n2. Normalised (product rules applied, like terms collected)\n")
	for k, eq := range m.Equations {
		t.printf("   L_%s = %s\n", m.Unknowns[eq.For].Name, t.e(d.Normalised[k]))
	}
	if d.Linear != nil {
		t.linearisation(d)
	} else {
		t.printf("\n3. Formal adjoint, ∫ L(u)·v = ∫ u·L*(v) for u, v vanishing on ∂Ω\n")
		for i, a := range d.Adjoint {
			t.printf("   L*_%s(%s) = %s\n", m.Unknowns[i].Name, t.testList(), t.e(a))
		}
		t.printf("\n4. Split by derivative order\n")
		t.split(d.Split, "L")
	}
	g := d.Galerkin
	if d.Linear != nil {
		t.printf("\n6. Residual form, Galerkin part: F(%s; %s) = 0\n", t.unknownList(), t.testList())
		t.printf("   F = ∫_Ω %s dx", t.e(compiler.Simplify(ir.Sub(g.Bilinear.Pos(), g.Bilinear, g.Source), m.Dim)))
		for _, b := range g.Boundary {
			t.printf(" + ∫_%s [%s] ds", b.Side, t.e(b.Integrand))
		}
		t.printf("\n")
	} else {
		t.printf("\n5. Galerkin form, B(%s; %s) = F(%s)\n", t.unknownList(), t.testList(), t.testList())
		t.printf("   B = ∫_Ω %s dx", t.e(g.Bilinear))
		for _, b := range g.Boundary {
			t.printf(" + ∫_%s [%s] ds", b.Side, t.e(b.Integrand))
		}
		t.printf("\n   F = ∫_Ω %s dx\n", t.e(g.Source))
		if len(g.Boundary) > 0 {
			t.printf("   (boundary integrands are of B − F: terms without the unknown move to F with their sign changed)\n")
		}
	}
	for i, q := range g.Flux {
		if q != nil {
			t.printf("   flux(%s) = %s   (the conormal flux: ∫ L(u)·v = B − ∫_∂Ω flux·v)\n", m.Unknowns[i].Name, t.e(q))
		}
	}
	t.notes(d.Notes)
	if d.Linear != nil {
		for _, f := range d.Forms {
			if f.Method == compiler.Galerkin {
				t.jacobian(&f, "F")
			}
		}
	}
	stage := 6
	if d.Linear != nil {
		stage = 7
	}
	for _, f := range d.Forms {
		if f.Method == compiler.Galerkin {
			continue
		}
		t.printf("\n%d. %s\n", stage, methodTitle(f.Method))
		stage++
		var parts []string
		for _, s := range f.Stab {
			sign := "+"
			if s.Sign < 0 {
				sign = "−"
			}
			parts = append(parts, fmt.Sprintf("%s Σ_K (%s R_%s, %s)_K", sign, t.e(s.Tau), m.Unknowns[s.For].Name, t.e(s.TestOp)))
		}
		if f.Cross != nil {
			parts = append(parts, fmt.Sprintf("+ Σ_K (%s)_K", t.e(f.Cross)))
		}
		parts = append(parts, t.captureParts(&f)...)
		if d.Linear != nil {
			t.printf("   F %s = 0\n", strings.Join(parts, " "))
		} else {
			t.printf("   B %s = F\n", strings.Join(parts, " "))
		}
		for _, s := range f.Stab {
			name := m.Unknowns[s.For].Name
			t.printf("   R_%s = %s\n", name, t.e(s.Residual))
			t.printf("   %s = %s\n", t.e(s.Tau), t.e(compiler.Simplify(m.Tau[s.For], m.Dim)))
		}
		for _, fs := range f.Fine {
			t.printf("   %s = %s   (%s)\n", t.e(fs.Sym), t.e(fs.Def), fineWhat(fs))
		}
		t.captureDefinitions(&f)
		for _, x := range f.Dropped {
			t.printf("   dropped: Σ_K (%s)_K\n", t.e(x))
		}
		if len(f.Stab) == 0 {
			t.printf("   no stabilisation term: the operator has no part this method acts on\n")
		}
		t.notes(f.Notes)
		if f.Jacobian != nil {
			t.jacobian(&f, "F_"+f.Method.String())
		}
	}
	if d.Picard != nil {
		t.picard(d, stage)
	}
	return t.err
}

// fineWhat says what a fine-scale symbol is, for the line that defines it.
func fineWhat(fs *compiler.FineScale) string {
	if fs.Sym.Kind == ir.LaggedFineScale {
		return "fine scale at the previous iterate"
	}
	return "fine scale"
}

func (t *textWriter) split(split []compiler.Split, op string) {
	m := t.m
	for _, s := range split {
		for p, part := range s.Parts {
			if part != nil {
				t.printf("   %-9s %s_%s,%s = %s\n", compiler.Part(p).String(), op, m.Unknowns[s.For].Name, string(compiler.Part(p).String()[0]-32), t.e(part))
			}
		}
	}
}

func methodTitle(m compiler.Method) string {
	switch m {
	case compiler.SUPG:
		return "SUPG: advective operator on the test function (Brooks & Hughes 1982)"
	case compiler.GLS:
		return "GLS: whole operator on the test function (Hughes, Franca & Hulbert 1989)"
	case compiler.VMS:
		return "VMS: minus the adjoint on the test function (Hughes 1995)"
	}
	return "Galerkin"
}

// Expression is the JSON form of an expression: its model-language syntax
// (readable back), its Unicode rendering, and its IR tree.
type Expression struct {
	Syntax string `json:"syntax"`
	Text   string `json:"text"`
	Tree   *Node  `json:"tree"`
}

// Node is the JSON form of an IR node.
type Node struct {
	Op    string  `json:"op"`
	Value string  `json:"value,omitempty"` // num: exact rational "p/q"
	Name  string  `json:"name,omitempty"`  // sym, field, const, call
	Kind  string  `json:"kind,omitempty"`  // sym kind, field role
	Index *int    `json:"index,omitempty"` // comp: 1-based component; coord/partial: axis name in Name
	Rank  int     `json:"rank"`
	Args  []*Node `json:"args,omitempty"`
}

// Tree converts an IR expression to its JSON node.
func Tree(e ir.Expr) *Node {
	n := &Node{Rank: e.Rank()}
	for _, k := range ir.Children(e) {
		n.Args = append(n.Args, Tree(k))
	}
	switch e := e.(type) {
	case *ir.Num:
		n.Op, n.Value = "num", e.Val.RatString()
	case *ir.Const:
		n.Op, n.Name = "const", e.Name
	case *ir.Coord:
		n.Op, n.Name = "coord", ir.AxisName(e.Axis)
	case *ir.Time:
		n.Op = "time"
	case *ir.Sym:
		n.Op, n.Name, n.Kind = "sym", e.Name, e.Kind.String()
	case *ir.Field:
		n.Op, n.Name, n.Kind = "field", e.Name, e.Role.String()
	case *ir.Add:
		n.Op = "add"
	case *ir.Mul:
		n.Op = "mul"
	case *ir.Pow:
		n.Op = "pow"
	case *ir.Call:
		n.Op, n.Name = "call", e.Fn.String()
	case *ir.Vec:
		n.Op = "vector"
	case *ir.Comp:
		i := e.I + 1
		n.Op, n.Index = "component", &i
	case *ir.Dot:
		n.Op = "dot"
	case *ir.DDot:
		n.Op = "ddot"
	case *ir.Outer:
		n.Op = "outer"
	case *ir.Grad:
		n.Op = "grad"
	case *ir.Div:
		n.Op = "div"
	case *ir.Lap:
		n.Op = "lap"
	case *ir.Partial:
		n.Op, n.Name = "partial", ir.AxisName(e.Axis)
	case *ir.TimeDeriv:
		n.Op = "time_derivative"
	case *ir.FieldD:
		n.Op, n.Name, n.Kind = "field_derivative", notation.Expr(e, notation.Syntax, notation.Names{}), e.Field.Role.String()
	case *ir.CellQ:
		n.Op, n.Name = "cell_quantity", notation.Expr(e, notation.Syntax, notation.Names{})
	}
	return n
}

func jexpr(e ir.Expr, names notation.Names) *Expression {
	if e == nil {
		return nil
	}
	return &Expression{Syntax: notation.Expr(e, notation.Syntax, notation.Names{}), Text: notation.Expr(e, notation.Text, names), Tree: Tree(e)}
}

// JSON schema types; field names are stable (documented in the README).
type jsonDerivation struct {
	Schema     string          `json:"schema"`
	Model      string          `json:"model"`
	File       string          `json:"file"`
	Dimension  int             `json:"dimension"`
	Unknowns   []jsonUnknown   `json:"unknowns"`
	Equations  []jsonEquation  `json:"equations"`
	Adjoint    []jsonRow       `json:"adjoint"`
	Split      []jsonSplit     `json:"split"`
	Galerkin   jsonGalerkin    `json:"galerkin"`
	Stabilised []jsonMethod    `json:"stabilised"`
	Tau        []jsonRow       `json:"tau"`
	Notes      []jsonNote      `json:"notes"`
	Boundaries []jsonCondition `json:"boundary_conditions"`
	Means      []jsonRow       `json:"mean_conditions"`
	Parts      []jsonPart      `json:"parts"`
	// Nonlinear holds the stages of a nonlinear model (absent for a
	// linear one).
	Nonlinear *jsonNonlinear `json:"nonlinear,omitempty"`
}

type jsonUnknown struct {
	Name    string `json:"name"`
	Rank    int    `json:"rank"`
	Element string `json:"element"`
	Test    string `json:"test_function"`
}

type jsonEquation struct {
	For        string      `json:"for"`
	Written    *Expression `json:"written"`
	Normalised *Expression `json:"normalised"`
	Source     *Expression `json:"source"`
}

type jsonRow struct {
	For  string      `json:"for"`
	Expr *Expression `json:"expr"`
}

type jsonSplit struct {
	For       string      `json:"for"`
	Temporal  *Expression `json:"temporal"`
	Advective *Expression `json:"advective"`
	Diffusive *Expression `json:"diffusive"`
	Reactive  *Expression `json:"reactive"`
	Coupling  *Expression `json:"coupling"`
}

type jsonGalerkin struct {
	Bilinear *Expression    `json:"bilinear"`
	Source   *Expression    `json:"source"`
	Boundary []jsonBoundary `json:"boundary"`
	Flux     []jsonRow      `json:"flux"`
}

type jsonBoundary struct {
	Side      string      `json:"side"`
	Integrand *Expression `json:"integrand"`
}

type jsonMethod struct {
	Method string     `json:"method"`
	Terms  []jsonStab `json:"terms"`
	// Residual-based VMS turbulence modelling of a lagged convection.
	FineScale   []jsonFine    `json:"fine_scale,omitempty"`
	CrossStress *Expression   `json:"cross_stress,omitempty"`
	Capture     []jsonCapt    `json:"capture,omitempty"`
	Dropped     []*Expression `json:"dropped,omitempty"`
	Notes       []jsonNote    `json:"notes"`
}

type jsonFine struct {
	For        string      `json:"for"`
	Symbol     *Expression `json:"symbol"`
	Definition *Expression `json:"definition"`
}

type jsonStab struct {
	For          string      `json:"for"`
	Sign         int         `json:"sign"`
	Tau          *Expression `json:"tau"`
	Residual     *Expression `json:"residual"`
	TestOperator *Expression `json:"test_operator"`
	Integrand    *Expression `json:"integrand"`
}

// jsonPart is a boundary part the model defines: its set of facets in
// Unicode and in LaTeX.
type jsonPart struct {
	Name string `json:"name"`
	Text string `json:"text"`
	TeX  string `json:"tex"`
}

type jsonNote struct {
	Kind string `json:"kind"`
	Text string `json:"text"`
	TeX  string `json:"tex"`
}

type jsonCondition struct {
	For   string      `json:"for"`
	Kind  string      `json:"kind"`
	Sides []string    `json:"sides"`
	Value *Expression `json:"value"`
}

func jnotes(ns []compiler.Note) []jsonNote {
	out := []jsonNote{}
	for _, n := range ns {
		out = append(out, jsonNote{n.Kind.String(), n.Text, n.TeX})
	}
	return out
}

// SchemaVersion names the JSON layout WriteJSON produces.
const SchemaVersion = "formwright.derivation/2"

// WriteJSON prints the derivation as JSON (schema SchemaVersion).
func WriteJSON(w io.Writer, d *compiler.Derivation) error {
	m := d.Model
	names := namesFor(m)
	out := jsonDerivation{Schema: SchemaVersion, Model: m.Name, File: m.File, Dimension: m.Dim, Notes: jnotes(d.Notes)}
	for _, u := range m.Unknowns {
		out.Unknowns = append(out.Unknowns, jsonUnknown{u.Name, u.Rank, u.Element.String(), notation.Expr(m.Test(u.Index), notation.Text, names)})
	}
	for k, eq := range m.Equations {
		name := m.Unknowns[eq.For].Name
		out.Equations = append(out.Equations, jsonEquation{name, jexpr(eq.Written, names), jexpr(d.Normalised[k], names), jexpr(d.Sources[k], names)})
	}
	for i, a := range d.Adjoint {
		out.Adjoint = append(out.Adjoint, jsonRow{m.Unknowns[i].Name, jexpr(a, names)})
	}
	for _, s := range d.Split {
		out.Split = append(out.Split, jsonSplit{m.Unknowns[s.For].Name, jexpr(s.Parts[0], names), jexpr(s.Parts[1], names), jexpr(s.Parts[2], names), jexpr(s.Parts[3], names), jexpr(s.Parts[4], names)})
	}
	g := d.Galerkin
	out.Galerkin = jsonGalerkin{Bilinear: jexpr(g.Bilinear, names), Source: jexpr(g.Source, names), Boundary: []jsonBoundary{}, Flux: []jsonRow{}}
	for _, b := range g.Boundary {
		out.Galerkin.Boundary = append(out.Galerkin.Boundary, jsonBoundary{b.Side, jexpr(b.Integrand, names)})
	}
	for i, q := range g.Flux {
		if q != nil {
			out.Galerkin.Flux = append(out.Galerkin.Flux, jsonRow{m.Unknowns[i].Name, jexpr(q, names)})
		}
	}
	out.Stabilised = []jsonMethod{}
	for _, f := range d.Forms {
		if f.Method == compiler.Galerkin {
			continue
		}
		jm := jsonMethod{Method: f.Method.String(), Terms: []jsonStab{}, Notes: jnotes(f.Notes)}
		for _, s := range f.Stab {
			jm.Terms = append(jm.Terms, jsonStab{m.Unknowns[s.For].Name, s.Sign, jexpr(s.Tau, names), jexpr(s.Residual, names), jexpr(s.TestOp, names), jexpr(s.Integrand(m.Dim), names)})
		}
		for _, fs := range f.Fine {
			jm.FineScale = append(jm.FineScale, jsonFine{m.Unknowns[fs.Unknown].Name, jexpr(fs.Sym, names), jexpr(fs.Def, names)})
		}
		if f.Cross != nil {
			jm.CrossStress = jexpr(f.Cross, names)
		}
		jm.Capture = jsonCapture(m, &f, names)
		for _, x := range f.Dropped {
			jm.Dropped = append(jm.Dropped, jexpr(x, names))
		}
		out.Stabilised = append(out.Stabilised, jm)
	}
	out.Tau = []jsonRow{}
	for i, tau := range m.Tau {
		if tau != nil {
			out.Tau = append(out.Tau, jsonRow{m.Unknowns[i].Name, jexpr(compiler.Simplify(tau, m.Dim), names)})
		}
	}
	out.Boundaries = []jsonCondition{}
	for _, bc := range m.BCs {
		out.Boundaries = append(out.Boundaries, jsonCondition{m.Unknowns[bc.Unknown].Name, bc.Kind.String(), bc.Sides, jexpr(bc.Value, names)})
	}
	out.Means = []jsonRow{}
	out.Parts = []jsonPart{}
	for _, p := range m.Parts {
		tex := p.SetTeX()
		out.Parts = append(out.Parts, jsonPart{p.Name, notation.Plain("$" + tex + "$"), tex})
	}
	for _, mc := range m.Means {
		out.Means = append(out.Means, jsonRow{m.Unknowns[mc.Unknown].Name, jexpr(mc.Value, names)})
	}
	if d.Linear != nil {
		out.Nonlinear = jsonOfNonlinear(d)
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}
