package lang

import (
	"github.com/formwright/formwright/lang/source"

	"errors"
	"fmt"
	"regexp"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/alecthomas/participle/v2"
	"github.com/alecthomas/participle/v2/lexer"
)

// Parse parses a model file. It always returns a *File holding every
// statement that parsed cleanly, together with all syntax errors found
// (sorted, at most one per line, capped at MaxErrors). The errors are nil
// when the file is well formed.
//
// Recovery works statement by statement: the token stream is cut before
// every statement keyword (every statement begins with one, and keywords
// are reserved), and each piece is parsed on its own, so an error in one
// statement never hides the errors of the next. Positions are unaffected:
// each piece keeps the tokens, and so the positions, of the whole file.
func Parse(filename string, src []byte) (*File, source.ErrorList) {
	f := &File{Name: filename, Src: src}
	// Errors are first collected without the cap, then sorted and reduced
	// to one per line, and only then capped, so the reported errors are
	// the first ones in the file.
	var raw source.ErrorList
	p := &parser{filename: filename, src: src, errs: &raw}
	if len(src) > MaxSize {
		raw.Append(source.Pos{File: filename, Line: 1, Col: 1}, source.Pos{}, fmt.Sprintf("the file has %d bytes; models are limited to %d", len(src), MaxSize), "")
	} else if p.lex() {
		lw := &lowerer{errs: &raw}
		for _, c := range p.chunks() {
			if p.errorLinesBefore(p.toks[c.from].Pos.Offset) > source.MaxErrors {
				break // the errors of this and later statements would be dropped anyway
			}
			if c.bad || c.empty || p.tooDeep(c) {
				continue
			}
			peek, err := lexer.Upgrade(&replay{toks: p.toks[c.from:c.to], eof: p.eofAt(c.to)}, tokWhite, tokComment)
			if err != nil {
				panic("lang: replaying tokens: " + err.Error())
			}
			s, err := stmtParser.ParseFromLexer(peek)
			if err != nil {
				p.syntaxError(c, err)
				continue
			}
			if st := lw.stmt(s); st != nil {
				f.Stmts = append(f.Stmts, st)
			}
		}
	}
	raw.RemoveMultiples()
	var errs source.ErrorList
	for _, e := range raw {
		errs.Add(e.Pos, e.End, e.Msg, e.Hint)
	}
	return f, errs
}

// MaxNesting bounds how deeply an expression may nest: brackets inside
// brackets, and the powers and signs of one statement (a^b^c and - -x nest
// to the right). Every stage that follows walks expressions recursively, so
// the bound keeps a hostile or generated model from exhausting the stack.
// Real models nest a few levels.
const MaxNesting = 100

// MaxSize is the largest model file, in bytes, that Parse accepts (a model
// is a page of text; a generated one may be longer).
const MaxSize = 4 << 20

// tooDeep reports, and marks as an error, a statement whose expressions
// nest deeper than MaxNesting.
func (p *parser) tooDeep(c chunk) bool {
	depth, chain := 0, 0
	for _, t := range p.toks[c.from:c.to] {
		switch t.Value {
		case "(", "[":
			depth++
		case ")", "]":
			depth--
		case "^", "-", "+":
			chain++
		}
		if depth > MaxNesting || chain > 10*MaxNesting {
			p.errs.Append(posOf(t.Pos), tokEnd(t), fmt.Sprintf("the expression nests too deeply (more than %d brackets, or more than %d powers and signs in one statement)", MaxNesting, 10*MaxNesting), "split it into several given statements")
			return true
		}
	}
	return false
}

// errorLinesBefore counts the distinct lines holding errors that start
// before offset off.
func (p *parser) errorLinesBefore(off int) int {
	lines := map[int]bool{}
	for _, e := range *p.errs {
		if e.Pos.Offset < off {
			lines[e.Pos.Line] = true
		}
	}
	return len(lines)
}

// parser holds the state of one Parse call.
type parser struct {
	filename string
	src      []byte
	toks     []lexer.Token // every token, elided ones included, ending with EOF
	badTok   []bool        // token i had a lexical error
	errs     *source.ErrorList
}

// chunk is the token range [from, to) of one statement.
type chunk struct {
	from, to int
	bad      bool // holds a token with a lexical error (already reported)
	empty    bool // holds only whitespace and comments
}

// replay is a lexer.Lexer that hands out a slice of already lexed tokens,
// then EOF.
type replay struct {
	toks []lexer.Token
	eof  lexer.Token
	i    int
}

func (r *replay) Next() (lexer.Token, error) {
	if r.i < len(r.toks) {
		r.i++
		return r.toks[r.i-1], nil
	}
	return r.eof, nil
}

func (p *parser) eofAt(i int) lexer.Token {
	return lexer.Token{Type: lexer.EOF, Pos: p.toks[i].Pos}
}

func elided(t lexer.Token) bool { return t.Type == tokWhite || t.Type == tokComment }

// tokEnd returns the position just after token t.
func tokEnd(t lexer.Token) source.Pos {
	p := t.Pos
	p.Advance(t.Value)
	return posOf(p)
}

// lex tokenises the whole file and reports unknown characters and malformed
// numbers. It returns false if the lexer itself failed (which the catch-all
// Invalid rule should prevent).
func (p *parser) lex() bool {
	l, err := modelLexer.LexString(p.filename, string(p.src))
	if err == nil {
		p.toks, err = lexer.ConsumeAll(l)
	}
	if err != nil {
		pos := source.Pos{File: p.filename}
		var perr participle.Error
		if errors.As(err, &perr) {
			pos = posOf(perr.Position())
		}
		p.errs.Append(pos, source.Pos{}, err.Error(), "")
		return false
	}
	p.badTok = make([]bool, len(p.toks))
	lastLine, lines := 0, 0
	report := func(t lexer.Token, msg, hint string) {
		// One lexical error per line, and no more lines than can be shown.
		if t.Pos.Line == lastLine || lines > source.MaxErrors {
			return
		}
		lastLine, lines = t.Pos.Line, lines+1
		p.errs.Append(posOf(t.Pos), tokEnd(t), msg, hint)
	}
	for i, t := range p.toks {
		switch t.Type {
		case tokInvalid:
			p.badTok[i] = true
			msg, hint := unknownChar(t.Value)
			report(t, msg, hint)
		case tokNumber:
			if msg, hint := checkNumber(t.Value); msg != "" {
				p.badTok[i] = true
				report(t, msg, hint)
			}
		}
	}
	return true
}

func unknownChar(s string) (msg, hint string) {
	r, _ := utf8.DecodeRuneInString(s)
	if r == utf8.RuneError && len(s) == 1 {
		return fmt.Sprintf("invalid UTF-8 byte 0x%02x", s[0]), ""
	}
	msg = fmt.Sprintf("unknown character %q", s)
	switch {
	case r == ';':
		hint = "statements need no terminator: each one ends where the next keyword begins"
	case r == '{' || r == '}':
		hint = `group with "(" and ")", write vectors with "[" and "]"`
	case r == '·' || r == '⋅':
		hint = `write the dot product as "."`
	case r == '∇':
		hint = `write the gradient as grad(...)`
	case unicode.IsLetter(r):
		hint = "names are made of ASCII letters, digits and _"
	}
	return msg, hint
}

var identRE = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*$`)

var numberRE = regexp.MustCompile(`^[0-9]+(\.[0-9]+)?([eE][+-]?[0-9]+)?$`)

// checkNumber validates the text of a Number token; it returns an empty
// message when the number is well formed.
func checkNumber(s string) (msg, hint string) {
	if numberRE.MatchString(s) {
		return "", ""
	}
	if s[0] == '.' {
		return `a number cannot start with "."`, fmt.Sprintf("write 0%s", s)
	}
	i := 0
	for i < len(s) && s[i] >= '0' && s[i] <= '9' {
		i++
	}
	if i < len(s) && s[i] == '.' {
		j := i + 1
		for j < len(s) && s[j] >= '0' && s[j] <= '9' {
			j++
		}
		if j == i+1 {
			return fmt.Sprintf(`a number needs digits after "." in %q`, s), fmt.Sprintf("write %s0 or %s", s[:i+1], s[:i])
		}
		i = j
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		j := i + 1
		if j < len(s) && (s[j] == '+' || s[j] == '-') {
			j++
		}
		k := j
		for k < len(s) && s[k] >= '0' && s[k] <= '9' {
			k++
		}
		if k == j {
			return fmt.Sprintf("the exponent of %q has no digits", s), ""
		}
	}
	if j := strings.IndexFunc(s, func(r rune) bool { return r < '0' || r > '9' }); j > 0 && identRE.MatchString(s[j:]) {
		return fmt.Sprintf("malformed number %q", s), fmt.Sprintf("write %s*%s for a product; a name must begin with a letter or _", s[:j], s[j:])
	}
	return fmt.Sprintf("malformed number %q", s), "a name must begin with a letter or _"
}

// isStmtStart reports whether token i begins a statement. "tau" does not
// when it is a module name in a use statement (after "use" or a comma of
// one).
func (p *parser) isStmtStart(i int, inUse bool, prev *lexer.Token) bool {
	t := p.toks[i]
	if t.Type != tokKeyword || !stmtKeywords[t.Value] {
		return false
	}
	if t.Value == "tau" && inUse && prev != nil && (prev.Value == "use" || prev.Value == ",") {
		return false
	}
	return true
}

// chunks cuts the token stream before every statement keyword.
func (p *parser) chunks() []chunk {
	var out []chunk
	cur := chunk{from: 0, empty: true}
	inUse := false
	var prev *lexer.Token
	last := len(p.toks) - 1 // the EOF token
	for i := 0; i < last; i++ {
		t := &p.toks[i]
		if elided(*t) {
			continue
		}
		if p.isStmtStart(i, inUse, prev) {
			if i > cur.from {
				cur.to = i
				out = append(out, cur)
			}
			cur = chunk{from: i, empty: true}
			inUse = t.Value == "use"
		}
		cur.empty = false
		if p.badTok[i] {
			cur.bad = true
		}
		prev = t
	}
	cur.to = last
	if cur.to > cur.from {
		out = append(out, cur)
	}
	return out
}

// syntaxError turns a participle error for chunk c into an Error in our
// own words.
func (p *parser) syntaxError(c chunk, err error) {
	var perr participle.Error
	if !errors.As(err, &perr) {
		p.errs.Append(posOf(p.toks[c.from].Pos), source.Pos{}, err.Error(), "")
		return
	}
	where := perr.Position()
	msg := perr.Message()
	expect := ""
	if k := strings.LastIndex(msg, " (expected "); k >= 0 && strings.HasSuffix(msg, ")") {
		expect = msg[k+len(" (expected ") : len(msg)-1]
	}
	// Find the offending token and the significant token before it.
	ti := -1
	var prev *lexer.Token
	for i := c.from; i <= c.to; i++ {
		t := p.toks[i]
		if i == c.to {
			t = p.eofAt(c.to)
		}
		if elided(t) {
			continue
		}
		if t.Pos.Offset >= where.Offset {
			ti = i
			break
		}
		prev = &p.toks[i]
	}
	if ti < 0 {
		p.errs.Append(posOf(where), source.Pos{}, cleanMessage(msg), "")
		return
	}
	tok := p.toks[ti]
	if ti == c.to {
		tok = p.eofAt(c.to)
	}
	d := &diagnosis{p: p, c: c, tok: tok, tokIndex: ti, prev: prev, expect: expect}
	d.explain()
	p.errs.Append(d.pos, d.end, d.msg, d.hint)
}

// diagnosis builds the message for one syntax error.
type diagnosis struct {
	p        *parser
	c        chunk
	tok      lexer.Token  // the token that does not fit (EOF at the end of the statement)
	tokIndex int          // its index in p.toks
	prev     *lexer.Token // the significant token before it, nil at the start
	expect   string       // participle's expectation, e.g. `":" Sum "=" Sum`

	pos, end  source.Pos
	msg, hint string
}

// atBreak reports whether the offending token is the end of the statement
// (the next statement's keyword or the end of the file) on a later line
// than the last good token. The error is then reported just after that
// token, on the line where something is missing.
func (d *diagnosis) atBreak() bool {
	return d.prev != nil && d.endOfStmt() && d.tok.Pos.Line > d.prev.Pos.Line
}

func (d *diagnosis) endOfStmt() bool { return d.tok.Type == lexer.EOF }

func (d *diagnosis) after() string {
	if d.prev == nil {
		return ""
	}
	return fmt.Sprintf(" after %q", d.prev.Value)
}

func (d *diagnosis) found() string {
	switch {
	case d.atBreak():
		return ""
	case d.endOfStmt() && d.tokIndex == len(d.p.toks)-1:
		return ", found the end of the file"
	case d.endOfStmt():
		return fmt.Sprintf(", found %q", d.p.toks[d.tokIndex].Value)
	}
	return fmt.Sprintf(", found %q", d.tok.Value)
}

// context is the statement text up to the last good token, with runs of
// white space and comments collapsed, e.g. "equation for c".
func (d *diagnosis) context() string {
	if d.prev == nil {
		return ""
	}
	var b strings.Builder
	gap := false
	for i := d.c.from; i < d.tokIndex; i++ {
		t := d.p.toks[i]
		if elided(t) {
			gap = true
			continue
		}
		if gap && b.Len() > 0 {
			b.WriteByte(' ')
		}
		gap = false
		b.WriteString(t.Value)
	}
	s := b.String()
	if utf8.RuneCountInString(s) > 40 {
		return d.prev.Value
	}
	return s
}

var exprProductions = map[string]bool{
	"Sum": true, "Product": true, "Unary": true, "Power": true,
	"Postfix": true, "Primary": true,
}

// firstExpected splits off the first item of participle's expectation: a
// quoted literal, a parenthesised group, a production name or a <token>.
func firstExpected(s string) string {
	s = strings.TrimSpace(s)
	if s == "" {
		return ""
	}
	switch s[0] {
	case '"':
		if j := strings.IndexByte(s[1:], '"'); j >= 0 {
			return s[:j+2]
		}
	case '(':
		depth := 0
		for i, r := range s {
			switch r {
			case '(':
				depth++
			case ')':
				depth--
				if depth == 0 {
					return s[:i+1]
				}
			}
		}
	}
	if j := strings.IndexAny(s, " ("); j > 0 {
		return s[:j]
	}
	return s
}

func (d *diagnosis) explain() {
	d.pos, d.end = posOf(d.tok.Pos), tokEnd(d.tok)
	if d.atBreak() {
		d.pos, d.end = tokEnd(*d.prev), source.Pos{}
	}
	if d.endOfStmt() {
		d.end = source.Pos{}
	}
	first := firstExpected(d.expect)
	real := d.p.toks[d.tokIndex] // the token in the file (the next keyword when tok is the statement's end)
	if real.Type == tokKeyword && first != "" && !d.atBreak() {
		d.hint = fmt.Sprintf("%q is a reserved word", real.Value)
	}
	switch {
	case d.prev == nil && !(real.Type == tokKeyword && stmtKeywords[real.Value]):
		d.msg = "expected a statement" + d.found()
		d.hint = "every statement begins with one of: " + strings.Join(stmtKeywordList(), ", ")
		if real.Type == tokIdent {
			if s := source.Suggest(real.Value, stmtKeywordList()); s != "" {
				d.hint = fmt.Sprintf("did you mean %q?", s)
			}
		}
	case first == "":
		d.unexpected()
	case exprProductions[first]:
		d.msg = "expected an expression" + d.after()
		if d.prev != nil && (d.prev.Value == "=" || d.prev.Value == ":") && d.hint == "" && d.endOfStmt() {
			d.hint = "the right-hand side is missing"
		}
	case first == "Name" && d.prev != nil && (d.prev.Value == "scalar" || d.prev.Value == "vector"):
		d.msg = "expected an element name such as P1" + d.after() + d.found()
	case first == "Name":
		d.msg = "expected a name" + d.after() + d.found()
		if real.Type == tokKeyword && !d.atBreak() {
			d.hint = fmt.Sprintf("%q is a reserved word and cannot be used as a name", real.Value)
		}
	case first == "ModuleName":
		d.msg = "expected a module name" + d.after() + d.found()
	case first == "NumberLit":
		if d.prev != nil && d.prev.Value == "[" {
			d.msg = "expected a whole number (a component index)" + d.after() + d.found()
			d.hint = "components are picked with a literal index such as e[1]"
		} else {
			d.msg = "expected a number" + d.after() + d.found()
		}
	case first == `")"` || first == `"]"`:
		d.closing(first[1:2])
	case first == `":"` || first == `"="`:
		d.msg = fmt.Sprintf("missing %s after %q", first, d.context()) + d.found()
		d.missingHint(first)
	case first[0] == '"':
		d.msg = "expected " + first + d.after() + d.found()
	case first[0] == '(':
		alts := describeAlternatives(first)
		if len(alts) == 0 {
			d.msg = "unexpected " + describe(d.tok)
			return
		}
		d.msg = "expected " + orList(alts) + d.after() + d.found()
	default:
		d.msg = fmt.Sprintf("unexpected %s", describe(d.tok))
	}
}

// nameLists are the statements that take a comma-separated list of names.
var nameLists = map[string]bool{"sides": true, "use": true, "stabilise": true}

// inExpression reports whether an "=" (or the ":" of an equation) comes
// before the offending token in its statement, so it sits in an
// expression.
func (d *diagnosis) inExpression() bool {
	isEq := d.p.toks[d.c.from].Value == "equation"
	for i := d.c.from; i < d.tokIndex; i++ {
		if v := d.p.toks[i].Value; v == "=" || (isEq && v == ":") {
			return true
		}
	}
	return false
}

// describeAlternatives turns a participle group such as
// `("scalar" | "vector")` or `(FluxTarget | Name)` into words.
func describeAlternatives(group string) []string {
	inner := strings.TrimSuffix(strings.TrimPrefix(group, "("), ")")
	var out []string
	for _, alt := range strings.Split(inner, "|") {
		alt = strings.TrimSpace(alt)
		switch {
		case strings.HasPrefix(alt, `"`):
			out = append(out, alt)
		case alt == "Name" || alt == "<ident>":
			out = append(out, "a name")
		case alt == "FluxTarget":
			out = append(out, "flux(NAME)")
		case alt == "NumberLit" || alt == "<number>":
			out = append(out, "a number")
		case exprProductions[alt]:
			out = append(out, "an expression")
		default:
			return nil
		}
	}
	return out
}

// unexpected handles a complete statement followed by stray tokens.
func (d *diagnosis) unexpected() {
	d.msg = fmt.Sprintf("unexpected %s", describe(d.tok))
	if d.prev == nil {
		return
	}
	stmt := d.p.toks[d.c.from].Value
	switch {
	case stmt == "part" && d.tok.Value == "}":
		d.hint = "a condition compares two or more expressions: {x <= 0}, {-1 <= x < 0}"
	case stmt == "part" && d.tok.Type == tokIdent && d.tok.Pos.Line == d.prev.Pos.Line:
		d.hint = "join sets with cup (union), cap (intersection) or minus (difference)"
	case d.tok.Pos.Line > d.prev.Pos.Line && d.tok.Type == tokIdent:
		d.hint = "a new statement must begin with a keyword such as given or equation"
		if s := source.Suggest(d.tok.Value, stmtKeywordList()); s != "" {
			d.hint = fmt.Sprintf("did you mean %q?", s)
		}
	case endsOperand(*d.prev) && beginsOperand(d.tok) && d.inExpression():
		d.hint = fmt.Sprintf("an operator is missing between %q and %q", d.prev.Value, d.tok.Value)
	case d.tok.Type == tokIdent && nameLists[d.p.toks[d.c.from].Value]:
		d.hint = `separate the names with ","`
	case d.tok.Value == "=":
		d.hint = `a statement has only one "="`
	case d.tok.Value == ")" || d.tok.Value == "]":
		d.msg = fmt.Sprintf("unexpected %q: nothing to close", d.tok.Value)
	}
}

func (d *diagnosis) missingHint(what string) {
	stmt := d.p.toks[d.c.from].Value
	switch {
	case stmt == "at" && what == `"="` && d.tok.Value == "(":
		d.hint = "a boundary condition prescribes NAME or flux(NAME)"
	case stmt == "at" && what == `":"`:
		d.hint = "write at SIDE, SIDE: NAME = EXPR or at SIDE: flux(NAME) = EXPR"
	case stmt == "unknown" && what == `":"`:
		d.hint = "write unknown NAME: scalar ELEMENT or unknown NAME: vector ELEMENT"
	case stmt == "equation" && what == `"="`:
		d.hint = "an equation has the form LHS = RHS"
	case stmt == "part":
		d.hint = "write part NAME = SET; a set is a side or part name, a condition on the facet midpoint such as {x <= 0} or {-1 <= x < 0}, or sets joined by cup, cap and minus"
	}
}

// closing reports a missing ")" or "]", naming the bracket left open.
func (d *diagnosis) closing(closer string) {
	opener := "("
	if closer == "]" {
		opener = "["
	}
	depth := 0
	open := -1
	for i := d.tokIndex - 1; i >= d.c.from; i-- {
		switch d.p.toks[i].Value {
		case ")", "]":
			depth++
		case "(", "[":
			if depth == 0 {
				open = i
			}
			depth--
		}
		if open >= 0 {
			break
		}
	}
	commaOK := false
	if open >= 0 {
		before := d.p.prevSignificant(open, d.c.from)
		isCall := opener == "(" && before != nil && before.Type == tokIdent
		isList := opener == "[" && (before == nil || !endsOperand(*before))
		commaOK = isCall || isList
		o := d.p.toks[open].Pos
		d.hint = fmt.Sprintf("the %q at %d:%d is not closed", opener, o.Line, o.Column)
		if !commaOK && opener == "(" && d.tok.Value == "," {
			d.hint = "write a vector as [a, b]; parentheses only group"
		}
	}
	if commaOK && !d.endOfStmt() {
		d.msg = fmt.Sprintf("expected \",\" or %q%s%s", closer, d.after(), d.found())
		return
	}
	d.msg = fmt.Sprintf("missing %q%s%s", closer, d.after(), d.found())
}

func (p *parser) prevSignificant(i, from int) *lexer.Token {
	for j := i - 1; j >= from; j-- {
		if !elided(p.toks[j]) {
			return &p.toks[j]
		}
	}
	return nil
}

func endsOperand(t lexer.Token) bool {
	return t.Type == tokIdent || t.Type == tokNumber || t.Value == ")" || t.Value == "]"
}

func beginsOperand(t lexer.Token) bool {
	return t.Type == tokIdent || t.Type == tokNumber || t.Value == "(" || t.Value == "["
}

func describe(t lexer.Token) string {
	if t.Type == lexer.EOF {
		return "end of file"
	}
	return fmt.Sprintf("%q", t.Value)
}

func orList(items []string) string {
	if len(items) == 1 {
		return items[0]
	}
	return strings.Join(items[:len(items)-1], ", ") + " or " + items[len(items)-1]
}

func stmtKeywordList() []string {
	return []string{"model", "dimension", "sides", "use", "unknown", "given", "formula", "equation", "at", "part", "stabilise", "tau", "mean", "quadrature", "capture"}
}

// cleanMessage rewrites a participle message we have no better wording for:
// "token" and the grammar's production names are dropped.
func cleanMessage(msg string) string {
	msg = strings.Replace(msg, "unexpected token ", "unexpected ", 1)
	if k := strings.LastIndex(msg, " (expected "); k >= 0 {
		msg = msg[:k]
	}
	return strings.ReplaceAll(msg, `"<EOF>"`, "end of file")
}
