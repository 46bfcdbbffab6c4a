package bench

import (
	"bytes"
	"flag"
	"os"
	"strings"
	"testing"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/gogen"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/stdlib"
)

var update = flag.Bool("update", false, "rewrite the generated kernel files")

// benchModel returns the file name and source of a benchmark model: "adr"
// is the standard model, anything else a file in this directory.
func benchModel(t testing.TB, name string) (string, []byte) {
	t.Helper()
	if name == "adr" {
		f, src, err := stdlib.Model("adr")
		if err != nil {
			t.Fatal(err)
		}
		return f, src
	}
	src, err := os.ReadFile(name)
	if err != nil {
		t.Fatal(err)
	}
	return name, src
}

func lowerSUPG(t testing.TB, name string) (string, *ir.LoweredForm) {
	t.Helper()
	file, src := benchModel(t, name)
	f, errs := lang.Parse(file, src)
	m, cerrs := compiler.Check(f, compiler.CheckOptions{Load: stdlib.Module})
	if len(errs)+len(cerrs) > 0 {
		var b strings.Builder
		append(errs, cerrs...).Format(&b, m.Sources)
		t.Fatal(b.String())
	}
	d, err := compiler.Derive(m, []compiler.Method{compiler.SUPG})
	if err != nil {
		t.Fatal(err)
	}
	lf, err := d.Lower(compiler.SUPG)
	if err != nil {
		t.Fatal(err)
	}
	return file, lf
}

var generated = []struct{ model, prefix, out string }{
	{"adr", "P1", "kernels_p1.go"},
	{"adr_q2.fw", "Q2", "kernels_q2.go"},
}

// TestRegenerate: the checked-in generated files are what the generator
// produces now (byte-identical).
func TestRegenerate(t *testing.T) {
	for _, g := range generated {
		file, lf := lowerSUPG(t, g.model)
		src, err := gogen.Generate([]*ir.LoweredForm{lf}, gogen.Options{
			Package: "bench", ModelFile: file, Prefix: g.prefix, Methods: []string{"supg"},
			CommandLine: "gen " + file + " -o " + g.out + " --package bench --prefix " + g.prefix + " --method supg",
		})
		if err != nil {
			t.Fatal(err)
		}
		if *update {
			if err := os.WriteFile(g.out, src, 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		old, err := os.ReadFile(g.out)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(old, src) {
			t.Errorf("%s is stale: regenerate with -update", g.out)
		}
	}
}
