package compiler

import (
	"os"
	"path/filepath"
	"strings"
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

// The spellings of earlier versions say what to write instead (the
// hint beside the positioned error), so that an old model can be
// updated from the messages alone.
func TestRetiredSpellingsHint(t *testing.T) {
	errs := checkErrors("testdata/bad/retired.fw", mustRead(t, "testdata/bad/retired.fw"))
	want := map[string]string{
		"cell_diameter is": "write diam(K)",
		"cell_volume is":   "write meas(K)",
		"dt(...) is":       "write partial(u, t)",
		"diam takes":       "write diam(K), K being the cell",
	}
	for prefix, hint := range want {
		found := false
		for _, e := range errs {
			if strings.HasPrefix(e.Msg, prefix) {
				found = true
				if e.Hint != hint {
					t.Errorf("%q: hint %q, want %q", e.Msg, e.Hint, hint)
				}
			}
		}
		if !found {
			t.Errorf("no error starting %q", prefix)
		}
	}
}

func mustRead(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}
