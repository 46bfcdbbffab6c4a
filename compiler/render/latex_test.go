package render

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"testing"

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
