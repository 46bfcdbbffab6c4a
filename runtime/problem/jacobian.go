package problem

import (
	"fmt"
	"math"
	"math/rand/v2"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/assemble"
	"github.com/formwright/formwright/runtime/mesh"
)

// JacobianCheckOptions configure CheckJacobian. Zero values ask for the
// defaults.
type JacobianCheckOptions struct {
	// Options are the solve options (kernels, workers, time).
	Options
	// Seed seeds the random state and direction (0: 1).
	Seed uint64
	// Scale is the size of the random state's dof values, drawn
	// uniformly from [−Scale, Scale] (0: 1).
	Scale float64
	// Eps is the largest ε of the Taylor test (0: 0.1); Rows the number
	// of halvings (0: 8).
	Eps  float64
	Rows int
}

// TaylorRow is one row of the Taylor test: ε and the remainder
// ‖F(u + εδ) − F(u) − ε J(u)δ‖, with the observed order against the row
// before (0 on the first row).
type TaylorRow struct {
	Eps, Remainder, Order float64
	// Floor is the size of the round-off in the remainder at this ε
	// (rows whose remainder is near it are not used for the order).
	Floor float64
}

// JacobianCheck is the result of CheckJacobian.
type JacobianCheck struct {
	Rows []TaylorRow
	// Order is the order of the remainder fitted over the rows above the
	// round-off floor: 2 when J is the derivative of F, 1 when it is not.
	Order float64
	// CentralDiff is ‖(F(u + εδ) − F(u − εδ))/(2ε) − Jδ‖/‖Jδ‖ at the
	// ε of the smallest row: the relative difference between J·δ and the
	// central difference of F, O(ε²) when J is right.
	CentralDiff float64
	// Dofs and Seed identify the test.
	Dofs int
	Seed uint64
}

// CheckJacobian compares the Jacobian of a Newton step form with its
// residual on a mesh: at a random state u and in a random direction δ
// (seeded; dof values uniform in [−Scale, Scale]) it computes the Taylor
// remainder ‖F(u + εδ) − F(u) − εJ(u)δ‖ for ε = Eps, Eps/2, …, which
// falls as ε² when J = F′ and as ε when it is not (the Taylor test, e.g.
// Farrell, Ham, Funke & Rognes 2013, SIAM J. Sci. Comput. 35, on
// verifying derivatives), and the central difference of F against J·δ.
// Value conditions are not imposed: F and J are compared on every dof.
func CheckJacobian(form *ir.LoweredForm, m *mesh.Mesh, opts JacobianCheckOptions) (*JacobianCheck, error) {
	if !form.Newton {
		return nil, fmt.Errorf("problem: the Jacobian check needs a Newton step form (a nonlinear model)")
	}
	if opts.Seed == 0 {
		opts.Seed = 1
	}
	if opts.Scale <= 0 {
		opts.Scale = 1
	}
	if opts.Eps <= 0 {
		opts.Eps = 0.1
	}
	if opts.Rows <= 0 {
		opts.Rows = 8
	}
	s, err := newSystem(form, m, opts.Options)
	if err != nil {
		return nil, err
	}
	n := s.dm.NumDofs
	rng := rand.New(rand.NewPCG(opts.Seed, 0x6a61636f))
	u, dir := make([]float64, n), make([]float64, n)
	for i := range u {
		u[i] = opts.Scale * (2*rng.Float64() - 1)
		dir[i] = opts.Scale * (2*rng.Float64() - 1)
	}
	in := assemble.Input{Time: opts.Time, Step: opts.Step}
	// F at x: the assembled right-hand side is −F.
	f := func(x []float64) ([]float64, error) {
		in.Previous = x
		if err := s.assemble(in); err != nil {
			return nil, err
		}
		out := make([]float64, n)
		for i, v := range s.b {
			out[i] = -v
		}
		return out, nil
	}
	f0, err := f(u)
	if err != nil {
		return nil, err
	}
	jd := make([]float64, n)
	s.A.MulVec(jd, dir)
	at := func(e float64) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = u[i] + e*dir[i]
		}
		return x
	}
	const eps64 = 0x1p-52
	res := &JacobianCheck{Dofs: n, Seed: opts.Seed}
	e := opts.Eps
	var lastPlus []float64
	for k := 0; k < opts.Rows; k++ {
		fp, err := f(at(e))
		if err != nil {
			return nil, err
		}
		r, scale := 0.0, 0.0
		for i := range fp {
			d := fp[i] - f0[i] - e*jd[i]
			r += d * d
			scale = math.Max(scale, math.Abs(fp[i])+math.Abs(f0[i])+e*math.Abs(jd[i]))
		}
		row := TaylorRow{Eps: e, Remainder: math.Sqrt(r), Floor: 64 * eps64 * scale * math.Sqrt(float64(n))}
		if k > 0 {
			row.Order = math.Log2(res.Rows[k-1].Remainder / row.Remainder)
		}
		res.Rows = append(res.Rows, row)
		lastPlus = fp
		e /= 2
	}
	e *= 2
	fm, err := f(at(-e))
	if err != nil {
		return nil, err
	}
	num, den := 0.0, 0.0
	for i := range fm {
		d := (lastPlus[i]-fm[i])/(2*e) - jd[i]
		num += d * d
		den += jd[i] * jd[i]
	}
	res.CentralDiff = math.Sqrt(num / math.Max(den, math.SmallestNonzeroFloat64))
	// Least-squares slope of log r against log ε over the rows well above
	// the round-off floor.
	var sx, sy, sxx, sxy, cnt float64
	for _, row := range res.Rows {
		if row.Remainder <= 100*row.Floor || row.Remainder == 0 {
			continue
		}
		x, y := math.Log(row.Eps), math.Log(row.Remainder)
		sx, sy, sxx, sxy, cnt = sx+x, sy+y, sxx+x*x, sxy+x*y, cnt+1
	}
	switch {
	case cnt >= 2:
		res.Order = (cnt*sxy - sx*sy) / (cnt*sxx - sx*sx)
	case res.Rows[0].Remainder <= 100*res.Rows[0].Floor:
		// The remainder is round-off at every ε: F is linear in u along
		// δ and J reproduces it.
		res.Order = math.Inf(1)
	default:
		res.Order = math.NaN()
	}
	return res, nil
}
