package compiler

import (
	"os"
	"path/filepath"
	"testing"

	"github.com/formwright/formwright/lang/source/expect"
)

// TestBadInputs checks every file in testdata/bad against its inline
// expectations (package lang/source/expect): each marked error is reported
// at its line and column, and no other error appears. Several errors in
// one file are all reported.
func TestBadInputs(t *testing.T) {
	files, _ := filepath.Glob("testdata/bad/*.fw")
	if len(files) == 0 {
		t.Fatal("no bad-input files")
	}
	for _, path := range files {
		t.Run(filepath.Base(path), func(t *testing.T) {
			src, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			want, err := expect.Parse(src)
			if err != nil || len(want) == 0 {
				t.Fatalf("expectations: %v (%d found)", err, len(want))
			}
			errs := checkErrors(path, string(src))
			for _, e := range errs {
				if !e.Pos.IsValid() {
					t.Errorf("error without a position: %s", e.Msg)
				}
			}
			for _, d := range expect.Match(want, errs) {
				t.Error(d)
			}
		})
	}
}
