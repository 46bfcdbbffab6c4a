package tape

import (
	"math"

	"github.com/formwright/formwright/compiler/ir"
)

// DualStackSize is the length of the stack buffer EvalGrad needs.
func (p *Program) DualStackSize() int { return 4 * (p.maxStack + p.nTemp) }

// EvalGrad runs the program in forward-mode automatic differentiation
// (dual numbers with three tangent directions, the Cartesian axes): out[k]
// receives expression k and grad[3k+i] its partial derivative along x_i.
// Only the coordinate slots carry a derivative; every other input (t, cell
// quantities, G, n, previous iterates) is treated as constant, so EvalGrad
// is meant for expressions of x and t such as exact solutions and boundary
// data. stack must have length at least DualStackSize(). No allocation.
//
// Forward-mode differentiation: Griewank & Walther, Evaluating
// Derivatives (SIAM, 2nd ed. 2008), ch. 3.
func (p *Program) EvalGrad(env, out, grad, stack []float64) {
	st := stack[:4*p.maxStack]
	temp := stack[4*p.maxStack : 4*(p.maxStack+p.nTemp)]
	sp := 0 // in dual entries
	for _, in := range p.code {
		switch in.op {
		case opConst:
			e := st[4*sp : 4*sp+4]
			e[0], e[1], e[2], e[3] = p.consts[in.arg], 0, 0, 0
			sp++
		case opLoad:
			e := st[4*sp : 4*sp+4]
			e[0], e[1], e[2], e[3] = env[in.arg], 0, 0, 0
			if in.arg >= SlotX && in.arg < SlotX+3 {
				e[1+in.arg-SlotX] = 1
			}
			sp++
		case opAdd:
			sp--
			a, b := st[4*sp-4:4*sp], st[4*sp:4*sp+4]
			a[0] += b[0]
			a[1] += b[1]
			a[2] += b[2]
			a[3] += b[3]
		case opMul:
			sp--
			a, b := st[4*sp-4:4*sp], st[4*sp:4*sp+4]
			av, bv := a[0], b[0]
			a[0] = av * bv
			for i := 1; i < 4; i++ {
				a[i] = a[i]*bv + av*b[i]
			}
		case opPowInt:
			a := st[4*sp-4 : 4*sp]
			n := int(in.arg)
			v := a[0]
			var d float64
			if n != 0 {
				d = float64(n) * powInt(v, n-1)
			}
			a[0] = powInt(v, n)
			scale(a, d)
		case opPow:
			sp--
			a, b := st[4*sp-4:4*sp], st[4*sp:4*sp+4]
			av, bv := a[0], b[0]
			v := math.Pow(av, bv)
			la := 0.0
			if b[1] != 0 || b[2] != 0 || b[3] != 0 {
				la = math.Log(av)
			}
			var da float64
			if av != 0 {
				da = bv * v / av
			} else {
				da = bv * math.Pow(av, bv-1)
			}
			for i := 1; i < 4; i++ {
				a[i] = da*a[i] + v*la*b[i]
			}
			a[0] = v
		case opFn:
			a := st[4*sp-4 : 4*sp]
			v, d := ir.Func(in.arg).ValueSlope(a[0])
			a[0] = v
			scale(a, d)
		case opMin, opMax:
			sp--
			a, b := st[4*sp-4:4*sp], st[4*sp:4*sp+4]
			takeB := b[0] < a[0]
			if in.op == opMax {
				takeB = b[0] > a[0]
			}
			if takeB {
				copy(a, b)
			}
		case opStore:
			sp--
			e := st[4*sp : 4*sp+4]
			out[in.arg] = e[0]
			grad[3*in.arg], grad[3*in.arg+1], grad[3*in.arg+2] = e[1], e[2], e[3]
		case opTmpSet:
			copy(temp[4*in.arg:4*in.arg+4], st[4*sp-4:4*sp])
		case opTmpGet:
			copy(st[4*sp:4*sp+4], temp[4*in.arg:4*in.arg+4])
			sp++
		}
	}
}

func scale(a []float64, d float64) {
	a[1] *= d
	a[2] *= d
	a[3] *= d
}
