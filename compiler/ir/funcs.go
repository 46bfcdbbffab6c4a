package ir

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/lang/source"
)

// Func names an elementary function of the model language.
type Func uint8

// Elementary functions.
const (
	Sin Func = iota
	Cos
	Tan
	Exp
	Log
	Sqrt
	Abs
	Tanh
	Sinh
	Cosh
	Coth
	Min
	Max
	Sign
	Norm // Euclidean norm of a vector argument
	numFuncs
)

// funcInfo is one row of the function table.
type funcInfo struct {
	name  string // model-language name, also the name in plain text
	arity int
	// latex is the LaTeX operator (\sin); "" means \operatorname{name}.
	latex string
	// goName and cName are what generated kernels call; "" where the
	// generators expand the function themselves (coth as 1/tanh, sign,
	// min, max) or where lowering removes it (norm).
	goName, cName string
	// value is f(x) for the one-argument functions.
	value func(x float64) float64
	// slope is f′(x) given x and v = f(x), for the one-argument functions.
	slope func(x, v float64) float64
	// rule builds f′(g) symbolically for the one-argument functions; nil
	// where the derivative is not elementary here (min, max and norm are
	// differentiated by the compiler through their definitions).
	rule func(p source.Pos, g Expr) Expr
}

// funcs is the one table of elementary functions: the checker reads the
// names, the compiler the derivative rules, the evaluators (ir.Eval, the
// runtime's coefficient tape) the values and slopes, the printers the
// LaTeX names and the back ends the names to call. Every path therefore
// agrees on what, say, sign(−0) is.
var funcs = [numFuncs]funcInfo{
	Sin: {name: "sin", arity: 1, latex: `\sin`, goName: "math.Sin", cName: "sin", value: math.Sin,
		slope: func(x, _ float64) float64 { return math.Cos(x) },
		rule:  func(p source.Pos, g Expr) Expr { return callOf(p, Cos, g) }},
	Cos: {name: "cos", arity: 1, latex: `\cos`, goName: "math.Cos", cName: "cos", value: math.Cos,
		slope: func(x, _ float64) float64 { return -math.Sin(x) },
		rule:  func(p source.Pos, g Expr) Expr { return Neg(p, callOf(p, Sin, g)) }},
	Tan: {name: "tan", arity: 1, latex: `\tan`, goName: "math.Tan", cName: "tan", value: math.Tan,
		slope: func(_, v float64) float64 { return 1 + v*v },
		rule:  func(p source.Pos, g Expr) Expr { return Sum(p, Int(p, 1), square(p, callOf(p, Tan, g))) }},
	Exp: {name: "exp", arity: 1, latex: `\exp`, goName: "math.Exp", cName: "exp", value: math.Exp,
		slope: func(_, v float64) float64 { return v },
		rule:  func(p source.Pos, g Expr) Expr { return callOf(p, Exp, g) }},
	Log: {name: "log", arity: 1, latex: `\log`, goName: "math.Log", cName: "log", value: math.Log,
		slope: func(x, _ float64) float64 { return 1 / x },
		rule:  func(p source.Pos, g Expr) Expr { return &Pow{At{p}, g, Int(p, -1)} }},
	Sqrt: {name: "sqrt", arity: 1, goName: "math.Sqrt", cName: "sqrt", value: math.Sqrt,
		slope: func(_, v float64) float64 { return 0.5 / v },
		rule: func(p source.Pos, g Expr) Expr {
			return Prod(p, Rat(p, 1, 2), &Pow{At{p}, g, Rat(p, -1, 2)})
		}},
	Abs: {name: "abs", arity: 1, goName: "math.Abs", cName: "fabs", value: math.Abs,
		slope: func(x, _ float64) float64 { return signOf(x) },
		rule:  func(p source.Pos, g Expr) Expr { return callOf(p, Sign, g) }},
	Tanh: {name: "tanh", arity: 1, latex: `\tanh`, goName: "math.Tanh", cName: "tanh", value: math.Tanh,
		slope: func(_, v float64) float64 { return 1 - v*v },
		rule:  func(p source.Pos, g Expr) Expr { return Sub(p, Int(p, 1), square(p, callOf(p, Tanh, g))) }},
	Sinh: {name: "sinh", arity: 1, latex: `\sinh`, goName: "math.Sinh", cName: "sinh", value: math.Sinh,
		slope: func(x, _ float64) float64 { return math.Cosh(x) },
		rule:  func(p source.Pos, g Expr) Expr { return callOf(p, Cosh, g) }},
	Cosh: {name: "cosh", arity: 1, latex: `\cosh`, goName: "math.Cosh", cName: "cosh", value: math.Cosh,
		slope: func(x, _ float64) float64 { return math.Sinh(x) },
		rule:  func(p source.Pos, g Expr) Expr { return callOf(p, Sinh, g) }},
	Coth: {name: "coth", arity: 1, latex: `\coth`, value: func(x float64) float64 { return 1 / math.Tanh(x) },
		slope: func(_, v float64) float64 { return 1 - v*v },
		rule:  func(p source.Pos, g Expr) Expr { return Sub(p, Int(p, 1), square(p, callOf(p, Coth, g))) }},
	Min:  {name: "min", arity: 2, latex: `\min`},
	Max:  {name: "max", arity: 2, latex: `\max`},
	Sign: {name: "sign", arity: 1, value: signOf, slope: func(float64, float64) float64 { return 0 }, rule: func(p source.Pos, _ Expr) Expr { return Int(p, 0) }},
	Norm: {name: "norm", arity: 1},
}

// signOf is the sign function of every evaluator: 1 for x > 0, −1 for
// x < 0, and x itself for ±0 and NaN, so a signed zero keeps its sign and
// NaN propagates (the IEEE 754 convention of copysign-free sign functions;
// common practice, no source).
func signOf(x float64) float64 {
	switch {
	case x > 0:
		return 1
	case x < 0:
		return -1
	}
	return x
}

func callOf(p source.Pos, f Func, g Expr) Expr { return &Call{At{p}, f, []Expr{g}} }

func square(p source.Pos, x Expr) Expr { return &Pow{At{p}, x, Int(p, 2)} }

func (f Func) String() string { return funcs[f].name }

// FuncByName maps a model-language function name to its Func.
func FuncByName(name string) (Func, bool) {
	for i := range funcs {
		if funcs[i].name == name {
			return Func(i), true
		}
	}
	return 0, false
}

// Arity is the number of arguments the function takes.
func (f Func) Arity() int { return funcs[f].arity }

// LaTeX is the function's LaTeX operator: \sin for the functions LaTeX
// defines, \operatorname{sqrt} and the like otherwise.
func (f Func) LaTeX() string {
	if l := funcs[f].latex; l != "" {
		return l
	}
	return `\operatorname{` + funcs[f].name + `}`
}

// GoName and CName are the library functions a generated kernel calls
// (math.Sin, sin); "" for the functions the generators write out
// themselves (coth, sign, min, max) and for norm, which lowering removes.
func (f Func) GoName() string { return funcs[f].goName }

// CName: see GoName.
func (f Func) CName() string { return funcs[f].cName }

// Unary reports whether f is a function of one scalar, with a value and a
// slope in the table (every function but min, max and norm).
func (f Func) Unary() bool { return funcs[f].value != nil }

// Value returns f(x) for a unary function. It panics for min, max and
// norm, which are not functions of one scalar.
func (f Func) Value(x float64) float64 {
	if funcs[f].value == nil {
		panic(fmt.Sprintf("ir: %v is not a function of one scalar", f))
	}
	return funcs[f].value(x)
}

// ValueSlope returns f(x) and f′(x) for a unary function (forward-mode
// automatic differentiation uses it). It panics like Value.
func (f Func) ValueSlope(x float64) (v, d float64) {
	v = f.Value(x)
	return v, funcs[f].slope(x, v)
}

// Derivative returns f′(g) as an expression, or nil when f has no rule
// of its own (min, max, norm).
func (f Func) Derivative(p source.Pos, g Expr) Expr {
	if funcs[f].rule == nil {
		return nil
	}
	return funcs[f].rule(p, g)
}
