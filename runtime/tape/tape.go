package tape

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
)

// Input slots of the evaluation environment. An environment is a []float64
// of length Slots.Len(); the fixed slots come first, then one slot per
// previous-iterate quantity (see Slots.Previous).
const (
	SlotX            = 0  // x, y, z: slots 0, 1, 2
	SlotT            = 3  // time
	SlotCellDiameter = 4  // diam(K)
	SlotCellVolume   = 5  // meas(K)
	SlotG            = 6  // G_IJ at slot 6 + 3I + J
	SlotNormal       = 15 // outward unit normal n_I at slot 15 + I
	SlotStep         = 18 // time_step, the Δt of a time-stepped form
	numFixedSlots    = 19
)

// Dependency bits of a compiled expression: on what its value may vary.
type Deps uint8

const (
	// DepPoint: varies inside a cell (x, G, n, previous iterates).
	DepPoint Deps = 1 << iota
	// DepTime: depends on t.
	DepTime
	// DepCell: depends on the per-cell quantities diam(K), meas(K).
	DepCell
)

// ExprDeps returns the dependency bits of a lowered coefficient.
func ExprDeps(e ir.Expr) Deps {
	var d Deps
	ir.InspectOnce(e, func(x ir.Expr) bool {
		switch x := x.(type) {
		case *ir.Coord, *ir.FieldD:
			d |= DepPoint
		case *ir.Time:
			d |= DepTime
		case *ir.CellQ:
			switch x.Q.Variation() {
			case ir.PerCell:
				d |= DepCell
			case ir.PerStep:
				d |= DepTime
			case ir.PerPoint:
				d |= DepPoint
			}
		}
		return true
	})
	return d
}

// PrevInput is one previous-iterate quantity read by compiled code: the
// derivative D of component Comp of unknown Field, stored in env[Slot].
type PrevInput struct {
	Field, Comp int
	D           [3]uint8
	Slot        int
}

// Slots assigns environment slots. One Slots value is shared by all the
// programs that read the same environment.
type Slots struct {
	prev []PrevInput
	rec  []PrevInput
	aux  int
}

// Len is the length an environment must have.
func (s *Slots) Len() int { return numFixedSlots + len(s.prev) + len(s.rec) + s.aux }

// Recovered lists the recovered second derivatives of the previous
// iterate (FieldD with Role ir.Recovered; D is of order 2) with their
// slots, in slot order. Shared slice: do not modify.
func (s *Slots) Recovered() []PrevInput { return s.rec }

func (s *Slots) recSlot(f *ir.FieldD) int {
	for _, p := range s.rec {
		if p.Field == f.Field.Index && p.Comp == f.Comp && p.D == f.D {
			return p.Slot
		}
	}
	p := PrevInput{Field: f.Field.Index, Comp: f.Comp, D: f.D, Slot: s.Len()}
	s.rec = append(s.rec, p)
	return p.Slot
}

// Aux reserves a new slot for a value the caller computes (e.g. a
// per-cell subexpression hoisted out of per-point tapes) and returns it.
func (s *Slots) Aux() int {
	s.aux++
	return s.Len() - 1
}

// Previous lists the previous-iterate quantities with their slots, in slot
// order. Shared slice: do not modify.
func (s *Slots) Previous() []PrevInput { return s.prev }

func (s *Slots) prevSlot(f *ir.FieldD) int {
	for _, p := range s.prev {
		if p.Field == f.Field.Index && p.Comp == f.Comp && p.D == f.D {
			return p.Slot
		}
	}
	p := PrevInput{Field: f.Field.Index, Comp: f.Comp, D: f.D, Slot: s.Len()}
	s.prev = append(s.prev, p)
	return p.Slot
}

type opcode uint8

const (
	opConst  opcode = iota // push consts[arg]
	opLoad                 // push env[arg]
	opAdd                  // a b -> a+b
	opMul                  // a b -> a*b
	opPowInt               // a -> a^arg (arg may be negative)
	opPow                  // a b -> a^b
	opFn                   // a -> fn_arg(a), unary elementary functions
	opMin                  // a b -> min(a,b)
	opMax                  // a b -> max(a,b)
	opStore                // pop -> out[arg]
	opTmpSet               // copy top -> temp[arg] (no pop)
	opTmpGet               // push temp[arg]
)

type instr struct {
	op  opcode
	arg int32
}

// Program is a compiled list of scalar expressions: a stack-machine tape
// over float64 that writes expression k into out[k]. It is immutable and
// safe for concurrent use; each goroutine passes its own stack.
type Program struct {
	code     []instr
	consts   []float64
	maxStack int
	nTemp    int // common subexpressions, stored after the stack
	nOut     int
	deps     []Deps
}

// NumOutputs is the number of expressions compiled into p.
func (p *Program) NumOutputs() int { return p.nOut }

// StackSize is the length of the stack buffer Eval needs (the stack proper
// and the common-subexpression temporaries).
func (p *Program) StackSize() int { return p.maxStack + p.nTemp }

// Deps returns the dependency bits of output k.
func (p *Program) Deps(k int) Deps { return p.deps[k] }

// Len is the number of instructions (for tests and reports).
func (p *Program) Len() int { return len(p.code) }

// UnsupportedError reports an expression node the tape cannot evaluate
// (it is not part of the lowered-coefficient contract of compiler/ir).
type UnsupportedError struct {
	What string
}

func (e *UnsupportedError) Error() string {
	return "interp: unsupported in a lowered coefficient: " + e.What
}

// Compile compiles exprs into one program writing expression k to out[k].
// Exact rationals become float64 once, here; constant subexpressions are
// folded; integer powers become repeated multiplication; a subexpression
// occurring more than once (structurally equal) is computed once and kept
// in a temporary. Previous-iterate fields get slots in s (which may be
// shared with other programs).
func Compile(exprs []ir.Expr, s *Slots) (*Program, error) {
	return CompileWith(exprs, s, nil, nil)
}

// CompileWith is Compile where every subexpression whose key in keys is in
// subst is read from the environment slot subst[key] instead: a kernel
// hoists subexpressions that are constant in a cell out of its per-point
// tapes this way. keys may be nil when subst is.
func CompileWith(exprs []ir.Expr, s *Slots, subst map[int]int, keys *Keys) (*Program, error) {
	if keys == nil {
		keys = NewKeys()
	}
	c := &compiler{slots: s, p: &Program{nOut: len(exprs)}, subst: subst,
		count: map[int]int{}, temp: map[int]int32{}, keys: keys}
	for _, e := range exprs {
		c.countSubtrees(e)
	}
	for k, e := range exprs {
		d, err := c.expr(e)
		if err != nil {
			return nil, err
		}
		c.p.deps = append(c.p.deps, d)
		c.emit(opStore, int32(k), -1)
	}
	return c.p, nil
}

// MustCompile is Compile for expressions known to be valid; it panics.
func MustCompile(exprs []ir.Expr, s *Slots) *Program {
	p, err := Compile(exprs, s)
	if err != nil {
		panic(err.Error())
	}
	return p
}

type compiler struct {
	slots *Slots
	p     *Program
	depth int
	subst map[int]int
	count map[int]int   // occurrences of each composite subtree
	temp  map[int]int32 // temporaries already computed
	keys  *Keys
}

// key returns the structural key of e.
func (c *compiler) key(e ir.Expr) int { return c.keys.Of(e) }

// Composite reports whether e is an operation (sum, product, power,
// call) rather than a leaf: the subexpressions worth sharing or hoisting.
func Composite(e ir.Expr) bool {
	switch e.(type) {
	case *ir.Add, *ir.Mul, *ir.Pow, *ir.Call:
		return true
	}
	return false
}

func (c *compiler) countSubtrees(e ir.Expr) {
	ir.Inspect(e, func(x ir.Expr) bool {
		if Composite(x) {
			if _, ok := ConstValue(x); !ok {
				k := c.key(x)
				c.count[k]++
				// Count the children of a repeated subtree once only.
				return c.count[k] == 1
			}
		}
		return true
	})
}

// Keys gives lowered expressions structural identities: two expressions
// get the same key exactly when they are structurally equal (positions
// and the names of ir.Named ignored). Keys are interned bottom-up from the
// keys of the children (hash-consing), so a subexpression shared by
// several parents is keyed once and the cost is linear in the number of
// distinct nodes, however large the tree they unfold to.
type Keys struct {
	byNode  map[ir.Expr]int
	byShape map[string]int
}

// NewKeys returns an empty key table.
func NewKeys() *Keys { return &Keys{byNode: map[ir.Expr]int{}, byShape: map[string]int{}} }

// Of returns the key of e.
func (k *Keys) Of(e ir.Expr) int {
	if id, ok := k.byNode[e]; ok {
		return id
	}
	var b []byte
	switch e := e.(type) {
	case *ir.Named:
		id := k.Of(e.X) // a name changes nothing the tape computes
		k.byNode[e] = id
		return id
	case *ir.Num:
		b = append(append(b, 'n'), e.Val.RatString()...)
	case *ir.Const:
		b = append(append(b, 'k'), e.Name...)
	case *ir.Coord:
		b = append(b, 'x', byte('0'+e.Axis))
	case *ir.Time:
		b = append(b, 't')
	case *ir.CellQ:
		b = fmt.Appendf(b, "q%d.%d.%d", e.Q, e.I, e.J)
	case *ir.FieldD:
		idx := -1
		if e.Field != nil {
			idx = e.Field.Index*4 + int(e.Field.Role)
		}
		b = fmt.Appendf(b, "f%d.%d.%d%d%d.%d", idx, e.Comp, e.D[0], e.D[1], e.D[2], e.DT)
	default:
		switch e := e.(type) {
		case *ir.Add:
			b = append(b, '+')
		case *ir.Mul:
			b = append(b, '*')
		case *ir.Pow:
			b = append(b, '^')
		case *ir.Call:
			b = append(b, e.Fn.String()...)
		default:
			b = fmt.Appendf(b, "%T", e)
		}
		for _, c := range ir.Children(e) {
			b = fmt.Appendf(b, " %d", k.Of(c))
		}
	}
	id, ok := k.byShape[string(b)]
	if !ok {
		id = len(k.byShape)
		k.byShape[string(b)] = id
	}
	k.byNode[e] = id
	return id
}

func (c *compiler) emit(op opcode, arg int32, delta int) {
	c.p.code = append(c.p.code, instr{op, arg})
	c.depth += delta
	if c.depth > c.p.maxStack {
		c.p.maxStack = c.depth
	}
}

func (c *compiler) pushConst(v float64) {
	// Reuse an equal constant: tapes stay small and cache-friendly.
	for i, k := range c.p.consts {
		if k == v || (math.IsNaN(k) && math.IsNaN(v)) {
			c.emit(opConst, int32(i), 1)
			return
		}
	}
	c.p.consts = append(c.p.consts, v)
	c.emit(opConst, int32(len(c.p.consts)-1), 1)
}

// ConstValue returns the value of e if it contains no input.
func ConstValue(e ir.Expr) (float64, bool) {
	switch e := e.(type) {
	case *ir.Named:
		return ConstValue(e.X)
	case *ir.Num:
		f, _ := e.Val.Float64()
		return f, true
	case *ir.Const:
		if e.Name == "pi" {
			return math.Pi, true
		}
		return 0, false
	case *ir.Add:
		s := 0.0
		for _, t := range e.Terms {
			v, ok := ConstValue(t)
			if !ok {
				return 0, false
			}
			s += v
		}
		return s, true
	case *ir.Mul:
		s := 1.0
		for _, t := range e.Factors {
			v, ok := ConstValue(t)
			if !ok {
				return 0, false
			}
			s *= v
		}
		return s, true
	case *ir.Pow:
		b, ok1 := ConstValue(e.Base)
		x, ok2 := ConstValue(e.Exp)
		if !ok1 || !ok2 {
			return 0, false
		}
		return powConst(b, x, e.Exp), true
	case *ir.Call:
		var a [2]float64
		if len(e.Args) != e.Fn.Arity() || e.Fn == ir.Norm {
			return 0, false
		}
		for i, t := range e.Args {
			v, ok := ConstValue(t)
			if !ok {
				return 0, false
			}
			a[i] = v
		}
		switch e.Fn {
		case ir.Min:
			return math.Min(a[0], a[1]), true
		case ir.Max:
			return math.Max(a[0], a[1]), true
		}
		return e.Fn.Value(a[0]), true
	}
	return 0, false
}

func powConst(b, x float64, exp ir.Expr) float64 {
	if n, ok := ir.SmallIntExponent(exp); ok {
		return powInt(b, n)
	}
	return math.Pow(b, x)
}

// powInt is b^n by binary powering; exact for the small integers used.
func powInt(b float64, n int) float64 {
	neg := n < 0
	if neg {
		n = -n
	}
	r := 1.0
	for n > 0 {
		if n&1 == 1 {
			r *= b
		}
		b *= b
		n >>= 1
	}
	if neg {
		return 1 / r
	}
	return r
}

func (c *compiler) expr(e ir.Expr) (Deps, error) {
	if e == nil {
		return 0, &UnsupportedError{"nil expression"}
	}
	if e.Rank() != 0 {
		return 0, &UnsupportedError{fmt.Sprintf("%T of rank %d", e, e.Rank())}
	}
	if n, ok := e.(*ir.Named); ok {
		return c.expr(n.X)
	}
	if v, ok := ConstValue(e); ok {
		c.pushConst(v)
		return 0, nil
	}
	if c.subst != nil {
		if slot, ok := c.subst[c.key(e)]; ok {
			c.emit(opLoad, int32(slot), 1)
			return ExprDeps(e), nil
		}
	}
	if Composite(e) && c.count[c.key(e)] > 1 {
		k := c.key(e)
		if t, ok := c.temp[k]; ok {
			c.emit(opTmpGet, t, 1)
			return ExprDeps(e), nil
		}
		d, err := c.node(e)
		if err != nil {
			return 0, err
		}
		t := int32(c.p.nTemp)
		c.p.nTemp++
		c.temp[k] = t
		c.emit(opTmpSet, t, 0)
		return d, nil
	}
	return c.node(e)
}

func (c *compiler) node(e ir.Expr) (Deps, error) {
	switch e := e.(type) {
	case *ir.Const:
		return 0, &UnsupportedError{fmt.Sprintf("constant %q", e.Name)}
	case *ir.Coord:
		if e.Axis < 0 || e.Axis > 2 {
			return 0, &UnsupportedError{fmt.Sprintf("coordinate axis %d", e.Axis)}
		}
		c.emit(opLoad, int32(SlotX+e.Axis), 1)
		return DepPoint, nil
	case *ir.Time:
		c.emit(opLoad, SlotT, 1)
		return DepTime, nil
	case *ir.CellQ:
		switch e.Q {
		case ir.Diameter:
			c.emit(opLoad, SlotCellDiameter, 1)
			return DepCell, nil
		case ir.Volume:
			c.emit(opLoad, SlotCellVolume, 1)
			return DepCell, nil
		case ir.TimeStep:
			c.emit(opLoad, SlotStep, 1)
			return DepTime, nil
		case ir.Metric:
			if e.I < 0 || e.I > 2 || e.J < 0 || e.J > 2 {
				return 0, &UnsupportedError{fmt.Sprintf("G[%d][%d]", e.I, e.J)}
			}
			c.emit(opLoad, int32(SlotG+3*e.I+e.J), 1)
			return DepPoint, nil
		case ir.Normal:
			if e.I < 0 || e.I > 2 {
				return 0, &UnsupportedError{fmt.Sprintf("n[%d]", e.I)}
			}
			c.emit(opLoad, int32(SlotNormal+e.I), 1)
			return DepPoint, nil
		}
		return 0, &UnsupportedError{fmt.Sprintf("quantity %v", e.Q)}
	case *ir.FieldD:
		if e.Field != nil && e.Field.Role == ir.Recovered {
			if e.DT != 0 || int(e.D[0])+int(e.D[1])+int(e.D[2]) != 2 {
				return 0, &UnsupportedError{"recovered derivative that is not of order 2"}
			}
			c.emit(opLoad, int32(c.slots.recSlot(e)), 1)
			return DepPoint, nil
		}
		if e.Field == nil || e.Field.Role != ir.Previous {
			return 0, &UnsupportedError{"field that is not a previous iterate"}
		}
		if e.DT != 0 {
			return 0, &UnsupportedError{"time derivative of a previous iterate"}
		}
		if int(e.D[0])+int(e.D[1])+int(e.D[2]) > 2 {
			return 0, &UnsupportedError{"derivative of order > 2 of a previous iterate"}
		}
		c.emit(opLoad, int32(c.slots.prevSlot(e)), 1)
		return DepPoint, nil
	case *ir.Add:
		return c.nary(e.Terms, opAdd, "empty sum")
	case *ir.Mul:
		return c.nary(e.Factors, opMul, "empty product")
	case *ir.Pow:
		d, err := c.expr(e.Base)
		if err != nil {
			return 0, err
		}
		if n, ok := ir.SmallIntExponent(e.Exp); ok {
			c.emit(opPowInt, int32(n), 0)
			return d, nil
		}
		if x, ok := ConstValue(e.Exp); ok && x == 0.5 {
			c.emit(opFn, int32(ir.Sqrt), 0)
			return d, nil
		}
		d2, err := c.expr(e.Exp)
		if err != nil {
			return 0, err
		}
		c.emit(opPow, 0, -1)
		return d | d2, nil
	case *ir.Call:
		if e.Fn == ir.Norm || e.Fn > ir.Norm {
			return 0, &UnsupportedError{"function " + e.Fn.String()}
		}
		if len(e.Args) != e.Fn.Arity() {
			return 0, &UnsupportedError{fmt.Sprintf("%s with %d arguments", e.Fn, len(e.Args))}
		}
		var d Deps
		for _, a := range e.Args {
			da, err := c.expr(a)
			if err != nil {
				return 0, err
			}
			d |= da
		}
		switch e.Fn {
		case ir.Min:
			c.emit(opMin, 0, -1)
		case ir.Max:
			c.emit(opMax, 0, -1)
		default:
			c.emit(opFn, int32(e.Fn), 0)
		}
		return d, nil
	}
	return 0, &UnsupportedError{fmt.Sprintf("%T", e)}
}

func (c *compiler) nary(xs []ir.Expr, op opcode, empty string) (Deps, error) {
	if len(xs) == 0 {
		return 0, &UnsupportedError{empty}
	}
	var d Deps
	for i, x := range xs {
		dx, err := c.expr(x)
		if err != nil {
			return 0, err
		}
		d |= dx
		if i > 0 {
			c.emit(op, 0, -1)
		}
	}
	return d, nil
}

// Eval runs the program: out[k] receives expression k. env is the input
// environment (length Slots.Len()), stack a scratch buffer of length at
// least StackSize(). It does not allocate.
func (p *Program) Eval(env, out, stack []float64) {
	temp := stack[p.maxStack : p.maxStack+p.nTemp]
	stack = stack[:p.maxStack]
	sp := 0
	for _, in := range p.code {
		switch in.op {
		case opConst:
			stack[sp] = p.consts[in.arg]
			sp++
		case opLoad:
			stack[sp] = env[in.arg]
			sp++
		case opAdd:
			sp--
			stack[sp-1] += stack[sp]
		case opMul:
			sp--
			stack[sp-1] *= stack[sp]
		case opPowInt:
			stack[sp-1] = powInt(stack[sp-1], int(in.arg))
		case opPow:
			sp--
			stack[sp-1] = math.Pow(stack[sp-1], stack[sp])
		case opFn:
			stack[sp-1] = ir.Func(in.arg).Value(stack[sp-1])
		case opMin:
			sp--
			stack[sp-1] = math.Min(stack[sp-1], stack[sp])
		case opMax:
			sp--
			stack[sp-1] = math.Max(stack[sp-1], stack[sp])
		case opStore:
			sp--
			out[in.arg] = stack[sp]
		case opTmpSet:
			temp[in.arg] = stack[sp-1]
		case opTmpGet:
			stack[sp] = temp[in.arg]
			sp++
		}
	}
}
