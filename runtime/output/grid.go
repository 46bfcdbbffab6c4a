package output

import (
	"fmt"
)

// Grid is a mesh-independent description of an unstructured grid and its
// fields, laid out as VTK expects.
type Grid struct {
	Points       []float64 // nPoints*3 coordinates x0 y0 z0 x1 ... (z = 0 in 2D)
	Connectivity []int64   // point indices of all cells, cell after cell
	Offsets      []int64   // VTK convention: end of cell i in Connectivity (length nCells, last = len(Connectivity))
	Types        []uint8   // VTK cell type code of each cell (see the Cell* constants)
	PointData    []Array   // each of length nPoints*Components
	CellData     []Array   // each of length nCells*Components
	// Time is the time of the data, written when Timed (a frame of a
	// time series).
	Time  float64
	Timed bool
}

// Array is a named field with Components values per point or cell,
// interleaved (v0c0 v0c1 ... v1c0 ...).
type Array struct {
	Name       string
	Components int
	Values     []float64
}

// VTK cell type codes (VTK's vtkCellType enumeration, part of the VTK file
// format standard) for the cells formwright uses.
const (
	CellVertex                 uint8 = 1
	CellLine                   uint8 = 3
	CellTriangle               uint8 = 5
	CellQuad                   uint8 = 9
	CellTetra                  uint8 = 10
	CellHexahedron             uint8 = 12
	CellWedge                  uint8 = 13
	CellQuadraticEdge          uint8 = 21
	CellQuadraticTriangle      uint8 = 22
	CellQuadraticQuad          uint8 = 23
	CellQuadraticTetra         uint8 = 24
	CellQuadraticHexahedron    uint8 = 25
	CellBiquadraticQuad        uint8 = 28
	CellTriquadraticHexahedron uint8 = 29
)

// cellPoints is the number of points of each fixed-size cell type above.
var cellPoints = map[uint8]int64{
	CellVertex: 1, CellLine: 2, CellTriangle: 3, CellQuad: 4, CellTetra: 4,
	CellHexahedron: 8, CellWedge: 6, CellQuadraticEdge: 3, CellQuadraticTriangle: 6,
	CellQuadraticQuad: 8, CellQuadraticTetra: 10, CellQuadraticHexahedron: 20,
	CellBiquadraticQuad: 9, CellTriquadraticHexahedron: 27,
}

// NumPoints returns len(Points)/3.
func (g *Grid) NumPoints() int { return len(g.Points) / 3 }

// NumCells returns len(Offsets).
func (g *Grid) NumCells() int { return len(g.Offsets) }

// Validate checks the Grid's consistency: coordinates in triples, one
// offset and one type per cell, offsets strictly increasing and ending at
// len(Connectivity), point indices in range, the point count of every cell
// of a known type, field lengths, and non-empty, unique, quote-free field
// names. It returns a descriptive error or nil.
func (g *Grid) Validate() error {
	if g == nil {
		return errNilGrid
	}
	if len(g.Points)%3 != 0 {
		return fmt.Errorf("output: len(Points) = %d is not a multiple of 3", len(g.Points))
	}
	np, nc := int64(g.NumPoints()), g.NumCells()
	if len(g.Types) != nc {
		return fmt.Errorf("output: %d offsets but %d cell types", nc, len(g.Types))
	}
	prev := int64(0)
	for c, off := range g.Offsets {
		if off <= prev {
			return fmt.Errorf("output: offsets not increasing at cell %d", c)
		}
		if want, ok := cellPoints[g.Types[c]]; ok && off-prev != want {
			return fmt.Errorf("output: cell %d of VTK type %d has %d points, want %d", c, g.Types[c], off-prev, want)
		}
		prev = off
	}
	if prev != int64(len(g.Connectivity)) {
		return fmt.Errorf("output: last offset %d, len(Connectivity) = %d", prev, len(g.Connectivity))
	}
	for k, p := range g.Connectivity {
		if p < 0 || p >= np {
			return fmt.Errorf("output: connectivity entry %d = %d out of range [0,%d)", k, p, np)
		}
	}
	names := map[string]bool{}
	check := func(kind string, arrs []Array, n int) error {
		for _, a := range arrs {
			if a.Name == "" {
				return fmt.Errorf("output: %s array with empty name", kind)
			}
			for _, r := range a.Name {
				if r == '"' || r == '<' || r == '&' || r < ' ' {
					return fmt.Errorf("output: %s array name %q has a character not allowed in a name", kind, a.Name)
				}
			}
			if names[kind+a.Name] {
				return fmt.Errorf("output: duplicate %s array %q", kind, a.Name)
			}
			names[kind+a.Name] = true
			if a.Components < 1 {
				return fmt.Errorf("output: %s array %q has %d components", kind, a.Name, a.Components)
			}
			if len(a.Values) != n*a.Components {
				return fmt.Errorf("output: %s array %q has %d values, want %d×%d", kind, a.Name, len(a.Values), n, a.Components)
			}
		}
		return nil
	}
	if err := check("point", g.PointData, int(np)); err != nil {
		return err
	}
	return check("cell", g.CellData, nc)
}
