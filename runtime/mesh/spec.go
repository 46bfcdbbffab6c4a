package mesh

import (
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// Spec is a parsed mesh description for the command line; see ParseSpec.
type Spec struct {
	// Kind is "interval", "rect" or "box"; empty when Path is set.
	Kind    string
	Bounds  []float64 // x0,x1[,y0,y1[,z0,z1]]
	N       []int     // cells per direction
	Pattern Pattern   // rect and box
	Grading float64   // interval; 1 = uniform
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

var specKinds = map[string]struct {
	dim      int
	patterns []Pattern
}{
	"interval": {1, nil},
	"rect":     {2, []Pattern{DiagonalUp, DiagonalDown, Crossed, Quads}},
	"box":      {3, []Pattern{Kuhn, Hexes}},
}

// ParseSpec parses a mesh spec:
//
//	interval:X0,X1:N[:graded=R]
//	rect:X0,X1,Y0,Y1:NXxNY[:tri|tri-flip|crossed|quad]     (default tri)
//	box:X0,X1,Y0,Y1,Z0,Z1:NXxNYxNZ[:tet|hex]               (default tet)
//
// Any other string ending in ".vtu" (any case) is taken as the path of a
// mesh file (Spec.Path; see ReadVTU), unless it starts with a word
// followed by ':' that names no kind and no file exists under that name,
// which is reported as an unknown kind. Errors are *SpecError with the
// column of the offending field.
func ParseSpec(s string) (Spec, error) {
	fields := strings.Split(s, ":")
	col := make([]int, len(fields)) // 1-based start column of each field
	c := 1
	for i, f := range fields {
		col[i] = c
		c += len(f) + 1
	}
	kind, ok := specKinds[fields[0]]
	if !ok {
		if len(fields) > 1 && isWord(fields[0]) && len(fields[0]) > 1 {
			if _, err := os.Stat(s); errors.Is(err, fs.ErrNotExist) {
				return Spec{}, &SpecError{s, 1, fmt.Sprintf("unknown mesh kind %q (want interval, rect or box) and no file of that name", fields[0])}
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
	sp := Spec{Kind: fields[0], Grading: 1}
	if kind.patterns != nil {
		sp.Pattern = kind.patterns[0]
	}
	if len(fields) < 3 {
		return fail(len(fields), "want %s:BOUNDS:COUNTS", fields[0])
	}
	// Bounds.
	bs := strings.Split(fields[1], ",")
	if len(bs) != 2*kind.dim {
		return fail(1, "want %d comma-separated bounds, got %d", 2*kind.dim, len(bs))
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
	if len(ns) != kind.dim {
		return fail(2, "want %d cell counts separated by 'x', got %q", kind.dim, fields[2])
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
	if limit := CellLimit(); total*cellsPerBox[kind.dim] > float64(limit) {
		return fail(2, "%g cells is more than this machine's memory can assemble and solve (at most %d; see mesh.CellLimit)", total*cellsPerBox[kind.dim], limit)
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
		if kind.dim == 1 {
			v, found := strings.CutPrefix(f, "graded=")
			if !found {
				return fail(i, "unknown interval option %q (want graded=R)", f)
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
		p, err := ParsePattern(f)
		ok := err == nil
		if ok {
			ok = false
			for _, q := range kind.patterns {
				ok = ok || q == p
			}
		}
		if !ok {
			names := make([]string, len(kind.patterns))
			for j, q := range kind.patterns {
				names[j] = q.String()
			}
			return fail(i, "unknown %s pattern %q (want %s)", sp.Kind, f, strings.Join(names, ", "))
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
	switch sp.Kind {
	case "":
		return ReadVTUFile(sp.Path)
	case "interval":
		return Interval(b[0], b[1], n[0], sp.Grading), nil
	case "rect":
		return Rectangle(b[0], b[1], b[2], b[3], n[0], n[1], sp.Pattern), nil
	case "box":
		return Box(b[0], b[1], b[2], b[3], b[4], b[5], n[0], n[1], n[2], sp.Pattern), nil
	}
	return nil, fmt.Errorf("mesh: unknown spec kind %q", sp.Kind)
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
// (4 triangles with the crossed pattern, 6 tetrahedra), by dimension.
var cellsPerBox = [4]float64{0, 1, 4, 6}

func ulp(x float64) float64 { return math.Nextafter(x, math.Inf(1)) - x }
