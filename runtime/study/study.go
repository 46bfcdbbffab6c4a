package study

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/plot"
	"github.com/formwright/formwright/runtime/problem"
)

// Field is one unknown of a study: its name and element, the exact
// solution (lowered expressions of x and t, one per component), and the
// orders the study expects on the finest pair of meshes.
type Field struct {
	Name    string
	Element ir.Element
	Exact   []ir.Expr
	// ExpectedL2 and ExpectedH1 are the expected orders; the H¹ order is
	// checked only when CheckH1 is set.
	ExpectedL2, ExpectedH1 float64
	CheckH1                bool
	// UpToConstant measures the errors modulo constants (a field fixed by
	// a mean condition).
	UpToConstant bool
}

// SolveFunc solves a steady form on a mesh as problem.Solve does.
type SolveFunc func(form *ir.LoweredForm, m *mesh.Mesh, opts problem.Options) (*problem.Solution, error)

// Method is one method of a study: its name and its lowered form, steady
// (Form) or stepped in time (Stepped).
type Method struct {
	Name    string
	Form    *ir.LoweredForm
	Stepped *ir.SteppedForm
}

// Level is the mesh of one level: the mesh, its cells per unit length N
// and its size h.
type Level struct {
	Mesh *mesh.Mesh
	N    int
	H    float64
}

// Config describes a study.
type Config struct {
	Model   string
	Dim     int
	Fields  []Field
	Methods []Method
	// Levels is the number of meshes; Mesh returns the mesh of level l
	// (0 the coarsest), each finer than the last.
	Levels int
	Mesh   func(level int) (Level, error)
	// Tol is the allowed shortfall of an observed order on the finest
	// pair.
	Tol float64
	// Until is the comparison time of a transient study, and Steps the
	// number of backward Euler steps on each level.
	Until float64
	Steps func(level int) int
	// Solve holds the options of every solve.
	Solve problem.Options
	// SolveFunc, if not nil, solves the steady levels in place of
	// problem.Solve: another engine (runtime/distributed). Transient
	// methods then fail with an error, since it has no time stepping.
	SolveFunc SolveFunc
	// Progress, if not nil, is told about each level as it starts.
	Progress func(method string, level int, cells int)
}

// LevelResult is one mesh of a convergence table.
type LevelResult struct {
	N    int     `json:"n"`
	H    float64 `json:"h"`
	Dofs int     `json:"dofs"`
	L2   float64 `json:"l2_error"`
	H1   float64 `json:"h1_error"`
	// Orders against the previous level (0 on the first).
	OrderL2 float64 `json:"l2_order"`
	OrderH1 float64 `json:"h1_order"`
}

// Table is the convergence table of one method and field.
type Table struct {
	Method     string        `json:"method"`
	Field      string        `json:"field"`
	Element    string        `json:"element"`
	ExpectedL2 float64       `json:"expected_l2_order"`
	ExpectedH1 float64       `json:"expected_h1_order"`
	CheckH1    bool          `json:"h1_checked"`
	Levels     []LevelResult `json:"levels"`
	Pass       bool          `json:"pass"`
}

// Report is the result of a study (schema formwright.verify/1, documented
// in the README). Failed lists every shortfall; it is empty when the
// study passed.
type Report struct {
	Schema  string        `json:"schema"`
	Model   string        `json:"model"`
	Exact   []string      `json:"exact"`
	Sources []string      `json:"sources"`
	Tol     float64       `json:"tol"`
	Methods []Table       `json:"methods"`
	Sweep   []SweepMethod `json:"sweep,omitempty"`
	Failed  []string      `json:"failed"`
}

// Schema is the JSON schema name of a Report.
const Schema = "formwright.verify/1"

// SolveError is a solve of a study that failed, with where it happened.
type SolveError struct {
	Method string
	Level  int // 1-based
	Cells  int
	Err    error
}

func (e *SolveError) Error() string {
	return fmt.Sprintf("%s, level %d (%d cells): %v", e.Method, e.Level, e.Cells, e.Err)
}

func (e *SolveError) Unwrap() error { return e.Err }

// Run solves every method on every level and returns the report. An error
// is returned for a failed solve (*SolveError) or a bad configuration; a
// shortfall of an observed order is not an error but an entry of
// Report.Failed.
func Run(cfg Config) (*Report, error) {
	if cfg.Levels < 2 {
		return nil, fmt.Errorf("study: %d levels (at least 2 give an order)", cfg.Levels)
	}
	exact := make([]problem.Exact, len(cfg.Fields))
	for i, f := range cfg.Fields {
		fn, err := problem.ExactFromExprs(cfg.Dim, f.Exact)
		if err != nil {
			return nil, fmt.Errorf("study: exact solution of %s: %w", f.Name, err)
		}
		exact[i] = fn
	}
	rep := &Report{Schema: Schema, Model: cfg.Model, Tol: cfg.Tol, Failed: []string{}}
	for _, meth := range cfg.Methods {
		tables := make([]Table, len(cfg.Fields))
		for i, f := range cfg.Fields {
			tables[i] = Table{Method: meth.Name, Field: f.Name, Element: f.Element.String(),
				ExpectedL2: f.ExpectedL2, ExpectedH1: f.ExpectedH1, CheckH1: f.CheckH1, Pass: true}
		}
		finestNorm := make([]float64, len(cfg.Fields)) // ‖u*‖ on the latest mesh
		for l := 0; l < cfg.Levels; l++ {
			lv, err := cfg.Mesh(l)
			if err != nil {
				return nil, err
			}
			if cfg.Progress != nil {
				cfg.Progress(meth.Name, l+1, lv.Mesh.NumCells())
			}
			sol, tEnd, err := solveLevel(cfg, meth, l, lv.Mesh, exact)
			if err != nil {
				return nil, &SolveError{Method: meth.Name, Level: l + 1, Cells: lv.Mesh.NumCells(), Err: err}
			}
			zero := *sol
			zero.X = make([]float64, len(sol.X))
			for i, f := range cfg.Fields {
				norms := (*problem.Solution).ErrorNorms
				if f.UpToConstant {
					norms = (*problem.Solution).ErrorNormsUpToConstant
				}
				finestNorm[i], _ = norms(&zero, i, exact[i], tEnd, 0)
				l2, h1 := norms(sol, i, exact[i], tEnd, 0)
				r := LevelResult{N: lv.N, H: lv.H, Dofs: sol.Summary.Dofs, L2: l2, H1: h1}
				if l > 0 {
					prev := tables[i].Levels[l-1]
					r.OrderL2 = math.Log(prev.L2/l2) / math.Log(prev.H/r.H)
					r.OrderH1 = math.Log(prev.H1/h1) / math.Log(prev.H/r.H)
				}
				tables[i].Levels = append(tables[i].Levels, r)
			}
		}
		for i := range tables {
			rep.Failed = append(rep.Failed, tables[i].check(cfg.Tol, finestNorm[i])...)
		}
		rep.Methods = append(rep.Methods, tables...)
	}
	return rep, nil
}

func solveLevel(cfg Config, meth Method, l int, m *mesh.Mesh, exact []problem.Exact) (*problem.Solution, float64, error) {
	if meth.Stepped != nil {
		if cfg.SolveFunc != nil {
			return nil, 0, fmt.Errorf("study: %s is transient, and the solve function of this study solves steady forms only", meth.Name)
		}
		steps := cfg.Steps(l)
		sol, err := problem.SolveTransient(meth.Stepped, m, problem.TransientOptions{Options: cfg.Solve,
			Step: cfg.Until / float64(steps), Steps: steps, Initial: exact})
		return sol, cfg.Until, err
	}
	solve := cfg.SolveFunc
	if solve == nil {
		solve = problem.Solve
	}
	sol, err := solve(meth.Form, m, cfg.Solve)
	return sol, 0, err
}

// check marks the table failed and returns the shortfalls: an L² error on
// the finest mesh that is not smaller than the solution itself (an order
// is meaningless then, e.g. for the spurious pressure modes of an unstable
// pair, which shrink at the right rate from a huge size; common practice,
// no source), or an observed order below the expected one by more than
// tol.
func (t *Table) check(tol, norm float64) []string {
	var out []string
	last := t.Levels[len(t.Levels)-1]
	if last.L2 >= norm {
		out = append(out, fmt.Sprintf("%s: %s L2 error %.3g on the finest mesh is not smaller than the solution itself (%.3g)", t.Method, t.Field, last.L2, norm))
	}
	if last.OrderL2 < t.ExpectedL2-tol || math.IsNaN(last.OrderL2) {
		out = append(out, fmt.Sprintf("%s: %s L2 order %.2f on the finest pair, expected %.0f (tolerance %.2f)", t.Method, t.Field, last.OrderL2, t.ExpectedL2, tol))
	}
	if t.CheckH1 && (last.OrderH1 < t.ExpectedH1-tol || math.IsNaN(last.OrderH1)) {
		out = append(out, fmt.Sprintf("%s: %s H1 order %.2f on the finest pair, expected %.0f (tolerance %.2f)", t.Method, t.Field, last.OrderH1, t.ExpectedH1, tol))
	}
	t.Pass = len(out) == 0
	return out
}

// Curves returns the report's error curves for a convergence plot: the
// L² errors of every table, and the H¹ errors where they are checked.
func (r *Report) Curves() []plot.Curve {
	var out []plot.Curve
	perMethod := map[string]int{}
	for _, t := range r.Methods {
		perMethod[t.Method]++
	}
	for _, t := range r.Methods {
		var hs, e2, e1 []float64
		for _, lv := range t.Levels {
			hs, e2, e1 = append(hs, lv.H), append(e2, lv.L2), append(e1, lv.H1)
		}
		label := t.Method
		if perMethod[t.Method] > 1 {
			label += " " + t.Field
		}
		out = append(out, plot.Curve{Method: label, Norm: "L2", H: hs, Err: e2})
		if t.CheckH1 {
			out = append(out, plot.Curve{Method: label, Norm: "H1", H: hs, Err: e1})
		}
	}
	return out
}
