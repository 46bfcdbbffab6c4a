package source

import (
	"bytes"
	"fmt"
	"io"
	"sort"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// MaxErrors is the number of errors an ErrorList keeps. Adding more records
// a single final "too many errors" entry and drops the rest, so one broken
// file cannot flood the output.
const MaxErrors = 10

// Error is one syntax or semantic error in a model file. Pos is where it is
// reported; End, when valid and on the same line, marks the end (exclusive)
// of the offending text so Format can underline it. Hint, when not empty,
// is printed on its own line (for example `did you mean "kappa"?`).
type Error struct {
	Pos, End Pos
	Msg      string
	Hint     string
}

// Error formats e as "file:line:col: msg", with control characters in
// the message escaped (Escape).
func (e *Error) Error() string {
	if !e.Pos.IsValid() && e.Pos.File == "" {
		return Escape(e.Msg)
	}
	return Escape(e.Pos.String() + ": " + e.Msg)
}

// Escape writes control characters (other than tab) and invalid UTF-8 as
// Go escapes (\x1b, \u2028), so that text from a model file cannot move
// the cursor, clear the screen or recolour a terminal when it is printed
// in an error message.
func Escape(s string) string {
	var b strings.Builder
	for _, r := range s {
		b.WriteString(escapeRune(r))
	}
	return b.String()
}

func escapeRune(r rune) string {
	switch {
	case r == '\t':
		return "\t"
	case r == utf8.RuneError, unicode.IsControl(r), r == '\u2028', r == '\u2029':
		q := strconv.QuoteRune(r)
		return q[1 : len(q)-1]
	}
	return string(r)
}

// tooMany is the message of the entry that closes a full list.
const tooMany = "too many errors"

// ErrorList collects the errors of a file: the parser's syntax errors and
// the checker's semantic errors share this type. The zero value is an empty
// list ready for use.
type ErrorList []*Error

// Add appends an error. Once the list holds MaxErrors errors, one more call
// appends a "too many errors" entry at pos and later calls are ignored.
func (l *ErrorList) Add(pos, end Pos, msg, hint string) {
	n := len(*l)
	if n > MaxErrors || (n == MaxErrors && (*l)[n-1].Msg == tooMany) {
		return
	}
	if n == MaxErrors {
		*l = append(*l, &Error{Pos: pos, Msg: tooMany})
		return
	}
	*l = append(*l, &Error{Pos: pos, End: end, Msg: msg, Hint: hint})
}

// Append appends an error without applying the cap. A caller that sorts
// and trims the list itself (the parser keeps the first error of each
// line, then caps) collects with Append.
func (l *ErrorList) Append(pos, end Pos, msg, hint string) {
	*l = append(*l, &Error{Pos: pos, End: end, Msg: msg, Hint: hint})
}

// Full reports whether the list has reached its cap, so callers can stop
// looking for more errors.
func (l ErrorList) Full() bool { return len(l) > MaxErrors && l[len(l)-1].Msg == tooMany }

// Len returns the number of entries.
func (l ErrorList) Len() int { return len(l) }

// Sort orders the errors by file, line, column and message (line and
// column rather than offset, so errors built by hand without an offset
// still sort right). A closing
// "too many errors" entry stays last.
func (l ErrorList) Sort() {
	body := l
	if l.Full() {
		body = l[:len(l)-1]
	}
	sort.SliceStable(body, func(i, j int) bool {
		a, b := body[i].Pos, body[j].Pos
		if a.File != b.File {
			return a.File < b.File
		}
		if a.Line != b.Line {
			return a.Line < b.Line
		}
		if a.Col != b.Col {
			return a.Col < b.Col
		}
		return body[i].Msg < body[j].Msg
	})
}

// RemoveMultiples sorts the list and keeps only the first error of each
// line, since later errors on the same line are usually consequences of the
// first.
func (l *ErrorList) RemoveMultiples() {
	l.Sort()
	var out ErrorList
	var last Pos
	for i, e := range *l {
		if i > 0 && e.Msg != tooMany && e.Pos.File == last.File && e.Pos.Line == last.Line {
			continue
		}
		last = e.Pos
		out = append(out, e)
	}
	*l = out
}

// Err returns l as an error, or nil when l is empty.
func (l ErrorList) Err() error {
	if len(l) == 0 {
		return nil
	}
	return l
}

// Error returns the first error and a count of the others.
func (l ErrorList) Error() string {
	switch len(l) {
	case 0:
		return "no errors"
	case 1:
		return l[0].Error()
	}
	more := len(l) - 1
	if l.Full() {
		return fmt.Sprintf("%s (and more errors)", l[0].Error())
	}
	if more == 1 {
		return fmt.Sprintf("%s (and 1 more error)", l[0].Error())
	}
	return fmt.Sprintf("%s (and %d more errors)", l[0].Error(), more)
}

// Format writes every error in the list, each as
//
//	file:line:col: message
//	    the source line
//	    ^~~~
//	    hint: the hint
//
// The source line is looked up in sources by the error's file name and
// line number; when it is missing only the first line is printed. The caret
// stands under Pos (columns count runes; tabs before it are kept so it
// lines up in a terminal); the tildes run to End when End is on the same
// line. A closing "too many errors" entry is printed without source.
func (l ErrorList) Format(w io.Writer, sources map[string][]byte) {
	for _, e := range l {
		fmt.Fprintln(w, e.Error())
		src, ok := sources[e.Pos.File]
		if ok && e.Pos.IsValid() && e.Msg != tooMany {
			if line, ok := sourceLine(src, e.Pos); ok {
				line, pos, end := window(strings.TrimRight(line, " \t\r"), e.Pos, e.End)
				fmt.Fprintf(w, "    %s\n", Escape(line))
				fmt.Fprintf(w, "    %s\n", caretLine(line, pos, end))
			}
		}
		if e.Hint != "" {
			fmt.Fprintf(w, "    hint: %s\n", Escape(e.Hint))
		}
	}
}

// maxShown is the most runes of a source line Format shows; a longer line
// is cut to a window around the error, with "…" where text was left out.
const maxShown = 120

// window cuts line to at most maxShown runes around column pos.Col and
// shifts the columns of pos and end to match.
func window(line string, pos, end Pos) (string, Pos, Pos) {
	r := []rune(line)
	if len(r) <= maxShown {
		return line, pos, end
	}
	from := max(0, min(pos.Col-1-maxShown/2, len(r)-maxShown))
	to := min(len(r), from+maxShown)
	out := string(r[from:to])
	shift := from
	if from > 0 {
		out = "…" + out
		shift--
	}
	if to < len(r) {
		out += "…"
	}
	pos.Col -= shift
	if end.IsValid() {
		end.Col -= shift
	}
	return out, pos, end
}

// sourceLine returns the text of line p.Line of src (without its
// newline). It goes by the line number rather than the offset, so a
// position built by hand with only Line and Col still finds its line.
func sourceLine(src []byte, p Pos) (string, bool) {
	line := 1
	start := 0
	for line < p.Line {
		i := bytes.IndexByte(src[start:], '\n')
		if i < 0 {
			return "", false
		}
		start += i + 1
		line++
	}
	end := bytes.IndexByte(src[start:], '\n')
	if end < 0 {
		return string(src[start:]), true
	}
	return string(src[start : start+end]), true
}

// caretLine builds the marker line: the prefix of line before the column
// becomes spaces (tabs are kept so the caret lines up), then "^" and "~" up
// to end when end lies on the same line.
func caretLine(line string, pos, end Pos) string {
	var b strings.Builder
	col := 1
	for _, r := range line {
		if col >= pos.Col {
			break
		}
		if r == '\t' {
			b.WriteByte('\t')
		} else {
			// An escaped control character takes the width of its escape.
			b.WriteString(strings.Repeat(" ", utf8.RuneCountInString(escapeRune(r))))
		}
		col++
	}
	for ; col < pos.Col; col++ { // position past the end of the line
		b.WriteByte(' ')
	}
	b.WriteByte('^')
	if end.IsValid() && end.Line == pos.Line && end.Col > pos.Col+1 {
		n := end.Col - pos.Col - 1
		if max := utf8.RuneCountInString(line) - pos.Col; n > max && max >= 0 {
			n = max
		}
		b.WriteString(strings.Repeat("~", n))
	}
	return b.String()
}

// Suggest returns the candidate closest to name in edit distance
// (insertions, deletions, substitutions and swaps of neighbouring
// characters each count one; the "optimal string alignment" distance of
// Damerau 1964, Commun. ACM 7(3)), provided the distance is at most 2 and
// smaller than the length of name, so a one-letter name is not "corrected"
// into an unrelated one. Ties go to the earliest candidate. It returns ""
// when nothing is close enough or when name itself is a candidate.
func Suggest(name string, candidates []string) string {
	best, bestD := "", 3
	limit := utf8.RuneCountInString(name)
	for _, c := range candidates {
		if c == name {
			return ""
		}
		d := editDistance(name, c)
		if d < bestD && d < limit {
			best, bestD = c, d
		}
	}
	return best
}

// editDistance is the optimal string alignment distance between a and b,
// counted on runes.
func editDistance(a, b string) int {
	x, y := []rune(a), []rune(b)
	// d[i][j] = distance between x[:i] and y[:j], three rolling rows.
	prev2 := make([]int, len(y)+1)
	prev := make([]int, len(y)+1)
	cur := make([]int, len(y)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(x); i++ {
		cur[0] = i
		for j := 1; j <= len(y); j++ {
			cost := 1
			if x[i-1] == y[j-1] {
				cost = 0
			}
			v := min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
			if i > 1 && j > 1 && x[i-1] == y[j-2] && x[i-2] == y[j-1] {
				v = min(v, prev2[j-2]+1)
			}
			cur[j] = v
		}
		prev2, prev, cur = prev, cur, prev2
	}
	return prev[len(y)]
}
