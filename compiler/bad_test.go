package compiler

import (
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// errorMark is an inline expectation in a bad-input file, in the manner of
// the Go repository's test directory: the line must produce an error whose
// message matches the quoted regular expression.
var errorMark = regexp.MustCompile(`#\s*ERROR\s+"((?:[^"\\]|\\.)*)"`)

// TestBadInputs checks every file in testdata/bad: each marked line gets
// its error, and no error appears on an unmarked line. Several errors in
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
			want := map[int]*regexp.Regexp{}
			for i, line := range strings.Split(string(src), "\n") {
				if m := errorMark.FindStringSubmatch(line); m != nil {
					pat, err := strconv.Unquote(`"` + m[1] + `"`)
					if err != nil {
						t.Fatalf("line %d: bad expectation: %v", i+1, err)
					}
					want[i+1] = regexp.MustCompile(pat)
				}
			}
			errs := checkErrors(path, string(src))
			got := map[int][]string{}
			for _, e := range errs {
				got[e.Pos.Line] = append(got[e.Pos.Line], e.Msg)
				if !e.Pos.IsValid() {
					t.Errorf("error without a position: %s", e.Msg)
				}
			}
			for line, re := range want {
				ok := false
				for _, msg := range got[line] {
					if re.MatchString(msg) {
						ok = true
					}
				}
				if !ok {
					t.Errorf("line %d: want error matching %q, got %q", line, re, got[line])
				}
			}
			for line, msgs := range got {
				if want[line] == nil {
					t.Errorf("line %d: unexpected error(s) %q", line, msgs)
				}
			}
		})
	}
}
