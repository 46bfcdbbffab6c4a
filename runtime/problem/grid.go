package problem

import (
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/output"
)

// Grid returns the solution as an output grid on the nodes of its
// highest-degree field: linear VTK cells for P1/Q1, quadratic ones
// (VTK_QUADRATIC_TRIANGLE, VTK_BIQUADRATIC_QUAD, ...) for P2/Q2, so edge and
// interior nodes are written too. Fields of lower degree are evaluated at
// those nodes with their own basis (exact, since their space is contained
// in the higher one's). Vector fields get three components, as VTK wants.
func (s *Solution) Grid() *output.Grid {
	dm := s.Dofs
	msh := s.Mesh
	d := msh.Dim
	top := 0
	for k, f := range dm.Fields {
		if f.Element.Degree > dm.Fields[top].Element.Degree {
			top = k
		}
	}
	hi := dm.Fields[top].Element
	coords := dm.NodeCoords(top)
	np := len(coords) / d
	g := &output.Grid{Points: make([]float64, 3*np)}
	for n := 0; n < np; n++ {
		copy(g.Points[3*n:3*n+d], coords[n*d:(n+1)*d])
	}
	order := cell.VTKOrder(msh.Cell, hi.Degree)
	code := uint8(cell.VTKType(msh.Cell, hi.Degree))
	for c := 0; c < msh.NumCells(); c++ {
		nodes := dm.CellNodes(top, c)
		for _, i := range order {
			g.Connectivity = append(g.Connectivity, int64(nodes[i]))
		}
		g.Offsets = append(g.Offsets, int64(len(g.Connectivity)))
		g.Types = append(g.Types, code)
	}
	ref := hi.RefNodes()
	for k, f := range s.Fields {
		arr := output.Array{Name: f.Name, Components: f.Components}
		if f.Components > 1 {
			arr.Components = 3
		}
		arr.Values = make([]float64, np*arr.Components)
		lo := dm.Fields[k].Element
		if lo == hi {
			for n := 0; n < np; n++ {
				for c := 0; c < f.Components; c++ {
					arr.Values[n*arr.Components+c] = f.Values[c][n]
				}
			}
		} else {
			phi := make([]float64, lo.NumNodes())
			for c := 0; c < msh.NumCells(); c++ {
				hn, ln := dm.CellNodes(top, c), dm.CellNodes(k, c)
				for a := 0; a < hi.NumNodes(); a++ {
					lo.Eval(ref[a*d:(a+1)*d], phi)
					for comp := 0; comp < f.Components; comp++ {
						v := 0.0
						for b, nb := range ln {
							v += phi[b] * f.Values[comp][nb]
						}
						arr.Values[int(hn[a])*arr.Components+comp] = v
					}
				}
			}
		}
		g.PointData = append(g.PointData, arr)
	}
	return g
}
