package mesh

import (
	"bytes"
	"strings"
	"testing"
)

// The reader must return a mesh or an error, never panic, on any input;
// a mesh it accepts must survive a write/read round trip unchanged.
func FuzzRead(f *testing.F) {
	f.Add(good)
	f.Add(edit(4, "vertices 99999999999"))
	f.Add(edit(9, "cells 2147483647"))
	f.Add("formwright-mesh 1\ndimension 3\ncell hexahedron\nvertices 0\ncells 0\nend\n")
	f.Fuzz(func(t *testing.T, src string) {
		m, err := Read(strings.NewReader(src))
		if err != nil {
			if _, ok := err.(*FormatError); !ok {
				t.Fatalf("error of type %T: %v", err, err)
			}
			return
		}
		var buf bytes.Buffer
		if err := Write(&buf, m); err != nil {
			t.Fatal(err)
		}
		m2, err := Read(&buf)
		if err != nil || !equalMesh(m, m2) {
			t.Fatalf("round trip: %v", err)
		}
	})
}

// The spec parser returns a Spec or a *SpecError with a column inside
// (or just past) the spec, never panics.
func FuzzParseSpec(f *testing.F) {
	for _, s := range []string{"rect:0,1,0,1:4x4:tri", "interval:0,1:8:graded=1.1", "box:0,1,0,1,0,1:2x2x2:hex", "rect::", "box:0,1"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		sp, err := ParseSpec(s)
		if err != nil {
			se, ok := err.(*SpecError)
			if !ok || se.Col < 1 || se.Col > len(s)+1 {
				t.Fatalf("bad error %T %v", err, err)
			}
			return
		}
		if sp.Kind != "" && (len(sp.N) == 0 || len(sp.Bounds) != 2*len(sp.N)) {
			t.Fatalf("inconsistent spec %+v", sp)
		}
	})
}
