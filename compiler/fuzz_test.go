package compiler

import (
	"testing"

	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/stdlib"
)

// FuzzCheck runs the whole front end and the derivation on arbitrary text:
// it must never panic, every error must carry a position inside the file,
// and a model that checks must derive and lower for each method (or fail
// with an error, not a panic). The seed corpus is in
// testdata/fuzz/FuzzCheck (the standard models and the bad-input files).
func FuzzCheck(f *testing.F) {
	for _, n := range stdlib.Models() {
		_, src, _ := stdlib.Model(n)
		f.Add(string(src))
	}
	f.Fuzz(func(t *testing.T, src string) {
		if len(src) > 4000 {
			return
		}
		file, errs := lang.Parse("fuzz.fw", []byte(src))
		if file == nil {
			return
		}
		m, cerrs := Check(file, CheckOptions{Load: stdlib.Module})
		errs = append(errs, cerrs...)
		for _, e := range errs {
			if !e.Pos.IsValid() || (e.Pos.File == "fuzz.fw" && e.Pos.Offset > len(src)) {
				t.Fatalf("error with a bad position %v: %s", e.Pos, e.Msg)
			}
		}
		if len(errs) > 0 {
			return
		}
		d, err := Derive(m, AllMethods)
		if err != nil {
			return
		}
		for _, meth := range AllMethods {
			if meth != Galerkin && m.Tau[0] == nil {
				continue
			}
			d.Lower(meth)
		}
	})
}
