package mesh

import (
	"errors"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
)

func TestParseSpec(t *testing.T) {
	sp, err := ParseSpec("span:0,1,0,2:128x64:quartered")
	if err != nil || sp.Dim != 2 || !slices.Equal(sp.Bounds, []float64{0, 1, 0, 2}) || !slices.Equal(sp.N, []int{128, 64}) || sp.Pattern != Quartered {
		t.Errorf("rect spec: %+v, %v", sp, err)
	}
	sp, err = ParseSpec("span:0,1:64:graded=1.05")
	if err != nil || sp.Grading != 1.05 || sp.N[0] != 64 {
		t.Errorf("interval spec: %+v, %v", sp, err)
	}
	sp, err = ParseSpec("span:0,1,0,1,0,1:2x3x4")
	if err != nil || sp.Pattern != Kuhn || !slices.Equal(sp.N, []int{2, 3, 4}) {
		t.Errorf("box spec: %+v, %v", sp, err)
	}
	if sp, err := ParseSpec("span:0,1,0,1:4x4"); err != nil || sp.Pattern != DiagonalUp {
		t.Errorf("default pattern: %+v %v", sp, err)
	}
	if sp, err := ParseSpec("meshes/a.VTU"); err != nil || sp.Path != "meshes/a.VTU" {
		t.Errorf("path: %+v %v", sp, err)
	}
	m, err := Load("span:0,1,0,1,0,1:2x2x2:hex")
	if err != nil || m.NumCells() != 8 {
		t.Errorf("Load box: %v", err)
	}
	for _, tc := range []struct {
		spec string
		col  int
		re   string
	}{
		{"span:0,1,0:4x4", 6, "want 2, 4 or 6 comma-separated bounds .*got 3"},
		{"span:0,1,0,a:4x4", 12, `bad bound "a"`},
		{"span:0,1,1,0:4x4", 12, "not greater"},
		{"span:0,1,0,1:4", 14, "2 bound pairs need 2 cell counts"},
		{"span:0,1,0,1:4x0", 16, `bad cell count "0"`},
		{"span:0,1,0,1:4x4:hex", 18, `unknown 2D pattern "hex"`},
		{"span:0,1,0,1:4x4:tri:x", 22, "unexpected field"},
		{"span:0,1,0,1", 13, "want span:BOUNDS:COUNTS"},
		{"span:0,1,0,1,0,1:2x2x2:quad", 24, `unknown 3D pattern "quad"`},
		{"span:0,1:8:graded=-2", 19, "bad grading"},
		{"span:0,1:8:fine", 12, "unknown 1D option"},
		// The spellings of earlier versions say what to write instead.
		{"rect:0,1,0,1:4x4:crossed", 1, `"rect" is the spelling of an earlier version: write span:0,1,0,1:4x4:quartered`},
		{"interval:0,1:8", 1, `write span:0,1:8$`},
		{"box:0,1,0,1,0,1:2x2x2:hex", 1, `write span:0,1,0,1,0,1:2x2x2:hex`},
		{"span:0,1,0,1:4x4:crossed", 18, `pattern "crossed" is the spelling of an earlier version: write quartered`},
		{"rectangle:0,1,0,1:4x4", 1, `unknown mesh generator "rectangle" \(want span:BOUNDS:COUNTS\)`},
		{"", 1, "empty"},
		{"meshes/a.mesh", 1, `mesh files are VTK XML unstructured grids ending in .vtu`},
	} {
		_, err := ParseSpec(tc.spec)
		var se *SpecError
		if !errors.As(err, &se) {
			t.Errorf("%q: want SpecError, got %v", tc.spec, err)
			continue
		}
		if se.Col != tc.col || !regexp.MustCompile(tc.re).MatchString(se.Msg) {
			t.Errorf("%q: got col %d %q, want col %d matching %q", tc.spec, se.Col, se.Msg, tc.col, tc.re)
		}
	}
	// Detail puts the caret under the column.
	_, err = ParseSpec("span:0,1,0,a:4x4")
	d := err.(*SpecError).Detail()
	lines := strings.Split(d, "\n")
	if len(lines) != 3 || strings.Index(lines[2], "^") != strings.Index(lines[1], ",a")+1 {
		t.Errorf("caret misplaced:\n%s", d)
	}
	if _, err := Load(filepath.Join(t.TempDir(), "missing.vtu")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
}
