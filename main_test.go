package main

import (
	"bytes"
	"encoding/json"
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/formwright/formwright/stdlib"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// modelsForGolden lists every stdlib model and every example model.
func modelsForGolden(t *testing.T) map[string]string {
	out := map[string]string{}
	for _, n := range stdlib.Models() {
		out["stdlib_"+n] = n
	}
	ex, _ := filepath.Glob("examples/*/model.fw")
	for _, p := range ex {
		out["example_"+filepath.Base(filepath.Dir(p))] = p
	}
	return out
}

// TestDeriveGolden pins the derivation of every standard model and example
// in all three formats. Run "go test -run TestDeriveGolden -update" after a
// deliberate change and review the diff.
func TestDeriveGolden(t *testing.T) {
	for name, arg := range modelsForGolden(t) {
		for _, format := range []string{"text", "latex", "json"} {
			var out, errb bytes.Buffer
			if st := run([]string{"derive", arg, "--method", "all", "--format", format}, &out, &errb); st != exitOK {
				t.Fatalf("derive %s --format %s: status %d\n%s", arg, format, st, errb.String())
			}
			ext := map[string]string{"text": "txt", "latex": "tex", "json": "json"}[format]
			path := filepath.Join("testdata", "derive", name+"."+ext)
			if *update {
				if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
					t.Fatal(err)
				}
				if err := os.WriteFile(path, out.Bytes(), 0o644); err != nil {
					t.Fatal(err)
				}
				continue
			}
			want, err := os.ReadFile(path)
			if err != nil {
				t.Fatalf("%v (run with -update to create it)", err)
			}
			if !bytes.Equal(out.Bytes(), want) {
				t.Errorf("derive %s --format %s differs from %s (run with -update after reviewing)", arg, format, path)
			}
			if format == "json" {
				var v map[string]any
				if err := json.Unmarshal(out.Bytes(), &v); err != nil {
					t.Errorf("%s: invalid JSON: %v", name, err)
				}
			}
		}
	}
}

// TestExitStatuses checks the documented statuses: 0 ok, 2 bad input or
// usage, with a positioned message and caret on stderr.
func TestExitStatuses(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "bad.fw")
	os.WriteFile(bad, []byte("model m\ndimension 2\nunknown c: scalar P1\nequation for c: -div(kapa*grad(c)) = 1\n"), 0o644)
	syn := filepath.Join(dir, "syntax.fw")
	os.WriteFile(syn, []byte("model m\ndimension 2\nunknown c: scalar P1\nequation for c: a . grad(c) = 1 +\n"), 0o644)
	cases := []struct {
		args   []string
		status int
		stderr string
	}{
		{[]string{"derive", "adr"}, exitOK, ""},
		{[]string{}, exitBadInput, "usage"},
		{[]string{"frobnicate"}, exitBadInput, "unknown command"},
		{[]string{"derive"}, exitBadInput, "derive takes one model"},
		{[]string{"derive", "adr", "--format", "pdf"}, exitBadInput, "unknown format"},
		{[]string{"derive", "adr", "--method", "upwind"}, exitBadInput, "unknown method"},
		{[]string{"derive", filepath.Join(dir, "missing.fw")}, exitBadInput, "cannot read model"},
		{[]string{"solve", "heat"}, exitBadInput, "give --steps N or --until T"},
		{[]string{"solve", "heat", "--steps", "3", "--quiet"}, exitOK, ""},
		{[]string{"verify", "heat", "--quiet"}, exitBadInput, "give the comparison time with --until T"},
		{[]string{"solve", "adr", "--mesh", "span:0,1,0,1:8x8:quad"}, exitBadInput, "need simplex cells"},
		{[]string{"solve", "adr", "--out", "u.txt"}, exitBadInput, "unknown file type"},
		{[]string{"derive", syn}, exitBadInput, "syntax.fw:4:34: expected an expression after \"+\""},
		{[]string{"derive", bad}, exitBadInput, "bad.fw:4:22: unknown identifier \"kapa\"\n    equation for c: -div(kapa*grad(c)) = 1\n                         ^~~~"},
	}
	for _, c := range cases {
		var out, errb bytes.Buffer
		st := run(c.args, &out, &errb)
		// A statement that did not parse must not cause follow-on errors
		// about what is missing.
		if strings.Contains(errb.String(), "no equation for unknown") {
			t.Errorf("%v: follow-on error after a syntax error: %q", c.args, errb.String())
		}
		if st != c.status {
			t.Errorf("%v: status %d, want %d (stderr %q)", c.args, st, c.status, errb.String())
		}
		if !strings.Contains(errb.String(), c.stderr) {
			t.Errorf("%v: stderr %q does not contain %q", c.args, errb.String(), c.stderr)
		}
	}
}

// TestDeriveWritesAtomically: -o writes the file, refuses to overwrite the
// model, and an input error leaves no file behind.
func TestDeriveWritesAtomically(t *testing.T) {
	dir := t.TempDir()
	model := filepath.Join(dir, "m.fw")
	_, src, _ := stdlib.Model("adr")
	os.WriteFile(model, src, 0o644)
	out := filepath.Join(dir, "d.tex")
	var o, e bytes.Buffer
	if st := run([]string{"derive", model, "--format", "latex", "-o", out}, &o, &e); st != exitOK {
		t.Fatalf("status %d: %s", st, e.String())
	}
	if b, _ := os.ReadFile(out); !bytes.Contains(b, []byte(`\begin{document}`)) {
		t.Errorf("no LaTeX document written")
	}
	if st := run([]string{"derive", model, "-o", model}, &o, &e); st != exitBadInput {
		t.Errorf("overwriting the model: status %d", st)
	}
	if b, _ := os.ReadFile(model); !bytes.Equal(b, src) {
		t.Errorf("the model file was changed")
	}
	os.WriteFile(model, []byte("model m\ndimension 7\n"), 0o644)
	out2 := filepath.Join(dir, "never.txt")
	if st := run([]string{"derive", model, "-o", out2}, &o, &e); st != exitBadInput {
		t.Errorf("bad model: status %d", st)
	}
	if _, err := os.Stat(out2); err == nil {
		t.Errorf("a file was written for a bad model")
	}
}
