// Package expect reads the expected errors written inline in bad-input
// model files and compares them with the errors a stage reported. It is
// the one harness of the lang and compiler tests.
//
// An expectation is a comment on the line the error belongs to:
//
//	given a = [1, zeta]   # ERROR @15 "unknown identifier \"zeta\""
//
// @15 is the 1-based column (in runes) the error must be reported at, and
// the quoted text, a Go string literal, is a regular expression that the
// message must match. A line may carry several expectations. Every
// expected error must be reported at its line and column, and no other
// error may be reported: the style of the Go repository's test directory,
// with columns.
package expect

import (
	"fmt"
	"regexp"
	"strconv"
	"strings"

	"github.com/formwright/formwright/lang/source"
)

// Error is one expected error.
type Error struct {
	Line, Col int
	Msg       *regexp.Regexp
}

var mark = regexp.MustCompile(`#\s*ERROR\s+@(\d+)\s+("(?:[^"\\]|\\.)*")`)

// Parse reads the expectations of a file's text. A malformed expectation
// (an ERROR comment without a column or with a bad pattern) is an error.
func Parse(src []byte) ([]Error, error) {
	var out []Error
	for i, line := range strings.Split(string(src), "\n") {
		k := strings.Index(line, "# ERROR")
		if k < 0 {
			continue
		}
		ms := mark.FindAllStringSubmatch(line[k:], -1)
		if ms == nil {
			return nil, fmt.Errorf("line %d: malformed expectation (want # ERROR @COL \"regexp\")", i+1)
		}
		for _, m := range ms {
			col, _ := strconv.Atoi(m[1])
			pat, err := strconv.Unquote(m[2])
			if err != nil {
				return nil, fmt.Errorf("line %d: %v", i+1, err)
			}
			re, err := regexp.Compile(pat)
			if err != nil {
				return nil, fmt.Errorf("line %d: %v", i+1, err)
			}
			out = append(out, Error{Line: i + 1, Col: col, Msg: re})
		}
	}
	return out, nil
}

// Match compares the expected errors with the reported ones and returns
// one line per difference: an expectation that no error met, and an error
// that no expectation allowed. An empty result means they agree.
func Match(want []Error, got source.ErrorList) []string {
	var diffs []string
	used := make([]bool, len(got))
	for _, w := range want {
		found := false
		for i, e := range got {
			if !used[i] && e.Pos.Line == w.Line && e.Pos.Col == w.Col && w.Msg.MatchString(e.Msg) {
				found, used[i] = true, true
				break
			}
		}
		if !found {
			var near []string
			for _, e := range got {
				if e.Pos.Line == w.Line {
					near = append(near, fmt.Sprintf("@%d %q", e.Pos.Col, e.Msg))
				}
			}
			diffs = append(diffs, fmt.Sprintf("line %d: want an error @%d matching %q; got %v", w.Line, w.Col, w.Msg, near))
		}
	}
	for i, e := range got {
		if !used[i] {
			diffs = append(diffs, fmt.Sprintf("unexpected error %v", e))
		}
	}
	return diffs
}
