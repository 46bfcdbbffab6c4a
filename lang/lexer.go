package lang

import (
	"github.com/alecthomas/participle/v2/lexer"
)

// Keywords lists the reserved words of the model language. They cannot be
// used as names, with one exception: a module name after "use" may be the
// keyword "tau", because the standard library has a module called tau.
var Keywords = []string{
	"model", "dimension", "sides", "use", "unknown", "scalar", "vector",
	"given", "formula", "equation", "for", "at", "flux", "stabilise", "tau",
	"mean", "quadrature", "part", "capture",
}

// stmtKeywords are the keywords that begin a statement. "tau" begins a
// statement only when it is not a module name in a use statement.
var stmtKeywords = map[string]bool{
	"model": true, "dimension": true, "sides": true, "use": true,
	"unknown": true, "given": true, "formula": true, "equation": true,
	"at": true, "stabilise": true, "tau": true, "mean": true, "quadrature": true,
	"part":    true,
	"capture": true,
}

// IsKeyword reports whether s is a reserved word.
func IsKeyword(s string) bool {
	for _, k := range Keywords {
		if k == s {
			return true
		}
	}
	return false
}

// The token classes. Whitespace and Comment are elided by the parser but
// kept in the token stream so that participle's EndPos lands exactly after
// the last character of a node. Number is deliberately greedy: it swallows
// anything that looks like the start of a number ("1.", ".5", "1e", "12ab")
// so the front end can say what is wrong with it instead of reporting a
// confusing token sequence; checkNumber then validates the text. Invalid
// catches any other character so lexing never fails.
var modelLexer = lexer.MustSimple([]lexer.SimpleRule{
	{Name: "Whitespace", Pattern: `[ \t\r\n]+`},
	{Name: "Comment", Pattern: `#[^\n]*`},
	{Name: "Keyword", Pattern: `(?:model|dimension|sides|use|unknown|scalar|vector|given|formula|equation|for|at|flux|stabilise|tau|mean|quadrature|part|capture)\b`},
	{Name: "Ident", Pattern: `[A-Za-z_][A-Za-z0-9_]*`},
	{Name: "Number", Pattern: `\.?[0-9](?:[eE][+-]|[0-9A-Za-z_.])*`},
	{Name: "Punct", Pattern: `<=|>=|[-+*/^.,:=()\[\]{}<>]`},
	{Name: "Invalid", Pattern: `(?s:.)`},
})

var (
	symbols     = modelLexer.Symbols()
	tokWhite    = symbols["Whitespace"]
	tokComment  = symbols["Comment"]
	tokKeyword  = symbols["Keyword"]
	tokIdent    = symbols["Ident"]
	tokNumber   = symbols["Number"]
	tokInvalid  = symbols["Invalid"]
	elidedTypes = []string{"Whitespace", "Comment"}
)
