package expect

import (
	"strings"
	"testing"

	"github.com/formwright/formwright/lang/source"
)

func TestParseAndMatch(t *testing.T) {
	src := []byte("model m\ngiven a = zeta   # ERROR @11 \"unknown identifier \\\"zeta\\\"\"\n")
	want, err := Parse(src)
	if err != nil || len(want) != 1 || want[0].Line != 2 || want[0].Col != 11 {
		t.Fatalf("Parse: %v, %v", want, err)
	}
	at := func(line, col int, msg string) *source.Error {
		return &source.Error{Pos: source.Pos{Line: line, Col: col}, Msg: msg}
	}
	if d := Match(want, source.ErrorList{at(2, 11, `unknown identifier "zeta"`)}); len(d) != 0 {
		t.Errorf("exact match reported %v", d)
	}
	// The harness must fail on a wrong column, a wrong message, a missing
	// error and an extra one.
	for name, got := range map[string]source.ErrorList{
		"column":  {at(2, 12, `unknown identifier "zeta"`)},
		"message": {at(2, 11, `unknown name "zeta"`)},
		"missing": nil,
		"extra":   {at(2, 11, `unknown identifier "zeta"`), at(1, 1, "other")},
	} {
		if d := Match(want, got); len(d) == 0 {
			t.Errorf("%s: no difference reported", name)
		}
	}
	if _, err := Parse([]byte("given a = 1 # ERROR \"no column\"")); err == nil || !strings.Contains(err.Error(), "malformed") {
		t.Errorf("an expectation without a column was accepted: %v", err)
	}
}
