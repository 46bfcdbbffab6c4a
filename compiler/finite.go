package compiler

import (
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
	"github.com/formwright/formwright/lang/source"
)

// checkFinite reports every constant subexpression of the model that does
// not evaluate to a finite float64 (1/0, 1e400, log(−1), or a
// coefficient defined by one): the innermost such subexpression of each
// statement, at its position. Kernels compute in float64, so such a
// constant would only surface later as a NaN or an infinity in the
// assembled system.
func (c *checker) checkFinite() {
	consts := map[string]*constVal{}
	var value func(e ir.Expr) *constVal
	value = func(e ir.Expr) *constVal { return c.constValue(e, consts, value) }
	check := func(e ir.Expr) {
		if e == nil {
			return
		}
		reported := false
		ir.InspectOnce(e, func(x ir.Expr) bool {
			if reported {
				return false
			}
			v := value(x)
			if v == nil || !v.bad {
				return true
			}
			if _, ok := x.(*ir.Sym); ok {
				return false // the coefficient's own definition is reported
			}
			// Report the innermost bad node: one whose children are fine.
			for _, k := range ir.Children(x) {
				if kv := value(k); kv != nil && kv.bad {
					return true
				}
			}
			what := "the constant " + notation.Expr(x, notation.Syntax, notation.Names{})
			if len(what) > 60 {
				what = "this constant"
			}
			c.errorf(x.Pos(), source.Pos{}, "a coefficient must evaluate to a finite number (float64 reaches about 1.8e308)", "%s is %v, not a finite number", what, v.v)
			reported = true
			return false
		})
	}
	for _, cf := range c.m.Coefs {
		check(cf.Def)
	}
	for _, eq := range c.m.Equations {
		check(eq.Written)
		check(eq.Source)
	}
	for _, bc := range c.m.BCs {
		check(bc.Value)
	}
	for _, t := range c.m.Tau {
		check(t)
	}
	for _, t := range c.m.Capture {
		check(t)
	}
	for _, mc := range c.m.Means {
		check(mc.Value)
	}
}

// constVal is the float64 value of a constant scalar expression; bad
// marks a value that is not finite.
type constVal struct {
	v   float64
	bad bool
}

// constValue evaluates e when it is a constant scalar (numbers, π,
// constant coefficients, and arithmetic and elementary functions of
// them); nil otherwise. Coefficient values are memoised by name.
func (c *checker) constValue(e ir.Expr, consts map[string]*constVal, value func(ir.Expr) *constVal) *constVal {
	mk := func(v float64) *constVal { return &constVal{v, math.IsNaN(v) || math.IsInf(v, 0)} }
	if e.Rank() != 0 {
		return nil
	}
	switch e := e.(type) {
	case *ir.Num:
		f, _ := e.Val.Float64()
		return mk(f)
	case *ir.Const:
		if e.Name == "pi" {
			return mk(math.Pi)
		}
	case *ir.Sym:
		if e.Kind != ir.Coefficient {
			return nil
		}
		if v, ok := consts[e.Name]; ok {
			return v
		}
		consts[e.Name] = nil // cycles are reported elsewhere
		cf := c.m.Coef(e.Name)
		if cf == nil || cf.Def == nil {
			return nil
		}
		v := value(cf.Def)
		consts[e.Name] = v
		return v
	case *ir.Add, *ir.Mul:
		acc := 0.0
		if _, ok := e.(*ir.Mul); ok {
			acc = 1
		}
		for _, k := range ir.Children(e) {
			kv := value(k)
			if kv == nil {
				return nil
			}
			if _, ok := e.(*ir.Mul); ok {
				acc *= kv.v
			} else {
				acc += kv.v
			}
		}
		return mk(acc)
	case *ir.Pow:
		b, x := value(e.Base), value(e.Exp)
		if b == nil || x == nil {
			return nil
		}
		return mk(math.Pow(b.v, x.v))
	case *ir.Call:
		var args []float64
		for _, a := range e.Args {
			av := value(a)
			if av == nil {
				return nil
			}
			args = append(args, av.v)
		}
		switch {
		case e.Fn == ir.Min && len(args) == 2:
			return mk(math.Min(args[0], args[1]))
		case e.Fn == ir.Max && len(args) == 2:
			return mk(math.Max(args[0], args[1]))
		case e.Fn.Unary() && len(args) == 1:
			return mk(e.Fn.Value(args[0]))
		}
	}
	return nil
}
