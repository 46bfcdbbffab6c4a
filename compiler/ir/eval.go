package ir

import (
	"fmt"
	"math"
)

// Env supplies the values of the leaves of a lowered scalar expression.
type Env interface {
	Coord(axis int) float64
	Time() float64
	CellQ(q *CellQ) float64
	FieldD(f *FieldD) float64
}

// Eval evaluates a lowered scalar expression by walking the tree. It is the
// slow, obviously-correct evaluator that tests use as a reference; the
// runtime compiles expressions to an instruction tape instead.
func Eval(e Expr, env Env) float64 {
	switch e := e.(type) {
	case *Num:
		f, _ := e.Val.Float64()
		return f
	case *Const:
		if e.Name == "pi" {
			return math.Pi
		}
	case *Coord:
		return env.Coord(e.Axis)
	case *Time:
		return env.Time()
	case *CellQ:
		return env.CellQ(e)
	case *FieldD:
		return env.FieldD(e)
	case *Add:
		s := 0.0
		for _, t := range e.Terms {
			s += Eval(t, env)
		}
		return s
	case *Mul:
		p := 1.0
		for _, f := range e.Factors {
			p *= Eval(f, env)
		}
		return p
	case *Pow:
		b, x := Eval(e.Base, env), Eval(e.Exp, env)
		if n, ok := e.Exp.(*Num); ok && n.Val.IsInt() && n.Val.Num().IsInt64() {
			return powi(b, n.Val.Num().Int64())
		}
		return math.Pow(b, x)
	case *Call:
		return callFloat(e.Fn, Eval(e.Args[0], env), e.Args, env)
	case *Named:
		return Eval(e.X, env)
	}
	panic(fmt.Sprintf("ir: Eval of %T (only lowered scalar expressions evaluate)", e))
}

func powi(b float64, n int64) float64 {
	if n < 0 {
		return 1 / powi(b, -n)
	}
	r := 1.0
	for ; n > 0; n-- {
		r *= b
	}
	return r
}

func callFloat(fn Func, x float64, args []Expr, env Env) float64 {
	switch fn {
	case Min:
		return math.Min(x, Eval(args[1], env))
	case Max:
		return math.Max(x, Eval(args[1], env))
	case Norm:
		panic("ir: Eval: function norm needs lowering first")
	}
	return fn.Value(x)
}
