package main

import (
	"fmt"
	"sort"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/render"
	"github.com/formwright/formwright/runtime/compiled"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/plot"
	"github.com/formwright/formwright/runtime/problem"
)

func syntaxOf(e ir.Expr) string { return render.Expr(e, render.Syntax, render.Names{}) }

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

// plotSolution draws the first field: a line plot in 1D, a colour map with
// contours in 2D.
func plotSolution(path string, sol *problem.Solution, m *compiler.Model, meth compiler.Method) error {
	f := sol.Fields[0]
	msh := sol.Mesh
	title := fmt.Sprintf("%s: %s, %s", m.Name, f.Name, meth)
	nv := msh.NumVertices()
	switch msh.Dim {
	case 1:
		coords := sol.Dofs.NodeCoords(0)
		idx := make([]int, len(coords))
		for i := range idx {
			idx[i] = i
		}
		sort.Slice(idx, func(a, b int) bool { return coords[idx[a]] < coords[idx[b]] })
		s := plot.Series{Name: meth.String()}
		for _, i := range idx {
			s.X = append(s.X, coords[i])
			s.Y = append(s.Y, f.Values[0][i])
		}
		return plot.Line(path, []plot.Series{s}, plot.LineOptions{Title: title, YLabel: f.Name})
	case 2:
		tri := plot.Triangulation{X: make([]float64, nv), Y: make([]float64, nv)}
		for v := 0; v < nv; v++ {
			tri.X[v], tri.Y[v] = msh.Coords[2*v], msh.Coords[2*v+1]
		}
		vpc := msh.Cell.NumVertices()
		if vpc == 3 {
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
		vals := make([]float64, nv)
		comp := 0
		copy(vals, f.Values[comp][:nv])
		return plot.ColourMap(path, tri, vals, plot.MapOptions{Title: title, ValueLabel: f.Name})
	}
	return &usageError{"--plot draws 1D and 2D solutions only"}
}
