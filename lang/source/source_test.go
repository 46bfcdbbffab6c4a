package source

import (
	"bytes"
	"fmt"
	"strings"
	"testing"
)

// The example caret from the design brief, built by hand: column 33 with
// an end at column 37 gives "^~~~" under "kapa".
func TestFormatCaret(t *testing.T) {
	line := "equation for c: a . grad(c) - div(kapa*grad(c)) + sigma*c = f"
	src := []byte("model m\n\n\n\n\n\n\n\n" + line + "\n")
	off := strings.Index(string(src), "kapa")
	var l ErrorList
	l.Add(Pos{"tank.fw", off, 9, 35}, Pos{"tank.fw", off + 4, 9, 39}, `unknown identifier "kapa"`, `did you mean "kappa"?`)
	var b bytes.Buffer
	l.Format(&b, map[string][]byte{"tank.fw": src})
	want := "tank.fw:9:35: unknown identifier \"kapa\"\n" +
		"    " + line + "\n" +
		"    " + strings.Repeat(" ", 34) + "^~~~\n" +
		"    hint: did you mean \"kappa\"?\n"
	if b.String() != want {
		t.Errorf("got\n%s\nwant\n%s", b.String(), want)
	}
	// Tabs before the column are kept so the caret lines up in a terminal.
	l = nil
	l.Add(Pos{"t.fw", 3, 1, 4}, Pos{}, "m", "")
	b.Reset()
	l.Format(&b, map[string][]byte{"t.fw": []byte("\t\tab")})
	if want := "t.fw:1:4: m\n    \t\tab\n    \t\t ^\n"; b.String() != want {
		t.Errorf("tabs: got %q want %q", b.String(), want)
	}
	// A position made by hand without an offset still finds its line; the
	// tildes stop at the end of the line.
	l = nil
	l.Add(Pos{File: "t.fw", Line: 2, Col: 3}, Pos{File: "t.fw", Line: 2, Col: 40}, "m", "h")
	b.Reset()
	l.Format(&b, map[string][]byte{"t.fw": []byte("one\ntwo three\n")})
	if want := "t.fw:2:3: m\n    two three\n      ^~~~~~~\n    hint: h\n"; b.String() != want {
		t.Errorf("by line: got %q want %q", b.String(), want)
	}
}

func TestErrorList(t *testing.T) {
	var l ErrorList
	if l.Err() != nil {
		t.Fatal("empty list must give a nil error")
	}
	for i := 0; i < 15; i++ {
		l.Add(Pos{"f", 100 - i, 15 - i, 1}, Pos{}, fmt.Sprintf("e%d", i), "")
	}
	if len(l) != MaxErrors+1 || l[MaxErrors].Msg != "too many errors" {
		t.Fatalf("cap: %d entries, last %q", len(l), l[len(l)-1].Msg)
	}
	l.Sort()
	if l[0].Msg != "e9" || l[MaxErrors].Msg != "too many errors" {
		t.Errorf("sort: first %q last %q", l[0].Msg, l[MaxErrors].Msg)
	}
	var m ErrorList
	m.Add(Pos{"f", 10, 2, 5}, Pos{}, "second on line 2", "")
	m.Add(Pos{"f", 6, 2, 1}, Pos{}, "first on line 2", "")
	m.Add(Pos{"f", 0, 1, 1}, Pos{}, "line 1", "")
	m.RemoveMultiples()
	if len(m) != 2 || m[0].Msg != "line 1" || m[1].Msg != "first on line 2" {
		t.Errorf("RemoveMultiples: %v", m)
	}
	if got := m.Error(); got != "f:1:1: line 1 (and 1 more error)" {
		t.Errorf("Error(): %q", got)
	}
}

func TestSuggest(t *testing.T) {
	cands := []string{"kappa", "sigma", "grad", "div", "x", "peclet"}
	cases := []struct{ in, want string }{
		{"kapa", "kappa"},    // one deletion
		{"kapap", "kappa"},   // one swap (adjacent transposition)
		{"sgma", "sigma"},    // one deletion
		{"grda", "grad"},     // one swap
		{"dvi", "div"},       // one swap
		{"pecelt", "peclet"}, // one swap
		{"kappa", ""},        // exact: nothing to suggest
		{"y", ""},            // distance 1 but the name has one letter
		{"velocity", ""},     // too far from everything
		{"gradd", "grad"},
	}
	for _, c := range cases {
		if got := Suggest(c.in, cands); got != c.want {
			t.Errorf("Suggest(%q) = %q, want %q", c.in, got, c.want)
		}
	}
	// Reference distances [memory, standard examples]: kitten/sitting is 3
	// (the usual Levenshtein example); ca/abc is 3 in the optimal string
	// alignment distance used here, whereas the unrestricted
	// Damerau-Levenshtein distance is 2 (the usual example of the
	// difference). Both recomputed by hand.
	if d := editDistance("kitten", "sitting"); d != 3 {
		t.Errorf("kitten/sitting: %d", d)
	}
	if d := editDistance("ca", "abc"); d != 3 {
		t.Errorf("ca/abc: %d", d)
	}
}

func TestPosString(t *testing.T) {
	if s := (Pos{File: "a.fw", Line: 3, Col: 7}).String(); s != "a.fw:3:7" {
		t.Error(s)
	}
	if s := (Pos{Line: 3, Col: 7}).String(); s != "3:7" {
		t.Error(s)
	}
	if (Pos{}).IsValid() || (Pos{}).String() != "-" {
		t.Error("zero Pos")
	}
}

// TestEscapeControl: control characters from a model file reach the
// terminal escaped, and the caret still stands under the error (ANSI
// escape sequences, ECMA-48, start with ESC, U+001B).
func TestEscapeControl(t *testing.T) {
	line := "given a = \x1b[2J + b"
	var l ErrorList
	l.Add(Pos{"c.fw", 0, 1, 18}, Pos{}, "unknown identifier \"\x1b[2J\"", "")
	var b bytes.Buffer
	l.Format(&b, map[string][]byte{"c.fw": []byte(line + "\n")})
	got := b.String()
	if strings.ContainsRune(got, '\x1b') {
		t.Fatalf("raw ESC in %q", got)
	}
	want := "c.fw:1:18: unknown identifier \"\\x1b[2J\"\n" +
		"    given a = \\x1b[2J + b\n" +
		"    " + strings.Repeat(" ", 20) + "^\n"
	if got != want {
		t.Errorf("got\n%q\nwant\n%q", got, want)
	}
}

// TestLongLineWindow: a very long source line is shown as a window around
// the error, and the caret still points at it.
func TestLongLineWindow(t *testing.T) {
	line := strings.Repeat("(", 500) + "zeta" + strings.Repeat(")", 500)
	var l ErrorList
	l.Add(Pos{"w.fw", 500, 1, 501}, Pos{"w.fw", 504, 1, 505}, `unknown identifier "zeta"`, "")
	var b bytes.Buffer
	l.Format(&b, map[string][]byte{"w.fw": []byte(line)})
	lines := strings.Split(b.String(), "\n")
	shown, caret := lines[1], lines[2]
	if n := len([]rune(shown)); n > maxShown+10 {
		t.Errorf("shown line has %d runes", n)
	}
	k := strings.IndexRune(caret, '^')
	if got := string([]rune(shown)[len([]rune(caret[:k])):][:4]); got != "zeta" {
		t.Errorf("caret under %q, want zeta\n%s\n%s", got, shown, caret)
	}
}
