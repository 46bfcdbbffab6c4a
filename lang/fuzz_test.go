package lang

import (
	"github.com/formwright/formwright/lang/source"

	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

// FuzzParse checks, on arbitrary input, that Parse never panics, that every
// error has a position inside the file whose line and column agree with its
// offset, and that a file without errors prints back to text that parses
// to the same tree, and is parsed the same by the whole-file grammar.
// The seed corpus (testdata/fuzz/FuzzParse) holds the good test files and
// is kept in sync by TestFuzzCorpus.
func FuzzParse(f *testing.F) {
	f.Fuzz(fuzzOne)
}

func fuzzOne(t *testing.T, src []byte) {
	{
		file, errs := Parse("fuzz.fw", src)
		if file == nil {
			t.Fatal("nil file")
		}
		if len(errs) > source.MaxErrors+1 {
			t.Fatalf("%d errors, more than the cap", len(errs))
		}
		for _, e := range errs {
			if err := validPos(src, e.Pos); err != nil {
				t.Fatalf("error %q: %v", e.Msg, err)
			}
			if e.End.IsValid() {
				if err := validPos(src, e.End); err != nil {
					t.Fatalf("error %q end: %v", e.Msg, err)
				}
				if e.End.Offset < e.Pos.Offset {
					t.Fatalf("error %q ends before it starts", e.Msg)
				}
			}
			if e.Msg == "" {
				t.Fatal("empty message")
			}
		}
		var b bytes.Buffer
		errs.Format(&b, map[string][]byte{"fuzz.fw": src}) // must not panic
		if len(errs) > 0 {
			return
		}
		checkPositions(t, file)
		checkRoundTrip(t, file)
		whole, err := fileParser.ParseBytes("fuzz.fw", src)
		if err != nil {
			t.Fatalf("statement-wise parse succeeded, whole-file parse failed: %v", err)
		}
		lw := &lowerer{errs: new(source.ErrorList)}
		g := &File{}
		for _, s := range whole.Stmts {
			g.Stmts = append(g.Stmts, lw.stmt(s))
		}
		if dump(g) != dump(file) {
			t.Fatalf("whole-file tree differs:\n%s\nstatement-wise:\n%s", dump(g), dump(file))
		}
	}
}

// TestFuzzCorpus keeps the seed corpus equal to the good files (and the bad
// ones, which exercise recovery); -update rewrites it.
func TestFuzzCorpus(t *testing.T) {
	paths := goodFiles(t)
	bad, _ := filepath.Glob("testdata/bad/*.fw")
	paths = append(paths, bad...)
	for _, p := range paths {
		src, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		want := []byte(fmt.Sprintf("go test fuzz v1\n[]byte(%s)\n", strconv.Quote(string(src))))
		name := "testdata/fuzz/FuzzParse/" + filepath.Base(filepath.Dir(p)) + "_" + filepath.Base(p)
		if *update {
			if err := os.MkdirAll(filepath.Dir(name), 0o755); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(name, want, 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		got, err := os.ReadFile(name)
		if err != nil || !bytes.Equal(got, want) {
			t.Errorf("%s is missing or stale (run go test -update)", name)
		}
	}
}
