package source

import "fmt"

// Pos is a position in a model source file.
//
// Line and Col are 1-based. Col counts runes (Unicode code points) from the
// start of the line, as the lexer of package lang does; Offset counts bytes from
// the start of the file and is 0-based. The zero Pos is invalid ("no
// position").
type Pos struct {
	File   string
	Offset int
	Line   int
	Col    int
}

// IsValid reports whether p holds a real position.
func (p Pos) IsValid() bool { return p.Line > 0 }

// String formats p as "file:line:col", "line:col" when File is empty, and
// "-" when p is invalid.
func (p Pos) String() string {
	if !p.IsValid() {
		if p.File != "" {
			return p.File
		}
		return "-"
	}
	if p.File == "" {
		return fmt.Sprintf("%d:%d", p.Line, p.Col)
	}
	return fmt.Sprintf("%s:%d:%d", p.File, p.Line, p.Col)
}

// Before reports whether p comes strictly before q in the same file
// (by offset). Positions in different files compare by file name.
func (p Pos) Before(q Pos) bool {
	if p.File != q.File {
		return p.File < q.File
	}
	return p.Offset < q.Offset
}

// Span is the source range of a node: From is its first character and To
// the position just after its last character (To is exclusive). Every
// statement and expression node embeds a Span, which gives it the Pos and
// End methods.
type Span struct {
	From, To Pos
}

// Pos returns the position of the first character of the node.
func (s Span) Pos() Pos { return s.From }

// End returns the position just after the last character of the node.
func (s Span) End() Pos { return s.To }
