package mesh

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"slices"
	"strconv"
	"strings"

	"github.com/formwright/formwright/runtime/cell"
)

// FileMagic and FileVersion open every mesh file (see the package doc).
const (
	FileMagic   = "formwright-mesh"
	FileVersion = 1
)

// FormatError is a malformed mesh file; Line is 1-based (0: no line, e.g.
// a read failure).
type FormatError struct {
	Name string // file name, if known
	Line int
	Msg  string
}

func (e *FormatError) Error() string {
	name := e.Name
	if name == "" {
		name = "mesh file"
	}
	if e.Line == 0 {
		return fmt.Sprintf("%s: %s", name, e.Msg)
	}
	return fmt.Sprintf("%s:%d: %s", name, e.Line, e.Msg)
}

type lineReader struct {
	sc   *bufio.Scanner
	line int
	name string
	last int // line of the last record returned
}

// next returns the fields of the next record, skipping blank and comment
// lines; nil at end of input.
func (r *lineReader) next() ([]string, error) {
	for r.sc.Scan() {
		r.line++
		t := r.sc.Text()
		if i := strings.IndexByte(t, '#'); i >= 0 {
			t = t[:i]
		}
		f := strings.Fields(t)
		if len(f) > 0 {
			r.last = r.line
			return f, nil
		}
	}
	if err := r.sc.Err(); err != nil {
		return nil, &FormatError{r.name, r.line, err.Error()}
	}
	r.last = r.line + 1
	return nil, nil
}

func (r *lineReader) errf(format string, args ...any) error {
	return &FormatError{r.name, r.last, fmt.Sprintf(format, args...)}
}

// keyword reads a record "word arg..." and checks the word and arg count.
func (r *lineReader) keyword(word string, nargs int) ([]string, error) {
	f, err := r.next()
	if err != nil {
		return nil, err
	}
	if f == nil {
		return nil, r.errf("unexpected end of file: want %q", word)
	}
	if f[0] != word {
		return nil, r.errf("want %q, got %q", word, f[0])
	}
	if len(f) != nargs+1 {
		return nil, r.errf("%q takes %d value(s), got %d", word, nargs, len(f)-1)
	}
	return f[1:], nil
}

func (r *lineReader) count(s, what string) (int, error) {
	n, err := strconv.Atoi(s)
	if err != nil || n < 0 || n > 1<<31-1 {
		return 0, r.errf("bad %s count %q: want a non-negative integer", what, s)
	}
	return n, nil
}

// Read reads a mesh in the formwright mesh file format (package doc). It
// checks counts, numbers, vertex indices, cell orientation, and that every
// boundary facet is a facet of exactly one cell; "all" is computed from the
// topology. Errors are *FormatError with the line number.
func Read(rd io.Reader) (*Mesh, error) { return read(rd, "") }

// ReadFile reads a mesh file; errors name the file.
func ReadFile(path string) (*Mesh, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return read(f, path)
}

func read(rd io.Reader, name string) (*Mesh, error) {
	sc := bufio.NewScanner(rd)
	sc.Buffer(make([]byte, 64*1024), 1<<20)
	r := &lineReader{sc: sc, name: name}
	f, err := r.next()
	if err != nil {
		return nil, err
	}
	if f == nil || f[0] != FileMagic {
		return nil, r.errf("not a formwright mesh file: want first record %q", FileMagic+" "+strconv.Itoa(FileVersion))
	}
	if len(f) != 2 || f[1] != strconv.Itoa(FileVersion) {
		return nil, r.errf("unsupported version %q (this reader knows version %d)", strings.Join(f[1:], " "), FileVersion)
	}
	a, err := r.keyword("dimension", 1)
	if err != nil {
		return nil, err
	}
	dim, err := strconv.Atoi(a[0])
	if err != nil || dim < 1 || dim > 3 {
		return nil, r.errf("bad dimension %q: want 1, 2 or 3", a[0])
	}
	if a, err = r.keyword("cell", 1); err != nil {
		return nil, err
	}
	ct, err := cell.Parse(a[0])
	if err != nil {
		return nil, r.errf("unknown cell %q (want interval, triangle, tetrahedron, quadrilateral or hexahedron)", a[0])
	}
	if ct.Dim() != dim {
		return nil, r.errf("cell %v has dimension %d, file declares dimension %d", ct, ct.Dim(), dim)
	}
	if a, err = r.keyword("vertices", 1); err != nil {
		return nil, err
	}
	nv, err := r.count(a[0], "vertex")
	if err != nil {
		return nil, err
	}
	// Capacities are capped: a corrupt count must not allocate gigabytes.
	m := &Mesh{Dim: dim, Cell: ct, Coords: make([]float64, 0, min(nv, 1<<16)*dim), Boundaries: map[string][]FacetRef{}}
	for i := 0; i < nv; i++ {
		f, err := r.next()
		if err != nil {
			return nil, err
		}
		if f == nil || isKeyword(f[0]) {
			return nil, r.errf("vertex %d missing: the file declares %d vertices", i, nv)
		}
		if len(f) != dim {
			return nil, r.errf("vertex %d: want %d coordinates, got %d", i, dim, len(f))
		}
		for _, s := range f {
			x, err := strconv.ParseFloat(s, 64)
			if err != nil || x-x != 0 {
				return nil, r.errf("vertex %d: bad coordinate %q", i, s)
			}
			m.Coords = append(m.Coords, x)
		}
	}
	if a, err = r.keyword("cells", 1); err != nil {
		return nil, err
	}
	nc, err := r.count(a[0], "cell")
	if err != nil {
		return nil, err
	}
	nvc := ct.NumVertices()
	m.Cells = make([]int32, 0, min(nc, 1<<16)*nvc)
	for i := 0; i < nc; i++ {
		f, err := r.next()
		if err != nil {
			return nil, err
		}
		if f == nil || isKeyword(f[0]) {
			return nil, r.errf("cell %d missing: the file declares %d cells", i, nc)
		}
		if len(f) != nvc {
			return nil, r.errf("cell %d: a %v has %d vertices, got %d", i, ct, nvc, len(f))
		}
		for _, s := range f {
			v, err := strconv.Atoi(s)
			if err != nil {
				return nil, r.errf("cell %d: bad vertex index %q", i, s)
			}
			if v < 0 || v >= nv {
				return nil, r.errf("cell %d: vertex index %d out of range [0,%d)", i, v, nv)
			}
			m.Cells = append(m.Cells, int32(v))
		}
		var buf [24]float64
		if det := orientation(ct, m.CellCoords(i, buf[:0])); !(det > 0) {
			return nil, r.errf("cell %d is inverted or degenerate (Jacobian determinant %g): list its vertices in positive orientation", i, det)
		}
	}
	idx := m.facetIndex()
	for {
		f, err := r.next()
		if err != nil {
			return nil, err
		}
		if f == nil {
			return nil, r.errf("unexpected end of file: want %q", "end")
		}
		if f[0] == "end" {
			if len(f) != 1 {
				return nil, r.errf("%q takes no values", "end")
			}
			break
		}
		if f[0] != "boundary" {
			return nil, r.errf("want %q or %q, got %q", "boundary", "end", f[0])
		}
		if len(f) != 3 {
			return nil, r.errf("want %q NAME COUNT", "boundary")
		}
		bname := f[1]
		if !validName(bname) {
			return nil, r.errf("bad boundary name %q: want a letter followed by letters, digits, '_' or '-'", bname)
		}
		if bname == All {
			return nil, r.errf("boundary name %q is reserved: the reader computes it", All)
		}
		if _, dup := m.Boundaries[bname]; dup {
			return nil, r.errf("boundary %q defined twice", bname)
		}
		n, err := r.count(f[2], "facet")
		if err != nil {
			return nil, err
		}
		refs := make([]FacetRef, 0, min(n, 1<<16))
		nfv := len(ct.Facets()[0])
		for i := 0; i < n; i++ {
			f, err := r.next()
			if err != nil {
				return nil, err
			}
			if f == nil || isKeyword(f[0]) {
				return nil, r.errf("boundary %q: facet %d missing: %d declared", bname, i, n)
			}
			if len(f) != nfv {
				return nil, r.errf("boundary %q: a facet of a %v has %d vertices, got %d", bname, ct, nfv, len(f))
			}
			k := facetKey{-1, -1, -1, -1}
			for j, s := range f {
				v, err := strconv.Atoi(s)
				if err != nil {
					return nil, r.errf("boundary %q: bad vertex index %q", bname, s)
				}
				if v < 0 || v >= nv {
					return nil, r.errf("boundary %q: vertex index %d out of range [0,%d)", bname, v, nv)
				}
				k[j] = int32(v)
			}
			slices.Sort(k[:nfv])
			cs := idx[k]
			switch len(cs) {
			case 0:
				return nil, r.errf("boundary %q: %v is not a facet of any cell", bname, f)
			case 1:
			default:
				return nil, r.errf("boundary %q: %v is an interior facet (shared by cells %d and %d)", bname, f, cs[0].Cell, cs[1].Cell)
			}
			refs = append(refs, cs[0])
		}
		slices.SortFunc(refs, compareFacetRef)
		for i := 1; i < len(refs); i++ {
			if refs[i] == refs[i-1] {
				return nil, r.errf("boundary %q lists the facet %d of cell %d twice", bname, refs[i].Facet, refs[i].Cell)
			}
		}
		m.Boundaries[bname] = refs
	}
	for {
		f, err := r.next()
		if err != nil {
			return nil, err
		}
		if f == nil {
			break
		}
		return nil, r.errf("unexpected %q after %q", f[0], "end")
	}
	var all []FacetRef
	for _, fs := range idx {
		if len(fs) == 1 {
			all = append(all, fs[0])
		}
	}
	slices.SortFunc(all, compareFacetRef)
	m.Boundaries[All] = all
	return m, nil
}

// isKeyword reports whether s starts a record of the format: a section
// that begins early means the previous one is short.
func isKeyword(s string) bool {
	switch s {
	case FileMagic, "dimension", "cell", "vertices", "cells", "boundary", "end":
		return true
	}
	return false
}

func validName(s string) bool {
	for i, r := range s {
		letter := r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z'
		if !letter && (i == 0 || !(r >= '0' && r <= '9' || r == '_' || r == '-')) {
			return false
		}
	}
	return s != ""
}

// Write writes m in the formwright mesh file format. Boundary facets are
// written as oriented vertex lists; "all" is not written (Read recomputes
// it). Coordinates are written in the shortest form that reads back
// exactly.
func Write(w io.Writer, m *Mesh) error {
	bw := bufio.NewWriter(w)
	fmt.Fprintf(bw, "%s %d\n", FileMagic, FileVersion)
	fmt.Fprintf(bw, "dimension %d\ncell %v\nvertices %d\n", m.Dim, m.Cell, m.NumVertices())
	buf := make([]byte, 0, 64)
	for v := 0; v < m.NumVertices(); v++ {
		buf = buf[:0]
		for k, x := range m.Vertex(v) {
			if k > 0 {
				buf = append(buf, ' ')
			}
			buf = strconv.AppendFloat(buf, x, 'g', -1, 64)
		}
		buf = append(buf, '\n')
		bw.Write(buf)
	}
	fmt.Fprintf(bw, "cells %d\n", m.NumCells())
	ints := func(vs []int32) {
		buf = buf[:0]
		for k, v := range vs {
			if k > 0 {
				buf = append(buf, ' ')
			}
			buf = strconv.AppendInt(buf, int64(v), 10)
		}
		buf = append(buf, '\n')
		bw.Write(buf)
	}
	for c := 0; c < m.NumCells(); c++ {
		ints(m.CellVertices(c))
	}
	var fv []int32
	for _, name := range m.BoundaryNames() {
		if name == All {
			continue
		}
		if !validName(name) {
			return fmt.Errorf("mesh: boundary name %q cannot be written (want a letter followed by letters, digits, '_' or '-')", name)
		}
		refs := m.Boundaries[name]
		fmt.Fprintf(bw, "boundary %s %d\n", name, len(refs))
		for _, f := range refs {
			fv = m.FacetVertices(f, fv[:0])
			ints(fv)
		}
	}
	bw.WriteString("end\n")
	return bw.Flush()
}

// WriteFile writes m to path.
func WriteFile(path string, m *Mesh) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := Write(f, m); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}
