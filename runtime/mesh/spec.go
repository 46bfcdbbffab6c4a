package mesh

import (
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
)

// Spec is a parsed mesh description for the command line; see ParseSpec.
type Spec struct {
	// Dim is the dimension of a generated mesh (the number of bound
	// pairs); 0 when Path is set.
	Dim     int
	Bounds  []float64 // x0,x1[,y0,y1[,z0,z1]]
	N       []int     // cells per direction
	Pattern Pattern   // 2D and 3D
	Grading float64   // 1D; 1 = uniform
	// Path is the mesh file (.vtu) to read when the string is not a spec.
	Path string
}

// SpecError is a malformed mesh spec; Col is the 1-based byte column of
// the offending field.
type SpecError struct {
	Spec string
	Col  int
	Msg  string
}

func (e *SpecError) Error() string {
	return fmt.Sprintf("mesh spec %q: col %d: %s", e.Spec, e.Col, e.Msg)
}

// Detail returns the message followed by the spec and a caret under the
// offending column, for terminal output.
func (e *SpecError) Detail() string {
	return fmt.Sprintf("col %d: %s\n\t%s\n\t%s^", e.Col, e.Msg, e.Spec, strings.Repeat(" ", max(0, e.Col-1)))
}

// SpecWord is the generator word that starts a mesh spec.
const SpecWord = "span"

// patternsByDim are the cell patterns of a generated mesh, by dimension;
// the first is the default.
var patternsByDim = [4][]Pattern{2: {DiagonalUp, DiagonalDown, Quartered, Quads}, 3: {Kuhn, Hexes}}

// retiredSpecWords are spellings of earlier versions, each with the
// dimension it generated, so an old command line gets the new spelling.
var retiredSpecWords = map[string]int{"interval": 1, "rect": 2, "box": 3}

// ParseSpec parses a mesh spec:
//
//	span:X0,X1:N[:graded=R]                                   1D
//	span:X0,X1,Y0,Y1:NXxNY[:tri|tri-flip|quartered|quad]      2D (default tri)
//	span:X0,X1,Y0,Y1,Z0,Z1:NXxNYxNZ[:tet|hex]                 3D (default tet)
//
// The number of bound pairs gives the dimension. Any other string ending
// in ".vtu" (any case) is taken as the path of a mesh file (Spec.Path;
// see ReadVTU), unless it starts with a word followed by ':' and no file
// exists under that name, which is reported as an unknown generator
// (with the new spelling for the words of earlier versions). Errors are
// *SpecError with the column of the offending field.
func ParseSpec(s string) (Spec, error) {
	fields := strings.Split(s, ":")
	col := make([]int, len(fields)) // 1-based start column of each field
	c := 1
	for i, f := range fields {
		col[i] = c
		c += len(f) + 1
	}
	if fields[0] != SpecWord {
		if len(fields) > 1 && isWord(fields[0]) && len(fields[0]) > 1 {
			if _, err := os.Stat(s); errors.Is(err, fs.ErrNotExist) {
				if _, old := retiredSpecWords[fields[0]]; old {
					return Spec{}, &SpecError{s, 1, fmt.Sprintf("%q is the spelling of an earlier version: write %s", fields[0], respell(fields))}
				}
				return Spec{}, &SpecError{s, 1, fmt.Sprintf("unknown mesh generator %q (want %s:BOUNDS:COUNTS) and no file of that name", fields[0], SpecWord)}
			}
		}
		if s == "" {
			return Spec{}, &SpecError{s, 1, "empty mesh spec"}
		}
		if !strings.EqualFold(filepath.Ext(s), ".vtu") {
			return Spec{}, &SpecError{s, 1, "not a mesh spec, and not a mesh file name: mesh files are VTK XML unstructured grids ending in .vtu"}
		}
		return Spec{Path: s}, nil
	}
	fail := func(i int, format string, args ...any) (Spec, error) {
		at := len(s) + 1 // a missing field is reported just past the end
		if i < len(col) {
			at = col[i]
		}
		return Spec{}, &SpecError{s, at, fmt.Sprintf(format, args...)}
	}
	sp := Spec{Grading: 1}
	if len(fields) < 3 {
		return fail(len(fields), "want %s:BOUNDS:COUNTS", SpecWord)
	}
	// Bounds.
	bs := strings.Split(fields[1], ",")
	if len(bs) != 2 && len(bs) != 4 && len(bs) != 6 {
		return fail(1, "want 2, 4 or 6 comma-separated bounds (x0,x1[,y0,y1[,z0,z1]]), got %d", len(bs))
	}
	sp.Dim = len(bs) / 2
	if ps := patternsByDim[sp.Dim]; ps != nil {
		sp.Pattern = ps[0]
	}
	off := col[1]
	for k, b := range bs {
		v, err := strconv.ParseFloat(strings.TrimSpace(b), 64)
		if err != nil || v != v || v-v != 0 {
			return Spec{}, &SpecError{s, off, fmt.Sprintf("bad bound %q: want a finite number", b)}
		}
		sp.Bounds = append(sp.Bounds, v)
		if k%2 == 1 && !(v > sp.Bounds[k-1]) {
			return Spec{}, &SpecError{s, off, fmt.Sprintf("upper bound %v is not greater than lower bound %v", v, sp.Bounds[k-1])}
		}
		if k%2 == 1 && math.IsInf(v-sp.Bounds[k-1], 0) {
			return Spec{}, &SpecError{s, off, fmt.Sprintf("the extent %v − %v overflows: choose bounds whose difference is a finite number", v, sp.Bounds[k-1])}
		}
		off += len(b) + 1
	}
	// Counts.
	ns := strings.Split(fields[2], "x")
	if len(ns) != sp.Dim {
		return fail(2, "%d bound pairs need %d cell counts separated by 'x', got %q", sp.Dim, sp.Dim, fields[2])
	}
	off = col[2]
	total := 1.0
	for _, n := range ns {
		v, err := strconv.Atoi(n)
		if err != nil || v < 1 {
			return Spec{}, &SpecError{s, off, fmt.Sprintf("bad cell count %q: want a positive integer", n)}
		}
		total *= float64(v)
		sp.N = append(sp.N, v)
		off += len(n) + 1
	}
	if total*6 > float64(1<<31-1)/4 {
		return fail(2, "too many cells (%g) for 32-bit cell and vertex indices", total)
	}
	if limit := CellLimit(); total*cellsPerBox[sp.Dim] > float64(limit) {
		return fail(2, "%g cells is more than this machine's memory can assemble and solve (at most %d; see mesh.CellLimit)", total*cellsPerBox[sp.Dim], limit)
	}
	for k, n := range sp.N {
		lo, hi := sp.Bounds[2*k], sp.Bounds[2*k+1]
		h := (hi - lo) / float64(n)
		// Cells narrower than a few units in the last place of their
		// coordinates would be degenerate in floating point.
		if !(h > 64*ulp(math.Max(math.Abs(lo), math.Abs(hi)))) || !(h >= 0x1p-1000) {
			return fail(2, "%d cells over [%v, %v] are too small to represent in floating point", n, lo, hi)
		}
	}
	// Options.
	for i := 3; i < len(fields); i++ {
		f := fields[i]
		if sp.Dim == 1 {
			v, found := strings.CutPrefix(f, "graded=")
			if !found {
				return fail(i, "unknown 1D option %q (want graded=R)", f)
			}
			r, err := strconv.ParseFloat(v, 64)
			if err != nil || !(r > 0) || r-r != 0 {
				return Spec{}, &SpecError{s, col[i] + len("graded="), fmt.Sprintf("bad grading %q: want a positive number", v)}
			}
			sp.Grading = r
			// The smallest cell of a graded interval is h₀ = L(r−1)/(rⁿ−1)
			// (or L/n when r = 1); it must be representable too.
			L, n := sp.Bounds[1]-sp.Bounds[0], float64(sp.N[0])
			q := math.Max(r, 1/r)
			h0 := L / n
			if q != 1 {
				h0 = L * (q - 1) / (math.Pow(q, n) - 1)
			}
			if !(h0 > 64*ulp(math.Max(math.Abs(sp.Bounds[0]), math.Abs(sp.Bounds[1])))) {
				return Spec{}, &SpecError{s, col[i] + len("graded="), fmt.Sprintf("grading %v over %d cells makes the smallest cell too small to represent in floating point", r, sp.N[0])}
			}
			continue
		}
		if i > 3 {
			return fail(i, "unexpected field %q after the pattern", f)
		}
		if f == "crossed" && sp.Dim == 2 {
			return fail(i, "pattern %q is the spelling of an earlier version: write quartered", f)
		}
		p, err := ParsePattern(f)
		ok := err == nil && slices.Contains(patternsByDim[sp.Dim], p)
		if !ok {
			names := make([]string, len(patternsByDim[sp.Dim]))
			for j, q := range patternsByDim[sp.Dim] {
				names[j] = q.String()
			}
			return fail(i, "unknown %dD pattern %q (want %s)", sp.Dim, f, strings.Join(names, ", "))
		}
		sp.Pattern = p
	}
	return sp, nil
}

func isWord(s string) bool {
	for _, r := range s {
		if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r == '-' || r == '_') {
			return false
		}
	}
	return s != ""
}

// Build generates the mesh a spec describes, or reads Spec.Path with
// ReadVTUFile.
func (sp Spec) Build() (*Mesh, error) {
	b, n := sp.Bounds, sp.N
	switch sp.Dim {
	case 0:
		return ReadVTUFile(sp.Path)
	case 1:
		return Span1(b[0], b[1], n[0], sp.Grading), nil
	case 2:
		return Span2(b[0], b[1], b[2], b[3], n[0], n[1], sp.Pattern), nil
	case 3:
		return Span3(b[0], b[1], b[2], b[3], b[4], b[5], n[0], n[1], n[2], sp.Pattern), nil
	}
	return nil, fmt.Errorf("mesh: spec of dimension %d", sp.Dim)
}

// respell writes the fields of a spec in an earlier version's spelling
// (interval:, rect:, box:; the pattern crossed) in the current one.
func respell(fields []string) string {
	out := append([]string{SpecWord}, fields[1:]...)
	for i := 3; i < len(out); i++ {
		if out[i] == "crossed" {
			out[i] = "quartered"
		}
	}
	return strings.Join(out, ":")
}

// Load parses s with ParseSpec and builds the mesh (generated or read).
func Load(s string) (*Mesh, error) {
	sp, err := ParseSpec(s)
	if err != nil {
		return nil, err
	}
	return sp.Build()
}

// cellsPerBox is the most cells a generator makes per box of the grid
// (4 triangles with the quartered pattern, 6 tetrahedra), by dimension.
var cellsPerBox = [4]float64{0, 1, 4, 6}

func ulp(x float64) float64 { return math.Nextafter(x, math.Inf(1)) - x }
