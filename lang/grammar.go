package lang

import (
	"github.com/alecthomas/participle/v2"
	"github.com/alecthomas/participle/v2/lexer"
)

// This file is the grammar. Each struct is one production; participle reads
// the struct tags (see the participle/v2 documentation). The structs are the
// raw syntax tree; lower.go turns them into the AST of ast.go, which is what
// the compiler walks. The grammar has no left recursion: binary operators
// are a head operand followed by a list of (operator, operand) pairs, folded
// to the left by the lowering step, except "^", whose exponent is parsed as
// a unary so it associates to the right. Every choice is decided by the next
// token, and the parser is built with lookahead 1, so an error is reported
// at the first token that cannot fit. The EBNF that participle derives from
// these structs is pinned in testdata/grammar.ebnf.

type sourceFile struct {
	Pos, EndPos lexer.Position
	Stmts       []*statement `parser:"@@*"`
}

type statement struct {
	Pos, EndPos lexer.Position
	Model       *modelDecl      `parser:"  @@"`
	Dimension   *dimensionDecl  `parser:"| @@"`
	Sides       *sidesDecl      `parser:"| @@"`
	Use         *useDecl        `parser:"| @@"`
	Unknown     *unknownDecl    `parser:"| @@"`
	Given       *givenDecl      `parser:"| @@"`
	Formula     *formulaDecl    `parser:"| @@"`
	Equation    *equationDecl   `parser:"| @@"`
	Boundary    *boundaryDecl   `parser:"| @@"`
	Stabilise   *stabiliseDecl  `parser:"| @@"`
	Tau         *tauDecl        `parser:"| @@"`
	Mean        *meanDecl       `parser:"| @@"`
	Quadrature  *quadratureDecl `parser:"| @@"`
	Part        *partDecl       `parser:"| @@"`
	Capture     *captureDecl    `parser:"| @@"`
}

type name struct {
	Pos, EndPos lexer.Position
	Text        string `parser:"@Ident"`
}

// moduleName is a name after "use": an identifier or the keyword "tau".
type moduleName struct {
	Pos, EndPos lexer.Position
	Text        string `parser:"@(Ident | \"tau\")"`
}

type modelDecl struct {
	Pos, EndPos lexer.Position
	Name        *name `parser:"\"model\" @@"`
}

type dimensionDecl struct {
	Pos, EndPos lexer.Position
	Dim         *numberLit `parser:"\"dimension\" @@"`
}

type sidesDecl struct {
	Pos, EndPos lexer.Position
	Names       []*name `parser:"\"sides\" @@ (\",\" @@)*"`
}

type useDecl struct {
	Pos, EndPos lexer.Position
	Names       []*moduleName `parser:"\"use\" @@ (\",\" @@)*"`
}

type unknownDecl struct {
	Pos, EndPos lexer.Position
	Name        *name  `parser:"\"unknown\" @@ \":\""`
	Rank        string `parser:"@(\"scalar\" | \"vector\")"`
	Element     *name  `parser:"@@"`
}

type givenDecl struct {
	Pos, EndPos lexer.Position
	Name        *name `parser:"\"given\" @@ \"=\""`
	Value       *sum  `parser:"@@"`
}

type formulaDecl struct {
	Pos, EndPos lexer.Position
	Name        *name   `parser:"\"formula\" @@ \"(\""`
	Params      []*name `parser:"( @@ (\",\" @@)* )? \")\" \"=\""`
	Body        *sum    `parser:"@@"`
}

type equationDecl struct {
	Pos, EndPos lexer.Position
	For         *name `parser:"\"equation\" \"for\" @@ \":\""`
	LHS         *sum  `parser:"@@ \"=\""`
	RHS         *sum  `parser:"@@"`
}

type boundaryDecl struct {
	Pos, EndPos lexer.Position
	Sides       []*name     `parser:"\"at\" @@ (\",\" @@)* \":\""`
	Flux        *fluxTarget `parser:"( @@"`
	Target      *name       `parser:"| @@ ) \"=\""`
	Value       *sum        `parser:"@@"`
}

type fluxTarget struct {
	Pos, EndPos lexer.Position
	Name        *name `parser:"\"flux\" \"(\" @@ \")\""`
}

type stabiliseDecl struct {
	Pos, EndPos lexer.Position
	Methods     []*name `parser:"\"stabilise\" @@ (\",\" @@)*"`
}

type tauDecl struct {
	Pos, EndPos lexer.Position
	For         *name `parser:"\"tau\" \"for\" @@ \"=\""`
	Value       *sum  `parser:"@@"`
}

// captureDecl is "capture for NAME = EXPR": the discontinuity-capturing
// diffusivity added to the stabilised forms of NAME's equation.
type captureDecl struct {
	Pos, EndPos lexer.Position
	For         *name `parser:"\"capture\" \"for\" @@ \"=\""`
	Value       *sum  `parser:"@@"`
}

type meanDecl struct {
	Pos, EndPos lexer.Position
	Target      *name `parser:"\"mean\" @@ \"=\""`
	Value       *sum  `parser:"@@"`
}

type quadratureDecl struct {
	Pos, EndPos lexer.Position
	Degree      *numberLit `parser:"\"quadrature\" @@"`
}

// partDecl is "part NAME = SET": a boundary part the model defines. A set
// is a chain of operands joined by cup (∪), cap (∩) and minus (∖), applied
// from left to right; an operand is a part name, a midpoint condition
// "{EXPR REL EXPR [REL EXPR ...]}" or a parenthesised set.
type partDecl struct {
	Pos, EndPos lexer.Position
	Name        *name    `parser:"\"part\" @@ \"=\""`
	Set         *partSet `parser:"@@"`
}

type partSet struct {
	Pos, EndPos lexer.Position
	Head        *partOperand `parser:"@@"`
	Tail        []*partTail  `parser:"@@*"`
}

type partTail struct {
	Pos, EndPos lexer.Position
	Op          string       `parser:"@(\"cup\" | \"cap\" | \"minus\")"`
	Operand     *partOperand `parser:"@@"`
}

type partOperand struct {
	Pos, EndPos lexer.Position
	Where       *partWhere `parser:"  @@"`
	Group       *partSet   `parser:"| \"(\" @@ \")\""`
	Name        *name      `parser:"| @@"`
}

type partWhere struct {
	Pos, EndPos lexer.Position
	Head        *sum       `parser:"\"{\" @@"`
	Tail        []*relTail `parser:"@@+ \"}\""`
}

type relTail struct {
	Pos, EndPos lexer.Position
	Rel         string `parser:"@(\"<=\" | \">=\" | \"<\" | \">\" | \"=\")"`
	Operand     *sum   `parser:"@@"`
}

// Expressions, lowest precedence first.

type sum struct {
	Pos, EndPos lexer.Position
	Head        *product   `parser:"@@"`
	Tail        []*sumTail `parser:"@@*"`
}

type sumTail struct {
	Pos, EndPos lexer.Position
	Op          string   `parser:"@(\"+\" | \"-\")"`
	Operand     *product `parser:"@@"`
}

type product struct {
	Pos, EndPos lexer.Position
	Head        *unary         `parser:"@@"`
	Tail        []*productTail `parser:"@@*"`
}

type productTail struct {
	Pos, EndPos lexer.Position
	Op          string `parser:"@(\"*\" | \"/\" | \".\")"`
	Operand     *unary `parser:"@@"`
}

type unary struct {
	Pos, EndPos lexer.Position
	Op          string `parser:"(  @(\"-\" | \"+\")"`
	Operand     *unary `parser:"   @@"`
	Power       *power `parser:"| @@ )"`
}

type power struct {
	Pos, EndPos lexer.Position
	Base        *postfix   `parser:"@@"`
	Exponent    *powerTail `parser:"@@?"`
}

type powerTail struct {
	Pos, EndPos lexer.Position
	Operand     *unary `parser:"\"^\" @@"`
}

type postfix struct {
	Pos, EndPos lexer.Position
	Operand     *primary     `parser:"@@"`
	Subscripts  []*subscript `parser:"@@*"`
}

type subscript struct {
	Pos, EndPos lexer.Position
	Index       *numberLit `parser:"\"[\" @@ \"]\""`
}

type primary struct {
	Pos, EndPos lexer.Position
	Number      *numberLit `parser:"  @@"`
	Ref         *reference `parser:"| @@"`
	Group       *group     `parser:"| @@"`
	List        *listLit   `parser:"| @@"`
}

type numberLit struct {
	Pos, EndPos lexer.Position
	Text        string `parser:"@Number"`
}

// reference is a name, or a call when an argument list follows.
type reference struct {
	Pos, EndPos lexer.Position
	Name        *name     `parser:"@@"`
	Call        *callArgs `parser:"@@?"`
}

type callArgs struct {
	Pos, EndPos lexer.Position
	Args        []*sum `parser:"\"(\" ( @@ (\",\" @@)* )? \")\""`
}

type group struct {
	Pos, EndPos lexer.Position
	Inner       *sum `parser:"\"(\" @@ \")\""`
}

type listLit struct {
	Pos, EndPos lexer.Position
	Elems       []*sum `parser:"\"[\" @@ (\",\" @@)* \"]\""`
}

var (
	fileParser = participle.MustBuild[sourceFile](
		participle.Lexer(modelLexer),
		participle.Elide(elidedTypes...),
		participle.UseLookahead(0),
	)
	stmtParser = mustProduction(participle.ParserForProduction[statement](fileParser))
)

func mustProduction[P any](p *participle.Parser[P], err error) *participle.Parser[P] {
	if err != nil {
		panic("lang: " + err.Error())
	}
	return p
}

// Grammar returns the EBNF of the model language as derived by participle
// from the grammar structs. Production names are the struct names with the
// first letter upper-cased; token classes are lower case.
func Grammar() string { return fileParser.String() }
