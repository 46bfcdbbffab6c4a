package render

import (
	"bytes"
	"go/ast"
	"go/parser"
	"go/token"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"unicode"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/stdlib"
)

// TestLaTeXCompiles renders the derivation of every standard model and
// runs pdflatex on it (skipped where pdflatex is not installed): the
// document must compile without errors.
func TestLaTeXCompiles(t *testing.T) {
	if _, err := exec.LookPath("pdflatex"); err != nil {
		t.Skip("pdflatex not installed")
	}
	if testing.Short() {
		t.Skip("slow: runs pdflatex")
	}
	for _, name := range stdlib.Models() {
		_, src, _ := stdlib.Model(name)
		m := mustModel(t, string(src))
		d, err := compiler.Derive(m, compiler.AllMethods)
		if err != nil {
			t.Fatal(err)
		}
		var b bytes.Buffer
		if err := WriteLaTeX(&b, d); err != nil {
			t.Fatal(err)
		}
		dir := t.TempDir()
		tex := filepath.Join(dir, name+".tex")
		os.WriteFile(tex, b.Bytes(), 0o644)
		cmd := exec.Command("pdflatex", "-interaction=nonstopmode", "-halt-on-error", "-output-directory", dir, tex)
		out, err := cmd.CombinedOutput()
		if err != nil {
			t.Errorf("%s: pdflatex failed: %v\n%s", name, err, tail(string(out), 1500))
			continue
		}
		if _, err := os.Stat(filepath.Join(dir, name+".pdf")); err != nil {
			t.Errorf("%s: no PDF produced", name)
		}
	}
}

func tail(s string, n int) string {
	if len(s) > n {
		return s[len(s)-n:]
	}
	return s
}

// TestLaTeXNoteSymbols: every non-ASCII character in the string literals
// of the compiler files where derivation notes are written comes out of
// latexText as plain ASCII, so pdflatex without Unicode support accepts
// any note (pdflatex stops at the first unmapped character).
func TestLaTeXNoteSymbols(t *testing.T) {
	seen := map[rune]bool{}
	for _, file := range []string{"derive.go", "newton.go", "finescale.go", "picard.go", "linearise.go"} {
		src, err := os.ReadFile(filepath.Join("..", file))
		if err != nil {
			t.Fatal(err)
		}
		fs := token.NewFileSet()
		f, err := parser.ParseFile(fs, file, src, 0)
		if err != nil {
			t.Fatal(err)
		}
		inspectNotes(t, f, seen)
	}
	if len(seen) == 0 {
		t.Fatal("no non-ASCII characters found in derive.go: is the path right?")
	}
}

func inspectNotes(t *testing.T, f *ast.File, seen map[rune]bool) {
	ast.Inspect(f, func(n ast.Node) bool {
		if lit, ok := n.(*ast.BasicLit); ok && lit.Kind == token.STRING {
			for _, r := range lit.Value {
				if r > unicode.MaxASCII && !seen[r] {
					seen[r] = true
					if out := latexText(string(r)); strings.ContainsFunc(out, func(c rune) bool { return c > unicode.MaxASCII }) {
						t.Errorf("latexText(%q) = %q: not mapped to ASCII", r, out)
					}
				}
			}
		}
		return true
	})
}
