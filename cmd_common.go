package main

import (
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"strings"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
	"github.com/formwright/formwright/runtime/compiled"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/plot"
	"github.com/formwright/formwright/runtime/problem"
)

func syntaxOf(e ir.Expr) string { return notation.Expr(e, notation.Syntax, notation.Names{}) }

// kernelPath looks the form up among the kernels compiled into the command
// (by content hash, cell type and quadrature degree) and sets opts to use
// them; otherwise the interpreted path is used. It returns which.
func kernelPath(lf *ir.LoweredForm, m *mesh.Mesh, opts *problem.Options) string {
	k, ok := compiled.Lookup(ir.FormHash(lf))
	if !ok || k.Cell != m.Cell {
		return "interpreted"
	}
	opts.Kernels = &problem.KernelSet{Cell: k.NewCell()}
	if k.NewFacets != nil {
		opts.Kernels.Facets = k.NewFacets()
	}
	return "compiled"
}

// exactOf returns the model's stated exact solution of unknown i, the
// coefficient named exact_<unknown>, as a function of x (nil if none).
func exactOf(m *compiler.Model, i int) func(x []float64) float64 {
	cf := m.Coef("exact_" + m.Unknowns[i].Name)
	if cf == nil || cf.Def.Rank() != 0 {
		return nil
	}
	low := compiler.LowerExpr(m, cf.Sym)[0]
	return func(x []float64) float64 { return ir.Eval(low, pointEnv(x)) }
}

type pointEnv []float64

func (p pointEnv) Coord(axis int) float64  { return p[axis] }
func (p pointEnv) Time() float64           { return 0 }
func (p pointEnv) CellQ(*ir.CellQ) float64 { return math.NaN() }
func (p pointEnv) FieldD(*ir.FieldD) float64 {
	return math.NaN()
}

// exactError reports the largest nodal error against the model's stated
// exact solution, if it states one.
func exactError(m *compiler.Model, sol *problem.Solution) string {
	ex := exactOf(m, 0)
	if ex == nil {
		return ""
	}
	coords := sol.Dofs.NodeCoords(0)
	d := m.Dim
	worst := 0.0
	for n := 0; n < len(coords)/d; n++ {
		worst = math.Max(worst, math.Abs(sol.Fields[0].Values[0][n]-ex(coords[n*d:(n+1)*d])))
	}
	return fmt.Sprintf("exact      largest nodal error against exact_%s: %.3e", m.Unknowns[0].Name, worst)
}

// plotSolutions draws the first field: in 1D one line per method (and the
// model's exact solution, if it states one); in 2D a colour map with
// contours per method (FILE.png, or FILE_<method>.png for several).
func plotSolutions(path string, sols []*problem.Solution, m *compiler.Model, methods []compiler.Method) error {
	msh := sols[0].Mesh
	name := sols[0].Fields[0].Name
	switch msh.Dim {
	case 1:
		var series []plot.Series
		for k, sol := range sols {
			coords := sol.Dofs.NodeCoords(0)
			idx := make([]int, len(coords))
			for i := range idx {
				idx[i] = i
			}
			sort.Slice(idx, func(a, b int) bool { return coords[idx[a]] < coords[idx[b]] })
			s := plot.Series{Name: methods[k].String()}
			for _, i := range idx {
				s.X = append(s.X, coords[i])
				s.Y = append(s.Y, sol.Fields[0].Values[0][i])
			}
			series = append(series, s)
		}
		opts := plot.LineOptions{Title: fmt.Sprintf("%s: %s", m.Name, name), YLabel: name, Legend: plot.TopLeft}
		if ex := exactOf(m, 0); ex != nil {
			opts.Exact = func(x float64) float64 { return ex([]float64{x}) }
		}
		return plot.Line(path, series, opts)
	case 2:
		for k, sol := range sols {
			p := path
			if len(sols) > 1 {
				ext := filepath.Ext(path)
				p = strings.TrimSuffix(path, ext) + "_" + methods[k].String() + ext
			}
			if err := colourMap(p, sol, fmt.Sprintf("%s: %s, %s", m.Name, name, methods[k])); err != nil {
				return err
			}
		}
		return nil
	}
	return &usageError{"--plot draws 1D and 2D solutions only"}
}

func colourMap(path string, sol *problem.Solution, title string) error {
	msh := sol.Mesh
	nv := msh.NumVertices()
	tri := plot.Triangulation{X: make([]float64, nv), Y: make([]float64, nv)}
	for v := 0; v < nv; v++ {
		tri.X[v], tri.Y[v] = msh.Coords[2*v], msh.Coords[2*v+1]
	}
	if msh.Cell.NumVertices() == 3 {
		for c := 0; c < msh.NumCells(); c++ {
			cv := msh.Cells[3*c : 3*c+3]
			tri.Triangles = append(tri.Triangles, [3]int{int(cv[0]), int(cv[1]), int(cv[2])})
		}
	} else {
		var quads [][4]int
		for c := 0; c < msh.NumCells(); c++ {
			cv := msh.Cells[4*c : 4*c+4]
			quads = append(quads, [4]int{int(cv[0]), int(cv[1]), int(cv[2]), int(cv[3])})
		}
		tri.Triangles = plot.SplitQuads(quads)
	}
	vals := append([]float64(nil), sol.Fields[0].Values[0][:nv]...)
	return plot.ColourMap(path, tri, vals, plot.MapOptions{Title: title, ValueLabel: sol.Fields[0].Name})
}
