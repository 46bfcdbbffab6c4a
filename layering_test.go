package main

import (
	"go/build"
	"io/fs"
	"path/filepath"
	"strings"
	"testing"
)

// The one direction of the house (DEVELOPERS.md, "Rules of the house"):
// lang/source ← lang ← compiler/ir ← compiler ← printers ← back ends, and
// runtime sees only the lowered-form contract of the compiler. Each rule
// lists, for packages under a prefix, the project packages they may
// import; imports of test files do not count.
var layering = []struct {
	pkg   string   // a package, or a prefix ending in "/"
	allow []string // allowed imports: packages, or prefixes ending in "/"
}{
	{"lang/source", nil},
	{"lang", []string{"lang/source"}},
	{"compiler/ir", []string{"lang/source"}},
	{"compiler/notation", []string{"compiler/ir", "lang/source"}},
	{"compiler", []string{"compiler/ir", "compiler/notation", "lang", "lang/source", "runtime/cell", "runtime/quadrature", "runtime/element"}},
	{"compiler/render", []string{"compiler", "compiler/ir", "compiler/notation", "lang/source"}},
	{"compiler/gogen", []string{"compiler/ir", "compiler/notation", "lang/source", "runtime/cell", "runtime/quadrature", "runtime/element"}},
	{"compiler/", []string{"compiler/", "lang/", "runtime/cell", "runtime/quadrature", "runtime/element"}},
	{"runtime/cell", nil},
	{"runtime/quadrature", []string{"runtime/cell"}},
	{"runtime/element", []string{"runtime/cell", "runtime/quadrature"}},
	{"runtime/", []string{"runtime/", "compiler/ir", "lang/source"}},
	{"stdlib", nil},
}

// TestLayering reads the import graph of every package in the module and
// checks it against the rules above.
func TestLayering(t *testing.T) {
	const module = "github.com/formwright/formwright/"
	checked := 0
	filepath.WalkDir(".", func(path string, d fs.DirEntry, err error) error {
		if err != nil || !d.IsDir() {
			return err
		}
		if path != "." && (strings.HasPrefix(d.Name(), ".") || d.Name() == "testdata") {
			return filepath.SkipDir
		}
		bp, err := build.ImportDir(path, 0)
		if err != nil {
			return nil // no Go files
		}
		pkg := filepath.ToSlash(path)
		rule := -1
		for i, r := range layering {
			if pkg == r.pkg || (strings.HasSuffix(r.pkg, "/") && strings.HasPrefix(pkg, r.pkg)) {
				if rule < 0 || len(r.pkg) > len(layering[rule].pkg) {
					rule = i
				}
			}
		}
		if rule < 0 {
			return nil // the command, examples and generated kernel packages sit on top
		}
		checked++
		for _, imp := range bp.Imports {
			dep, ok := strings.CutPrefix(imp, module)
			if !ok {
				continue
			}
			allowed := false
			for _, a := range layering[rule].allow {
				if dep == a || (strings.HasSuffix(a, "/") && strings.HasPrefix(dep, a)) {
					allowed = true
				}
			}
			if !allowed {
				t.Errorf("%s imports %s, which its layer may not (rule %q)", pkg, dep, layering[rule].pkg)
			}
		}
		return nil
	})
	if checked < 20 {
		t.Errorf("only %d packages checked: the walk missed the tree", checked)
	}
}
