package mesh

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"testing"
)

// fuzzLimits keep each fuzz input cheap: a file may declare at most a few
// thousand points and cells, so no input can make the reader allocate
// more than a few hundred kilobytes.
var fuzzLimits = Limits{MaxPoints: 1 << 12, MaxCells: 1 << 12, MaxNodes: 1 << 14}

// The reader returns a mesh or a *FileError, never panics, on any input;
// a mesh it accepts is valid (positively oriented cells, "all" the
// topological boundary) and survives a write/read round trip unchanged.
// Seeds: every .vtu file under testdata (written by WriteVTU and by VTK).
func FuzzRead(f *testing.F) {
	seeds, _ := filepath.Glob(filepath.Join("testdata", "*.vtu"))
	more, _ := filepath.Glob(filepath.Join("testdata", "vtkwritten", "*.vtu"))
	for _, p := range append(seeds, more...) {
		b, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, src []byte) {
		m, err := ReadVTU(bytes.NewReader(src), ReadOptions{Limits: fuzzLimits})
		if err != nil {
			var fe *FileError
			if !errors.As(err, &fe) {
				t.Fatalf("error of type %T: %v", err, err)
			}
			return
		}
		if err := m.CheckOrientation(); err != nil {
			t.Fatalf("accepted a mesh with %v", err)
		}
		for _, enc := range []Encoding{Binary, ASCII} {
			var buf bytes.Buffer
			if err := WriteVTU(&buf, m, enc); err != nil {
				t.Fatal(err)
			}
			m2, err := ReadVTU(&buf, ReadOptions{Limits: fuzzLimits})
			if err != nil {
				t.Fatalf("round trip: %v", err)
			}
			if diff := meshDiff(m, m2); diff != "" {
				t.Fatalf("round trip: %s", diff)
			}
		}
	})
}

// The spec parser returns a Spec or a *SpecError with a column inside
// (or just past) the spec, never panics.
func FuzzParseSpec(f *testing.F) {
	for _, s := range []string{"span:0,1,0,1:4x4:tri", "span:0,1:8:graded=1.1", "span:0,1,0,1,0,1:2x2x2:hex", "rect::", "span:0,1", "a.vtu"} {
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
		if sp.Dim != 0 && (len(sp.N) == 0 || len(sp.Bounds) != 2*len(sp.N)) {
			t.Fatalf("inconsistent spec %+v", sp)
		}
	})
}
