package lang

import (
	"github.com/alecthomas/participle/v2/lexer"

	"github.com/formwright/formwright/lang/source"
)

// posOf converts a participle position into a Pos.
func posOf(p lexer.Position) source.Pos {
	return source.Pos{File: p.Filename, Offset: p.Offset, Line: p.Line, Col: p.Column}
}

func spanOf(from, to lexer.Position) source.Span {
	return source.Span{From: posOf(from), To: posOf(to)}
}
