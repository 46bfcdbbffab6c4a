package gogen

import (
	"go/ast"
	"go/doc/comment"
	"go/parser"
	"go/token"
	"strconv"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
)

// Every comment the generator writes is already in the form gofmt gives
// doc comments (the syntax of go.dev/doc/comment, as go/doc/comment
// parses and prints it), so formatting never rewrites it: the term lists
// are code blocks, which gofmt keeps verbatim, not list items, which it
// rewrites to "  - ".
func TestCommentsStable(t *testing.T) {
	for _, mc := range modelCases(t) {
		switch mc.name {
		case "adr", "robin", "heatq2", "navier_stokes", "hostile":
		default:
			continue
		}
		out := generate(t, mc.file, mc.src, mc.name)
		f, err := parser.ParseFile(token.NewFileSet(), "k.go", out, parser.ParseComments)
		if err != nil {
			t.Fatal(err)
		}
		var p comment.Parser
		var pr comment.Printer
		for _, g := range f.Comments {
			var want strings.Builder
			for _, c := range g.List {
				// Comment prints without the markers and the space after them.
				want.WriteString(strings.TrimPrefix(strings.TrimPrefix(c.Text, "//"), " ") + "\n")
			}
			got := string(pr.Comment(p.Parse(g.Text())))
			if got != want.String() {
				t.Errorf("%s: comment changes under doc-comment formatting:\n%s\nbecomes\n%s", mc.file, want.String(), got)
			}
		}
	}
}

// The comment above a block names the method term it implements, as the
// derivation writes it (testdata/derive/stdlib_adr.txt, stages 5 and 6),
// with the model line of its τ, and lists the
// lowered terms with their model lines (stdlib/models/adr.fw: line 12 the
// equation, line 15 the τ). The diffusive part of the SUPG residual reads
// the recovered second derivatives of the iterate (compiler,
// recoverSecondDerivatives), so it sits with the right-hand side.
func TestBlockComments(t *testing.T) {
	f, src := stdModel(t, "adr")
	out := string(generate(t, f, string(src), "k"))
	supg := out[strings.Index(out, "func (SUPGKernel) Cell"):]
	supg = supg[:strings.Index(supg, "\n}\n")]
	for _, want := range []string{
		"\t// Rows 0..2, columns 0..2, integrated in advance (affine cell, coefficients\n\t// constant in the cell).\n\t//\n",
		"\t//\tGalerkin: B = ∫_Ω κ (∇c·∇v) + (a·∇c) v + σ c v dx, F = ∫_Ω f v dx\n",
		"\t//\tSUPG: + Σ_K (τ_c R_c, a·∇v)_K  adr.fw:15\n",
		"\t//\t  τ_c · ∂c/∂x · ∂v/∂x    adr.fw:15\n",
		"\t//\t  1/100 · ∂c/∂x · ∂v/∂x  adr.fw:12\n",
		"\t//\t  τ_c ∂²c⁽ʳᵉᶜ⁾/∂x²/100 · ∂v/∂x  adr.fw:12\n",
	} {
		if !strings.Contains(supg, want) {
			t.Errorf("SUPG cell kernel lacks %q", want)
		}
	}
	// The comment stands directly above the first statement of its block.
	i := strings.Index(supg, "adr.fw:15\n\tA[0] = ")
	if i < 0 {
		t.Error("the block comment is not directly above A[0]")
	}
}

// A model quantity is computed once under its model name when that is a
// plain identifier, and under its mangled name behind the prefix m_ when
// it is a keyword, builtin or macro of Go, C or C++, a name the generator
// uses, or taken; the two names of a scalar a_1 and component 1 of a
// vector a differ.
func TestLocalNames(t *testing.T) {
	out := string(generate(t, "hostile_locals.fw", hostileLocals, "k"))
	f, err := parser.ParseFile(token.NewFileSet(), "k.go", out, 0)
	if err != nil {
		t.Fatal(err)
	}
	locals := map[string]bool{}
	ast.Inspect(f, func(n ast.Node) bool {
		if as, ok := n.(*ast.AssignStmt); ok && as.Tok == token.DEFINE {
			for _, l := range as.Lhs {
				locals[l.(*ast.Ident).Name] = true
			}
		}
		return true
	})
	for _, want := range []string{"m_len", "int_1", "int_2", "m_class", "m_NAN", "m_detJ", "m_fwFillNaN", "m_m__len", "m_A", "m_q", "a_1", "m_a_1", "a_2", "tau_u", "detJ"} {
		if !locals[want] {
			t.Errorf("no local %s", want)
		}
	}
	for l := range locals {
		if reservedWord(l) && !generatorName.MatchString(l) && !strings.Contains(" x pv row q i j ", " "+l+" ") {
			t.Errorf("local %s is a reserved word", l)
		}
	}
}

// localName is injective: distinct quantities or components never share a
// mangled name, and a plain name is never a mangled one.
func TestLocalNameInjective(t *testing.T) {
	type q struct {
		name       string
		rank, i, j int
	}
	qs := []q{{"a", 1, 0, 0}, {"a_1", 0, 0, 0}, {"a_", 1, 0, 0}, {"a__1", 0, 0, 0}, {"a", 2, 0, 0}, {"a_1", 1, 0, 0},
		{"m_a", 0, 0, 0}, {"ma", 0, 0, 0}, {"m", 1, 0, 0}, {"int", 0, 0, 0}, {"Int", 0, 0, 0}, {"A", 0, 0, 0}, {"é", 0, 0, 0}, {"e\u0301", 0, 0, 0}}
	mangled := map[string]q{}
	for _, x := range qs {
		plain, m := localName(x.name, x.rank, x.i, x.j)
		if o, dup := mangled[m]; dup {
			t.Errorf("%v and %v both mangle to %s", o, x, m)
		}
		mangled[m] = x
		if !token.IsIdentifier(plain) || !token.IsIdentifier(m) || !strings.HasPrefix(m, "m_") {
			t.Errorf("%v: names %q, %q", x, plain, m)
		}
		if plain != m && strings.HasPrefix(plain, "m_") {
			t.Errorf("%v: plain name %q in the mangled namespace", x, plain)
		}
	}
}

// Side names with quotes, backslashes, comment delimiters, line breaks
// and non-ASCII letters (possible in a lowered form built by a program,
// not in a model file) give Go that parses, whose Side methods return the
// names byte for byte, and whose comments hold no line of the names.
func TestGoHostileSides(t *testing.T) {
	var forms []*ir.LoweredForm
	for _, mc := range modelCases(t) {
		if mc.name == "robin" {
			forms = lowerAll(t, mc.file, []byte(mc.src))
		}
	}
	names := map[string]string{"right": "right\"); panic(\"x\\", "top": "top */ func init() { /* \n// é ☃ \u2028"}
	for i, lf := range forms {
		c := *lf
		c.Integrals = nil
		for _, in := range lf.Integrals {
			if s, ok := names[in.Domain.Side]; ok {
				in.Domain.Side = s
			}
			c.Integrals = append(c.Integrals, in)
		}
		forms[i] = &c
	}
	out, err := Generate(forms, Options{Package: "k", ModelFile: "m.fw"})
	if err != nil {
		t.Fatal(err)
	}
	f, err := parser.ParseFile(token.NewFileSet(), "k.go", out, parser.ParseComments)
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]bool{}
	for _, d := range f.Decls {
		fd, ok := d.(*ast.FuncDecl)
		if !ok || fd.Name.Name != "Side" {
			continue
		}
		lit := fd.Body.List[0].(*ast.ReturnStmt).Results[0].(*ast.BasicLit)
		s, err := strconv.Unquote(lit.Value)
		if err != nil {
			t.Fatal(err)
		}
		got[s] = true
	}
	for _, s := range names {
		if !got[s] {
			t.Errorf("no Side method returns %q", s)
		}
	}
	for _, g := range f.Comments {
		if strings.Contains(g.Text(), "func init") && !strings.Contains(g.Text(), "top * / func init() { / *") {
			t.Errorf("a side name reached a comment unsanitised: %q", g.Text())
		}
	}
}
