package render

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"unicode"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/notation"
	"github.com/formwright/formwright/stdlib"
)

// derivationSources are the models whose documents the LaTeX tests set:
// every standard model and every example.
func derivationSources(t *testing.T) map[string]string {
	out := map[string]string{}
	for _, name := range stdlib.Models() {
		_, src, _ := stdlib.Model(name)
		out[name] = string(src)
	}
	files, _ := filepath.Glob(filepath.Join("..", "..", "examples", "*", "model.fw"))
	if len(files) == 0 {
		t.Fatal("no examples found: is the path right?")
	}
	for _, f := range files {
		src, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		out["example_"+filepath.Base(filepath.Dir(f))] = string(src)
	}
	return out
}

func latexOf(t *testing.T, src string) []byte {
	m := mustModel(t, src)
	d, err := compiler.Derive(m, compiler.AllMethods)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := WriteLaTeX(&b, d); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// TestLaTeXCompiles renders the derivation of every standard model and
// example and runs pdflatex on it (skipped where pdflatex is not
// installed): the document must compile without errors, its equations
// must not run into the margin by more than a few points (overfull boxes
// wider than 20pt fail), and every reference must resolve.
func TestLaTeXCompiles(t *testing.T) {
	if _, err := exec.LookPath("pdflatex"); err != nil {
		t.Skip("pdflatex not installed")
	}
	if testing.Short() {
		t.Skip("slow: runs pdflatex")
	}
	overfull := regexp.MustCompile(`Overfull \\hbox \(([0-9.]+)pt too wide\)`)
	for name, src := range derivationSources(t) {
		dir := t.TempDir()
		tex := filepath.Join(dir, name+".tex")
		if err := os.WriteFile(tex, latexOf(t, src), 0o644); err != nil {
			t.Fatal(err)
		}
		cmd := exec.Command("pdflatex", "-interaction=nonstopmode", "-halt-on-error", "-output-directory", dir, tex)
		out, err := cmd.CombinedOutput()
		if err != nil {
			t.Errorf("%s: pdflatex failed: %v\n%s", name, err, tail(string(out), 1500))
			continue
		}
		if _, err := os.Stat(filepath.Join(dir, name+".pdf")); err != nil {
			t.Errorf("%s: no PDF produced", name)
		}
		for _, m := range overfull.FindAllStringSubmatch(string(out), -1) {
			if w, _ := strconv.ParseFloat(m[1], 64); w > 20 {
				t.Errorf("%s: an equation runs %spt into the margin", name, m[1])
			}
		}
	}
}

func tail(s string, n int) string {
	if len(s) > n {
		return s[len(s)-n:]
	}
	return s
}

// TestLaTeXIsASCII: the document of every standard model and example is
// plain ASCII, so pdflatex without Unicode support accepts it (pdflatex
// stops at the first character it has no mapping for), and every note's
// text is the Unicode reading of its markup.
func TestLaTeXIsASCII(t *testing.T) {
	for name, src := range derivationSources(t) {
		doc := latexOf(t, src)
		for i, line := range strings.Split(string(doc), "\n") {
			if k := strings.IndexFunc(line, func(c rune) bool { return c > unicode.MaxASCII }); k >= 0 {
				t.Errorf("%s line %d: non-ASCII %q in %q", name, i+1, []rune(line[k:])[0], line)
			}
		}
		d, _ := compiler.Derive(mustModel(t, src), compiler.AllMethods)
		notes := append([]compiler.Note{}, d.Notes...)
		for _, f := range d.Forms {
			notes = append(notes, f.Notes...)
		}
		for _, n := range notes {
			if got := notation.Plain(n.TeX); got != n.Text {
				t.Errorf("%s: note text %q is not the reading %q of its markup", name, n.Text, got)
			}
		}
	}
}
