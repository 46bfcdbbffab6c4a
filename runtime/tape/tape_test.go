package tape

import (
	"math"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
)

// ξ(α) = coth α − 1/α, the optimal upwind function (Christie, Griffiths,
// Mitchell & Zienkiewicz 1976; Brooks & Hughes 1982): published values
// ξ(0.1) = 0.033311132253990, ξ(1) = 0.313035285499331,
// ξ(10) = 0.900000004122307 (testdata/REFERENCES.md, [checked]). Tolerance 1e-14:
// the values are printed to 15 digits; at α = 0.1 coth α − 1/α cancels
// about two digits.
func TestTapeOptimalUpwindFunction(t *testing.T) {
	alpha := &ir.CellQ{Q: ir.Diameter} // any input slot will do
	xi := add(call(ir.Coth, alpha), mul(num(-1, 1), pow(alpha, num(-1, 1))))
	s := &Slots{}
	p := MustCompile([]ir.Expr{xi}, s)
	if p.Deps(0) != DepCell {
		t.Errorf("deps %v, want DepCell", p.Deps(0))
	}
	env := make([]float64, s.Len())
	out := make([]float64, 1)
	stack := make([]float64, p.StackSize())
	for _, c := range []struct{ a, want, tol float64 }{
		{0.1, 0.033311132253990, 1e-14},
		{1, 0.313035285499331, 1e-15},
		{10, 0.900000004122307, 1e-15},
	} {
		env[SlotCellDiameter] = c.a
		p.Eval(env, out, stack)
		if math.Abs(out[0]-c.want) > c.tol {
			t.Errorf("ξ(%v) = %.15f, want %.15f", c.a, out[0], c.want)
		}
	}
	if a := testing.AllocsPerRun(100, func() { p.Eval(env, out, stack) }); a != 0 {
		t.Errorf("Eval allocates %v", a)
	}
}

// Exact rationals are folded at compile time: (1/3 + 2/3)·π² − π·π is a
// single constant, and a whole expression of constants compiles to one
// push and one store.
func TestTapeConstantFolding(t *testing.T) {
	pi := &ir.Const{Name: "pi"}
	e := add(mul(add(num(1, 3), num(2, 3)), pow(pi, num(2, 1))), mul(num(-1, 1), pi, pi), num(7, 2))
	s := &Slots{}
	p := MustCompile([]ir.Expr{e}, s)
	if p.Len() != 2 {
		t.Errorf("tape has %d instructions, want 2 (push, store)", p.Len())
	}
	out := make([]float64, 1)
	p.Eval(make([]float64, s.Len()), out, make([]float64, p.StackSize()))
	if math.Abs(out[0]-3.5) > 1e-15 {
		t.Errorf("got %v, want 3.5", out[0])
	}
}

// A mixed expression against direct Go evaluation, and its gradient by
// EvalGrad against the hand-derived derivative (independent computation).
// u = sin(πx)·exp(y/2)·(1+z²)^(3/2) + max(x, y)·t + x^-2.
func TestTapeEvalAndGradient(t *testing.T) {
	pi := &ir.Const{Name: "pi"}
	e := add(
		mul(call(ir.Sin, mul(pi, coord(0))), call(ir.Exp, mul(num(1, 2), coord(1))), pow(add(num(1, 1), pow(coord(2), num(2, 1))), num(3, 2))),
		mul(call(ir.Max, coord(0), coord(1)), &ir.Time{}),
		pow(coord(0), num(-2, 1)),
	)
	s := &Slots{}
	p := MustCompile([]ir.Expr{e, coord(1)}, s)
	env := make([]float64, s.Len())
	out, grad := make([]float64, 2), make([]float64, 6)
	stack, dstack := make([]float64, p.StackSize()), make([]float64, p.DualStackSize())
	x, y, z, tt := 0.3, 0.7, -0.4, 1.25
	env[SlotX], env[SlotX+1], env[SlotX+2], env[SlotT] = x, y, z, tt
	w := 1 + z*z
	want := math.Sin(math.Pi*x)*math.Exp(y/2)*math.Pow(w, 1.5) + math.Max(x, y)*tt + 1/(x*x)
	gx := math.Pi*math.Cos(math.Pi*x)*math.Exp(y/2)*math.Pow(w, 1.5) - 2/(x*x*x)
	gy := 0.5*math.Sin(math.Pi*x)*math.Exp(y/2)*math.Pow(w, 1.5) + tt // y > x
	gz := math.Sin(math.Pi*x) * math.Exp(y/2) * 1.5 * math.Sqrt(w) * 2 * z
	p.Eval(env, out, stack)
	if math.Abs(out[0]-want) > 1e-14*math.Abs(want) {
		t.Errorf("Eval = %.16g, want %.16g", out[0], want)
	}
	p.EvalGrad(env, out, grad, dstack)
	if math.Abs(out[0]-want) > 1e-14*math.Abs(want) || out[1] != y {
		t.Errorf("EvalGrad values %v, want %v, %v", out, want, y)
	}
	for k, g := range []float64{gx, gy, gz} {
		if math.Abs(grad[k]-g) > 1e-13*math.Max(1, math.Abs(g)) {
			t.Errorf("∂/∂x_%d = %.16g, want %.16g", k, grad[k], g)
		}
	}
	if grad[3] != 0 || grad[4] != 1 || grad[5] != 0 {
		t.Errorf("gradient of y = %v", grad[3:])
	}
}

func TestTapeRejects(t *testing.T) {
	s := &Slots{}
	for _, e := range []ir.Expr{
		&ir.Sym{Name: "kappa"},
		&ir.FieldD{Field: &ir.Field{Name: "u", Role: ir.Trial}},
		&ir.CellQ{Q: ir.InverseEstimate}, // lowering replaces it by its number
		&ir.Call{Fn: ir.Norm, Args: []ir.Expr{coord(0)}},
	} {
		if _, err := Compile([]ir.Expr{e}, s); err == nil {
			t.Errorf("%T accepted", e)
		}
	}
	prev := &ir.FieldD{Field: &ir.Field{Name: "u", Index: 0, Role: ir.Previous}, D: [3]uint8{1}}
	if _, err := Compile([]ir.Expr{prev, prev}, s); err != nil || len(s.Previous()) != 1 {
		t.Errorf("previous iterate: %v, slots %v", err, s.Previous())
	}
}
