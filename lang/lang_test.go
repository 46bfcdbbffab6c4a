package lang

import (
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/lang/source/expect"

	"bytes"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"unicode/utf8"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata")

// sexpr renders an expression as a fully parenthesised prefix form, so tree
// shape (precedence, associativity) can be compared exactly.
func sexpr(e Expr) string {
	switch e := e.(type) {
	case *Number:
		return e.Text
	case *Ident:
		return e.Name
	case *Call:
		parts := []string{"call", e.Func}
		for _, a := range e.Args {
			parts = append(parts, sexpr(a))
		}
		return "(" + strings.Join(parts, " ") + ")"
	case *Binary:
		return fmt.Sprintf("(%s %s %s)", e.Op, sexpr(e.X), sexpr(e.Y))
	case *Unary:
		return fmt.Sprintf("(neg%s %s)", e.Op, sexpr(e.X))
	case *Index:
		return fmt.Sprintf("(index %s %d)", sexpr(e.X), e.Index)
	case *List:
		parts := []string{"list"}
		for _, a := range e.Elems {
			parts = append(parts, sexpr(a))
		}
		return "(" + strings.Join(parts, " ") + ")"
	}
	return fmt.Sprintf("<%T>", e)
}

func names(ns []Name) string {
	var s []string
	for _, n := range ns {
		s = append(s, n.Text)
	}
	return strings.Join(s, ",")
}

// dump renders a whole file without positions, for tree comparisons.
func dump(f *File) string {
	var b strings.Builder
	for _, s := range f.Stmts {
		switch s := s.(type) {
		case *ModelStmt:
			fmt.Fprintf(&b, "model %s\n", s.Name.Text)
		case *DimensionStmt:
			fmt.Fprintf(&b, "dimension %d\n", s.Dim)
		case *SidesStmt:
			fmt.Fprintf(&b, "sides %s\n", names(s.Names))
		case *UseStmt:
			fmt.Fprintf(&b, "use %s\n", names(s.Names))
		case *UnknownStmt:
			fmt.Fprintf(&b, "unknown %s %s %s\n", s.Name.Text, s.Rank, s.Element.Text)
		case *GivenStmt:
			fmt.Fprintf(&b, "given %s %s\n", s.Name.Text, sexpr(s.Value))
		case *FormulaStmt:
			fmt.Fprintf(&b, "formula %s (%s) %s\n", s.Name.Text, names(s.Params), sexpr(s.Body))
		case *EquationStmt:
			fmt.Fprintf(&b, "equation %s %s %s\n", s.For.Text, sexpr(s.LHS), sexpr(s.RHS))
		case *BoundaryStmt:
			fmt.Fprintf(&b, "at %s flux=%v %s %s\n", names(s.Sides), s.Flux, s.Target.Text, sexpr(s.Value))
		case *StabiliseStmt:
			fmt.Fprintf(&b, "stabilise %s\n", names(s.Methods))
		case *TauStmt:
			fmt.Fprintf(&b, "tau %s %s\n", s.For.Text, sexpr(s.Value))
		case *MeanStmt:
			fmt.Fprintf(&b, "mean %s %s\n", s.Target.Text, sexpr(s.Value))
		default:
			fmt.Fprintf(&b, "<%T>\n", s)
		}
	}
	return b.String()
}

func goodFiles(t testing.TB) []string {
	files, err := filepath.Glob("testdata/*.fw")
	if err != nil || len(files) == 0 {
		t.Fatalf("no good files: %v", err)
	}
	return files
}

func mustParse(t *testing.T, name string, src []byte) *File {
	t.Helper()
	f, errs := Parse(name, src)
	if errs.Err() != nil {
		var b bytes.Buffer
		errs.Format(&b, map[string][]byte{name: src})
		t.Fatalf("unexpected errors:\n%s", b.String())
	}
	return f
}

// The two examples of the design brief, statement by statement: kinds,
// names and expression trees as the brief's grammar prescribes.
func TestTankExample(t *testing.T) {
	src, err := os.ReadFile("testdata/tank_dye.fw")
	if err != nil {
		t.Fatal(err)
	}
	f := mustParse(t, "tank_dye.fw", src)
	want := `model tank_dye
dimension 2
sides left,right,bottom,top
use tau
unknown c scalar P1
given a (list 1 0.5)
given kappa (* 1e-3 (+ 1 (^ x 2)))
given sigma 0
given f (call exp (* (neg- 10) (+ (^ (- x 0.5) 2) (^ y 2))))
given h (call diam K)
formula peclet (speed,k,size) (/ (* speed size) (* 2 k))
equation c (+ (- (. a (call grad c)) (call div (* kappa (call grad c)))) (* sigma c)) f
at left,bottom flux=false c 0
at right flux=true c 0
at top flux=true c (* 2 (- 1 c))
stabilise supg,gls,vms
tau c (call tau_codina (call norm a) kappa sigma h)
`
	if got := dump(f); got != want {
		t.Errorf("tree:\n%s\nwant:\n%s", got, want)
	}
}

func TestStokesExample(t *testing.T) {
	src, err := os.ReadFile("testdata/creeping.fw")
	if err != nil {
		t.Fatal(err)
	}
	f := mustParse(t, "creeping.fw", src)
	want := `model creeping
dimension 2
unknown vel vector P1
unknown p scalar P1
given nu 1
given g (list 0 (neg- 1))
equation vel (+ (neg- (call div (* nu (call grad vel)))) (call grad p)) g
equation p (call div vel) 0
at all flux=false vel (list 0 0)
mean p 0
stabilise gls
tau vel (/ (^ h 2) (* 4 nu))
tau p (* 4 nu)
given h (call diam K)
`
	if got := dump(f); got != want {
		t.Errorf("tree:\n%s\nwant:\n%s", got, want)
	}
}

// Precedence and associativity. The expected trees follow the operator
// table of the language definition (doc.go), which in turn follows the
// usual mathematical conventions: ^ binds tighter than unary minus and
// associates to the right, the other binary operators associate to the
// left.
func TestPrecedence(t *testing.T) {
	cases := []struct{ in, want string }{
		{"-x^2", "(neg- (^ x 2))"},
		{"a.b*c", "(* (. a b) c)"},
		{"a*b.c", "(. (* a b) c)"},
		{"2^3^2", "(^ 2 (^ 3 2))"},
		{"a-b-c", "(- (- a b) c)"},
		{"a/b/c", "(/ (/ a b) c)"},
		{"a+b*c", "(+ a (* b c))"},
		{"(a+b)*c", "(* (+ a b) c)"},
		{"2^-1", "(^ 2 (neg- 1))"},
		{"2^-x^2", "(^ 2 (neg- (^ x 2)))"},
		{"-a*b", "(* (neg- a) b)"},
		{"--a", "(neg- (neg- a))"},
		{"+a", "(neg+ a)"},
		{"a^b[1]", "(^ a (index b 1))"},
		{"e[1][2]^2", "(^ (index (index e 1) 2) 2)"},
		{"-e[2]", "(neg- (index e 2))"},
		{"(a+b)[1]", "(index (+ a b) 1)"},
		{"a . grad(c) - div(k*grad(c))", "(- (. a (call grad c)) (call div (* k (call grad c))))"},
		{"f()", "(call f)"},
		{"[[1,0],[0,1]]", "(list (list 1 0) (list 0 1))"},
		{"1e-6*2.5E+3", "(* 1e-6 2.5E+3)"},
		{"a - -b", "(- a (neg- b))"},
		{"x^2^-1", "(^ x (^ 2 (neg- 1)))"},
	}
	for _, c := range cases {
		src := "given z = " + c.in
		f := mustParse(t, "prec.fw", []byte(src))
		if len(f.Stmts) != 1 {
			t.Fatalf("%q: %d statements", c.in, len(f.Stmts))
		}
		got := sexpr(f.Stmts[0].(*GivenStmt).Value)
		if got != c.want {
			t.Errorf("%q parsed as %s, want %s", c.in, got, c.want)
		}
		// And the printer must give back something that parses the same.
		again := mustParse(t, "again.fw", []byte("given z = "+ExprString(f.Stmts[0].(*GivenStmt).Value)))
		if got2 := sexpr(again.Stmts[0].(*GivenStmt).Value); got2 != c.want {
			t.Errorf("%q printed as %q, which parses as %s", c.in, ExprString(f.Stmts[0].(*GivenStmt).Value), got2)
		}
	}
}

// Every good file parses without errors; its positions agree with the
// source text; printing and re-parsing gives the same tree; and the
// whole-file participle parser (no recovery) builds the same tree as the
// statement-wise parser.
func TestGoodFiles(t *testing.T) {
	for _, path := range goodFiles(t) {
		t.Run(filepath.Base(path), func(t *testing.T) {
			src, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			f := mustParse(t, path, src)
			if len(f.Stmts) == 0 {
				t.Fatal("no statements")
			}
			checkPositions(t, f)
			checkRoundTrip(t, f)
			whole, err := fileParser.ParseBytes(path, src)
			if err != nil {
				t.Fatalf("whole-file parse: %v", err)
			}
			lw := &lowerer{errs: new(source.ErrorList)}
			g := &File{Name: path, Src: src}
			for _, s := range whole.Stmts {
				g.Stmts = append(g.Stmts, lw.stmt(s))
			}
			if dump(g) != dump(f) {
				t.Errorf("whole-file tree differs:\n%s\nstatement-wise:\n%s", dump(g), dump(f))
			}
		})
	}
}

func TestStatementCounts(t *testing.T) {
	// Counted by hand from the files.
	want := map[string]int{"tank_dye.fw": 17, "creeping.fw": 14, "layout.fw": 18, "oneline_1d.fw": 10}
	for _, path := range goodFiles(t) {
		src, _ := os.ReadFile(path)
		f := mustParse(t, path, src)
		if n, ok := want[filepath.Base(path)]; ok && len(f.Stmts) != n {
			t.Errorf("%s: %d statements, want %d", path, len(f.Stmts), n)
		}
	}
}

// validPos checks that p lies inside src and that its line and column
// (runes) agree with its byte offset.
func validPos(src []byte, p source.Pos) error {
	if !p.IsValid() {
		return fmt.Errorf("invalid position %v", p)
	}
	if p.Offset < 0 || p.Offset > len(src) {
		return fmt.Errorf("offset %d outside [0,%d]", p.Offset, len(src))
	}
	line, col := 1, 1
	for _, r := range string(src[:p.Offset]) {
		if r == '\n' {
			line, col = line+1, 1
		} else {
			col++
		}
	}
	if line != p.Line || col != p.Col {
		return fmt.Errorf("offset %d is %d:%d, position says %d:%d", p.Offset, line, col, p.Line, p.Col)
	}
	return nil
}

func checkPositions(t *testing.T, f *File) {
	t.Helper()
	text := func(a, b source.Pos) string { return string(f.Src[a.Offset:b.Offset]) }
	checkName := func(n Name) {
		if err := validPos(f.Src, n.Pos); err != nil {
			t.Errorf("name %q: %v", n.Text, err)
			return
		}
		if got := text(n.Pos, n.End); got != n.Text {
			t.Errorf("name %q spans %q", n.Text, got)
		}
	}
	for _, s := range f.Stmts {
		switch s := s.(type) {
		case *ModelStmt:
			checkName(s.Name)
		case *UnknownStmt:
			checkName(s.Name)
			checkName(s.Element)
		case *GivenStmt:
			checkName(s.Name)
		case *FormulaStmt:
			checkName(s.Name)
			for _, p := range s.Params {
				checkName(p)
			}
		case *BoundaryStmt:
			for _, p := range s.Sides {
				checkName(p)
			}
			checkName(s.Target)
		case *SidesStmt:
			for _, p := range s.Names {
				checkName(p)
			}
		case *UseStmt:
			for _, p := range s.Names {
				checkName(p)
			}
		}
	}
	Inspect(f, func(n Node) bool {
		for _, p := range []source.Pos{n.Pos(), n.End()} {
			if err := validPos(f.Src, p); err != nil {
				t.Errorf("%T: %v", n, err)
				return false
			}
		}
		span := text(n.Pos(), n.End())
		if strings.TrimSpace(span) != span || span == "" {
			t.Errorf("%T spans %q: must start and end on a token", n, span)
		}
		switch n := n.(type) {
		case *Number:
			if span != n.Text {
				t.Errorf("number %q spans %q", n.Text, span)
			}
		case *Ident:
			if span != n.Name {
				t.Errorf("ident %q spans %q", n.Name, span)
			}
		case *Call:
			if n.FuncPos != n.Pos() || !strings.HasPrefix(span, n.Func) {
				t.Errorf("call %s: FuncPos at %q", n.Func, span)
			}
			if !strings.HasSuffix(span, ")") {
				t.Errorf("call %s spans %q", n.Func, span)
			}
		case *Binary:
			if got := string(f.Src[n.OpPos.Offset : n.OpPos.Offset+len(n.Op)]); got != n.Op {
				t.Errorf("binary %s: OpPos at %q", n.Op, got)
			}
			if n.X.Pos().Offset < n.Pos().Offset || n.Y.End().Offset > n.End().Offset {
				t.Errorf("binary %s: operands outside %q", n.Op, span)
			}
		case *List:
			if span[0] != '[' || span[len(span)-1] != ']' {
				t.Errorf("list spans %q", span)
			}
		case *Index:
			if !strings.HasSuffix(span, "]") {
				t.Errorf("index spans %q", span)
			}
		}
		return true
	})
}

func checkRoundTrip(t *testing.T, f *File) {
	t.Helper()
	var b bytes.Buffer
	if err := Fprint(&b, f); err != nil {
		t.Fatal(err)
	}
	g, errs := Parse("printed.fw", b.Bytes())
	if errs.Err() != nil {
		t.Fatalf("printed file does not parse: %v\n%s", errs, b.String())
	}
	if dump(g) != dump(f) {
		t.Errorf("round trip changed the tree:\n%s\nbecame\n%s", dump(f), dump(g))
	}
}

// Exact positions in the tank example, counted by hand in the file.
func TestTankPositions(t *testing.T) {
	src, _ := os.ReadFile("testdata/tank_dye.fw")
	f := mustParse(t, "tank_dye.fw", src)
	eq := f.Stmts[11].(*EquationStmt)
	if got := eq.For.Pos.String(); got != "tank_dye.fw:13:14" {
		t.Errorf("equation for: %s", got)
	}
	// "kappa" inside div(kappa*grad(c)) occupies columns 35-39 of line 13.
	var kappa *Ident
	Inspect(eq.LHS, func(n Node) bool {
		if id, ok := n.(*Ident); ok && id.Name == "kappa" {
			kappa = id
		}
		return true
	})
	if kappa == nil || kappa.Pos().String() != "tank_dye.fw:13:35" || kappa.End().Col != 40 {
		t.Errorf("kappa at %v..%v", kappa.Pos(), kappa.End())
	}
	if got := eq.Pos().String() + "-" + eq.End().String(); got != "tank_dye.fw:13:1-tank_dye.fw:13:63" {
		t.Errorf("equation span %s", got)
	}
}

// The bad files carry their expected errors inline (package
// lang/source/expect): every expected error must be reported at its line
// and column, and no other error may appear.
func TestBadFiles(t *testing.T) {
	files, _ := filepath.Glob("testdata/bad/*.fw")
	if len(files) == 0 {
		t.Fatal("no bad files")
	}
	for _, path := range files {
		t.Run(filepath.Base(path), func(t *testing.T) {
			src, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			want, err := expect.Parse(src)
			if err != nil || len(want) == 0 {
				t.Fatalf("expectations: %v (%d found)", err, len(want))
			}
			_, errs := Parse(path, src)
			for _, d := range expect.Match(want, errs) {
				t.Error(d)
			}
			for _, e := range errs {
				if err := validPos(src, e.Pos); err != nil {
					t.Errorf("error %v: %v", e, err)
				}
			}
		})
	}
}

// Exact "line:col: message" texts for a handful of errors; columns counted
// by hand.
func TestErrorTexts(t *testing.T) {
	cases := []struct{ src, want string }{
		{"given a = 2 *\ngiven b = 1", "1:14: expected an expression after \"*\""},
		{"equation for c a = 1", "1:16: missing \":\" after \"equation for c\", found \"a\""},
		{"given a = [1, 2]]", "1:17: unexpected \"]\": nothing to close"},
		{"given a = 1 $", "1:13: unknown character \"$\""},
		{"given a = .5", "1:11: a number cannot start with \".\""},
		{"model\n", "1:6: expected a name after \"model\""},
		{"given x = (1\n", "1:13: missing \")\" after \"1\""},
		{"  given x = 1 +\n\n# trailing comment\n", "1:16: expected an expression after \"+\""},
		{"given é = 1", "1:7: unknown character \"é\""},
		{"given a = é + $", "1:11: unknown character \"é\""},
		{"given a = \"s\" + \t$", "1:11: unknown character \"\\\"\""},
		{"given a = 1 +\tb $", "1:17: unknown character \"$\""},
	}
	for _, c := range cases {
		_, errs := Parse("", []byte(c.src))
		if len(errs) == 0 {
			t.Errorf("%q: no error", c.src)
			continue
		}
		if got := errs[0].Error(); got != c.want {
			t.Errorf("%q:\n got %s\nwant %s", c.src, got, c.want)
		}
	}
}

// Caret formatting, pinned by a golden file: syntax errors from the
// parser plus a semantic error added the way the checker will add it.
func TestFormatGolden(t *testing.T) {
	src, err := os.ReadFile("testdata/format/input.fw")
	if err != nil {
		t.Fatal(err)
	}
	_, errs := Parse("input.fw", src)
	off := bytes.Index(src, []byte("kapa"))
	errs.Add(source.Pos{File: "input.fw", Offset: off, Line: 4, Col: 35}, source.Pos{File: "input.fw", Offset: off + 4, Line: 4, Col: 39},
		`unknown identifier "kapa"`, `did you mean "kappa"?`)
	errs.Sort()
	var b bytes.Buffer
	errs.Format(&b, map[string][]byte{"input.fw": src})
	golden(t, "testdata/format/output.golden", b.Bytes())
}

func golden(t *testing.T, path string, got []byte) {
	t.Helper()
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs (run go test -update after checking):\n--- got\n%s\n--- want\n%s", path, got, want)
	}
}

// The grammar is pinned: any change to the grammar structs shows up here.
func TestGrammarGolden(t *testing.T) {
	golden(t, "testdata/grammar.ebnf", []byte(Grammar()+"\n"))
}

// A file with many broken statements stops at MaxErrors.
func TestTooManyErrors(t *testing.T) {
	var b strings.Builder
	for i := 0; i < 30; i++ {
		fmt.Fprintf(&b, "given a%d = *\n", i)
	}
	_, errs := Parse("many.fw", []byte(b.String()))
	if len(errs) != source.MaxErrors+1 || errs[len(errs)-1].Msg != "too many errors" {
		t.Fatalf("%d errors, last %q", len(errs), errs[len(errs)-1].Msg)
	}
	for i, e := range errs[:source.MaxErrors] {
		if e.Pos.Line != i+1 {
			t.Errorf("error %d on line %d", i, e.Pos.Line)
		}
	}
}

// Recovery keeps the good statements around a bad one.
func TestPartialTree(t *testing.T) {
	src := "model m\ngiven a = 1 +\ngiven b = 2\nequation for u u = 0\ntau for u = 3"
	f, errs := Parse("p.fw", []byte(src))
	if len(errs) != 2 {
		t.Fatalf("errors: %v", errs)
	}
	want := "model m\ngiven b 2\ntau u 3\n"
	if got := dump(f); got != want {
		t.Errorf("partial tree:\n%s\nwant\n%s", got, want)
	}
}

// "tau" is a statement keyword but also the name of a standard library
// module after "use".
func TestUseTau(t *testing.T) {
	f := mustParse(t, "u.fw", []byte("use tau, tau\ntau for u = 1\nuse extra, tau"))
	if got := dump(f); got != "use tau,tau\ntau u 1\nuse extra,tau\n" {
		t.Errorf("got %q", got)
	}
	if _, errs := Parse("u.fw", []byte("given tau = 1")); errs.Err() == nil {
		t.Error("tau accepted as a given name")
	}
}

// Columns count runes: a multi-byte character in a comment before an
// error on the next line does not matter, one on the same line shifts the
// byte offset but not the column.
func TestColumnsCountRunes(t *testing.T) {
	src := "given α_ok = 1" // α is not allowed in names
	_, errs := Parse("r.fw", []byte(src))
	if len(errs) == 0 {
		t.Fatal("no error")
	}
	e := errs[0]
	if e.Pos.Col != 7 || e.Pos.Offset != 6 {
		t.Errorf("α at col %d offset %d", e.Pos.Col, e.Pos.Offset)
	}
	_, errs = Parse("r.fw", []byte("given a = 1 # αβγ\ngiven b = ü"))
	if len(errs) != 1 || errs[0].Pos.Line != 2 || errs[0].Pos.Col != 11 {
		t.Errorf("got %v", errs)
	}
	if !utf8.ValidString(errs[0].Msg) {
		t.Error("message not UTF-8")
	}
}

// The cap applies after sorting and one-per-line reduction, so the errors
// shown are the first ten lines with errors, even when a statement gives
// two errors on one line or lexical errors come from late in the file.
func TestCapKeepsFirstLines(t *testing.T) {
	var b strings.Builder
	for i := 0; i < 12; i++ {
		fmt.Fprintf(&b, "given t%d = tau(1) $ $\n", i) // three raw errors per line
	}
	_, errs := Parse("cap.fw", []byte(b.String()))
	if len(errs) != source.MaxErrors+1 || !errs.Full() {
		t.Fatalf("%d errors: %v", len(errs), errs)
	}
	for i, e := range errs[:source.MaxErrors] {
		if e.Pos.Line != i+1 || e.Msg != `expected an expression after "="` {
			t.Errorf("error %d: %v", i, e)
		}
	}
	if e := errs[source.MaxErrors]; e.Msg != "too many errors" || e.Pos.Line != 11 {
		t.Errorf("last entry %v", e)
	}
}

// Hints for common slips.
func TestHints(t *testing.T) {
	cases := []struct{ src, hint string }{
		{"given a = 2x", "write 2*x for a product; a name must begin with a letter or _"},
		{"equaton for u: u = 0", `did you mean "equation"?`},
		{"model m\nequaton for u: u = 0", `did you mean "equation"?`},
		{"given a = .5", "write 0.5"},
		{"given a = 1.", "write 1.0 or 1"},
		{"given for = 1", `"for" is a reserved word and cannot be used as a name`},
		{"given a = (1+2", `the "(" at 1:11 is not closed`},
		{"given a = (1, 2)", "write a vector as [a, b]; parentheses only group"},
		{"given a = b c", `an operator is missing between "b" and "c"`},
		{"sides left right", `separate the names with ","`},
		{"given a = 1;", `statements need no terminator: each one ends where the next keyword begins`},
		{"at left: grad(u) = 0", "a boundary condition prescribes NAME or flux(NAME)"},
	}
	for _, c := range cases {
		_, errs := Parse("h.fw", []byte(c.src))
		if len(errs) == 0 {
			t.Errorf("%q: no error", c.src)
			continue
		}
		if errs[0].Hint != c.hint {
			t.Errorf("%q: hint %q, want %q (error %v)", c.src, errs[0].Hint, c.hint, errs[0])
		}
	}
}
