package mesh

import (
	"fmt"
	"math"
	"slices"

	"github.com/formwright/formwright/runtime/cell"
)

// Pattern chooses how Span2 and Span3 fill each grid square or cube.
type Pattern uint8

const (
	// DiagonalUp splits each square into 2 triangles along the diagonal
	// from its lower-left to its upper-right corner. Spec name "tri".
	DiagonalUp Pattern = iota
	// DiagonalDown splits each square along the diagonal from its
	// upper-left to its lower-right corner. Spec name "tri-flip".
	DiagonalDown
	// Quartered splits each square into 4 triangles meeting at a new vertex
	// at the square's centre. Spec name "quartered".
	Quartered
	// Quads keeps each square as one quadrilateral. Spec name "quad".
	Quads
	// Kuhn splits each cube into the 6 tetrahedra of the Kuhn (Freudenthal)
	// subdivision, all sharing the main diagonal from the cube's (x0,y0,z0)
	// corner to its (x1,y1,z1) corner: for each permutation π of the axes,
	// the tetrahedron whose vertices are reached by stepping along
	// e_π(0), e_π(1), e_π(2). The subdivision of a grid of translated cubes
	// is conforming (H. Freudenthal, Simplizialzerlegungen von beschränkter
	// Flachheit, Ann. Math. 43 (1942) 580–582; H. W. Kuhn, Some
	// combinatorial lemmas in topology, IBM J. Res. Dev. 4 (1960) 518–524;
	// J. Bey, Simplicial grid refinement, Numer. Math. 85 (2000) 1–29).
	// Spec name "tet".
	Kuhn
	// Hexes keeps each cube as one hexahedron. Spec name "hex".
	Hexes
)

var patternNames = [...]string{
	DiagonalUp: "tri", DiagonalDown: "tri-flip", Quartered: "quartered", Quads: "quad", Kuhn: "tet", Hexes: "hex",
}

// String returns the spec name of the pattern.
func (p Pattern) String() string {
	if int(p) < len(patternNames) {
		return patternNames[p]
	}
	return fmt.Sprintf("Pattern(%d)", uint8(p))
}

// ParsePattern returns the pattern with the given spec name.
func ParsePattern(name string) (Pattern, error) {
	for p, s := range patternNames {
		if s == name {
			return Pattern(p), nil
		}
	}
	return 0, fmt.Errorf("mesh: unknown pattern %q (want tri, tri-flip, quartered, quad, tet or hex)", name)
}

// Side names. In 1D: left (x = x0), right (x = x1); 2D adds bottom
// (y = y0), top (y = y1); 3D adds front (z = z0), back (z = z1). "all" is
// the whole boundary.
const (
	Left   = "left"
	Right  = "right"
	Bottom = "bottom"
	Top    = "top"
	Front  = "front"
	Back   = "back"
	All    = "all"
)

var sideNames = [...]string{Left, Right, Bottom, Top, Front, Back}

// grid returns n+1 coordinates from a to b, the ends exact.
func grid(a, b float64, n int) []float64 {
	x := make([]float64, n+1)
	for i := range x {
		x[i] = a + (b-a)*float64(i)/float64(n)
	}
	x[0], x[n] = a, b
	return x
}

// Span1 meshes [x0,x1] with n cells. grading is the ratio of
// consecutive cell lengths h_{i+1}/h_i (1 = uniform); the first cell has
// length h_0 = (x1-x0)(r-1)/(r^n-1) and vertex i sits at
// x0 + h_0 (r^i - 1)/(r - 1). It panics ("mesh: ...") if n < 1, x1 <= x0 or
// grading <= 0.
func Span1(x0, x1 float64, n int, grading float64) *Mesh {
	if n < 1 || !(x1 > x0) || !(grading > 0) || math.IsInf(grading, 0) {
		panic(fmt.Sprintf("mesh: Span1(%v, %v, %d, %v): need n >= 1, x1 > x0, grading > 0", x0, x1, n, grading))
	}
	var x []float64
	if grading == 1 {
		x = grid(x0, x1, n)
	} else {
		x = make([]float64, n+1)
		h0 := (x1 - x0) * (grading - 1) / (math.Pow(grading, float64(n)) - 1)
		for i := range x {
			x[i] = x0 + h0*(math.Pow(grading, float64(i))-1)/(grading-1)
		}
		x[0], x[n] = x0, x1
	}
	cells := make([]int32, 2*n)
	for i := 0; i < n; i++ {
		cells[2*i], cells[2*i+1] = int32(i), int32(i+1)
	}
	// Segment facet 1 is vertex 0 (x = x0), facet 0 is vertex 1 (cell package).
	left := []FacetRef{{0, 1}}
	right := []FacetRef{{int32(n - 1), 0}}
	all := append(slices.Clone(left), right...)
	slices.SortFunc(all, CompareFacetRef)
	return &Mesh{Dim: 1, Cell: cell.Segment, Coords: x, Cells: cells,
		Boundaries: map[string][]FacetRef{Left: left, Right: right, All: all}}
}

func checkBox(name string, lo, hi []float64, n []int) {
	for k := range lo {
		if !(hi[k] > lo[k]) || n[k] < 1 || math.IsInf(hi[k]-lo[k], 0) {
			panic(fmt.Sprintf("mesh: %s: need upper > lower bound and at least one cell in direction %d (got [%v,%v], %d cells)", name, k, lo[k], hi[k], n[k]))
		}
	}
}

// Span2 meshes [x0,x1]×[y0,y1] with nx×ny squares, each filled by
// pattern (DiagonalUp, DiagonalDown, Quartered or Quads). Grid vertex (i,j)
// has index j*(nx+1)+i; the Quartered centre of square (i,j) has index
// (nx+1)(ny+1) + j*nx + i. Cells of square (i,j) are numbered
// consecutively, squares row by row. Triangles are counter-clockwise. It
// panics ("mesh: ...") on an empty box, a cell count < 1 or a 3D pattern.
func Span2(x0, x1, y0, y1 float64, nx, ny int, pattern Pattern) *Mesh {
	checkBox("Span2", []float64{x0, y0}, []float64{x1, y1}, []int{nx, ny})
	xs, ys := grid(x0, x1, nx), grid(y0, y1, ny)
	nGrid := (nx + 1) * (ny + 1)
	nVert := nGrid
	var ct cell.Type
	var per int
	switch pattern {
	case DiagonalUp, DiagonalDown:
		ct, per = cell.Triangle, 2
	case Quartered:
		ct, per = cell.Triangle, 4
		nVert += nx * ny
	case Quads:
		ct, per = cell.Quadrilateral, 1
	default:
		panic(fmt.Sprintf("mesh: Span2 with pattern %v", pattern))
	}
	coords := make([]float64, 2*nVert)
	for j := 0; j <= ny; j++ {
		for i := 0; i <= nx; i++ {
			v := j*(nx+1) + i
			coords[2*v], coords[2*v+1] = xs[i], ys[j]
		}
	}
	nvc := ct.NumVertices()
	cells := make([]int32, nx*ny*per*nvc)
	p := 0
	put := func(vs ...int32) {
		copy(cells[p:], vs)
		p += len(vs)
	}
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			a := int32(j*(nx+1) + i)
			b, c, d := a+1, a+int32(nx)+2, a+int32(nx)+1
			switch pattern {
			case DiagonalUp:
				put(a, b, c, a, c, d)
			case DiagonalDown:
				put(a, b, d, b, c, d)
			case Quartered:
				e := int32(nGrid + j*nx + i)
				coords[2*e], coords[2*e+1] = 0.5*(xs[i]+xs[i+1]), 0.5*(ys[j]+ys[j+1])
				put(a, b, e, b, c, e, c, d, e, d, a, e)
			case Quads:
				put(a, b, c, d)
			}
		}
	}
	m := &Mesh{Dim: 2, Cell: ct, Coords: coords, Cells: cells}
	lo, hi := []float64{x0, y0}, []float64{x1, y1}
	var squares []int
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			if j == 0 || j == ny-1 || i == 0 || i == nx-1 {
				squares = append(squares, j*nx+i)
			} else {
				i = nx - 2 // jump to the last square of the row
			}
		}
	}
	m.Boundaries = sides(m, squares, per, lo, hi)
	return m
}

// Span3 meshes [x0,x1]×[y0,y1]×[z0,z1] with nx×ny×nz cubes, each split by
// pattern Kuhn (6 tetrahedra) or kept as one hexahedron (Hexes). Vertex
// (i,j,k) has index (k*(ny+1)+j)*(nx+1)+i; the cells of a cube are
// consecutive, cubes ordered x fastest. It panics ("mesh: ...") on an
// empty box, a cell count < 1 or a 2D pattern.
func Span3(x0, x1, y0, y1, z0, z1 float64, nx, ny, nz int, pattern Pattern) *Mesh {
	checkBox("Span3", []float64{x0, y0, z0}, []float64{x1, y1, z1}, []int{nx, ny, nz})
	var ct cell.Type
	var per int
	switch pattern {
	case Kuhn:
		ct, per = cell.Tetrahedron, 6
	case Hexes:
		ct, per = cell.Hexahedron, 1
	default:
		panic(fmt.Sprintf("mesh: Span3 with pattern %v", pattern))
	}
	xs, ys, zs := grid(x0, x1, nx), grid(y0, y1, ny), grid(z0, z1, nz)
	nVert := (nx + 1) * (ny + 1) * (nz + 1)
	coords := make([]float64, 3*nVert)
	for k := 0; k <= nz; k++ {
		for j := 0; j <= ny; j++ {
			for i := 0; i <= nx; i++ {
				v := (k*(ny+1)+j)*(nx+1) + i
				coords[3*v], coords[3*v+1], coords[3*v+2] = xs[i], ys[j], zs[k]
			}
		}
	}
	nvc := ct.NumVertices()
	cells := make([]int32, nx*ny*nz*per*nvc)
	sx, sy := int32(1), int32(nx+1)
	sz := int32((nx + 1) * (ny + 1))
	step := [3]int32{sx, sy, sz}
	p := 0
	for k := 0; k < nz; k++ {
		for j := 0; j < ny; j++ {
			for i := 0; i < nx; i++ {
				o := int32((k*(ny+1)+j)*(nx+1) + i)
				if pattern == Hexes {
					copy(cells[p:], []int32{o, o + sx, o + sx + sy, o + sy, o + sz, o + sx + sz, o + sx + sy + sz, o + sy + sz})
					p += 8
					continue
				}
				for _, pm := range kuhnPerms {
					v1 := o + step[pm.axes[0]]
					v2 := v1 + step[pm.axes[1]]
					v3 := o + sx + sy + sz
					if pm.odd { // swap v1, v2 to keep det > 0
						v1, v2 = v2, v1
					}
					cells[p], cells[p+1], cells[p+2], cells[p+3] = o, v1, v2, v3
					p += 4
				}
			}
		}
	}
	m := &Mesh{Dim: 3, Cell: ct, Coords: coords, Cells: cells}
	var cubes []int
	for k := 0; k < nz; k++ {
		for j := 0; j < ny; j++ {
			for i := 0; i < nx; i++ {
				if k == 0 || k == nz-1 || j == 0 || j == ny-1 || i == 0 || i == nx-1 {
					cubes = append(cubes, (k*ny+j)*nx+i)
				}
			}
		}
	}
	m.Boundaries = sides(m, cubes, per, []float64{x0, y0, z0}, []float64{x1, y1, z1})
	return m
}

// kuhnPerms are the 6 axis permutations with their parity; the path
// tetrahedron of the identity has det +1 (det of the unit lower-triangular
// matrix), an odd permutation flips the sign.
var kuhnPerms = [6]struct {
	axes [3]int
	odd  bool
}{
	{[3]int{0, 1, 2}, false}, {[3]int{0, 2, 1}, true}, {[3]int{1, 0, 2}, true},
	{[3]int{1, 2, 0}, false}, {[3]int{2, 0, 1}, false}, {[3]int{2, 1, 0}, true},
}

// sides classifies the facets of the cells of the listed blocks (squares or
// cubes, in increasing order, per cells each) by the box side whose plane
// contains all their vertices (exact comparison: generator coordinates on
// the sides are exact copies of the bounds).
func sides(m *Mesh, blocks []int, per int, lo, hi []float64) map[string][]FacetRef {
	d := m.Dim
	out := make(map[string][]FacetRef, 2*d+1)
	var all []FacetRef
	facets := m.Cell.Facets()
	for _, b := range blocks {
		for c := b * per; c < (b+1)*per; c++ {
			cv := m.CellVertices(c)
			for f, fv := range facets {
				for s := 0; s < 2*d; s++ {
					axis, val := s/2, lo[s/2]
					if s%2 == 1 {
						val = hi[axis]
					}
					on := true
					for _, lv := range fv {
						if m.Coords[int(cv[lv])*d+axis] != val {
							on = false
							break
						}
					}
					if on {
						r := FacetRef{int32(c), int32(f)}
						out[sideNames[s]] = append(out[sideNames[s]], r)
						all = append(all, r)
						break
					}
				}
			}
		}
	}
	for s := 0; s < 2*d; s++ {
		slices.SortFunc(out[sideNames[s]], CompareFacetRef)
	}
	slices.SortFunc(all, CompareFacetRef)
	out[All] = all
	return out
}
