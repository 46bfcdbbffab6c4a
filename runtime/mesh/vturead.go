package mesh

import (
	"bufio"
	"cmp"
	"encoding/binary"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strconv"
	"strings"
)

// Array names of the mesh file conventions (package doc, "Mesh files").
const (
	// PartArray is the Int32 cell-data array holding, on facet cells, the
	// boundary-part number and, on top-dimension cells, the region number.
	PartArray = "formwright_part"
	// PartIDsArray and PartNamesArray are the field-data arrays (Int32 and
	// String, one tuple per part) that name the boundary parts.
	PartIDsArray   = "formwright_part_ids"
	PartNamesArray = "formwright_part_names"
)

// Limits bound what ReadVTU accepts and so what it allocates: the sizes a
// file declares are checked against them before any array is allocated.
type Limits struct {
	MaxPoints int // NumberOfPoints
	MaxCells  int // NumberOfCells, facet and lower-dimension cells included
	// MaxNodes bounds the connectivity array (the sum of the node counts
	// of all cells).
	MaxNodes int
}

// DefaultLimits are the limits of ReadVTU and ReadVTUFile: 2^24 (16.7
// million) points and cells and 2^27 connectivity entries, enough for 16
// million linear tetrahedra or 4 million triquadratic hexahedra. A file
// at these limits needs about 4 GB while it is read (each array is held
// once as bytes and once decoded).
var DefaultLimits = Limits{MaxPoints: 1 << 24, MaxCells: 1 << 24, MaxNodes: 1 << 27}

// Fixed bounds of the reader: the XML markup outside array data (tags,
// attributes, text of other elements), the number of boundary parts and
// the length of a part name.
const (
	maxMarkupBytes = 1 << 20
	maxParts       = 1 << 16
	maxNameLen     = 255
)

// FileError is a mesh file that cannot be read or accepted. Error prints
// "path:line: cell C: msg" (or "point P"), leaving out what is unknown.
type FileError struct {
	Path  string // file name; "" when not known
	Line  int    // 1-based line of the XML element concerned; 0 if not known
	Cell  int    // 0-based cell index in the file; -1 if none
	Point int    // 0-based point index in the file; -1 if none
	Msg   string
	Err   error // the underlying I/O or XML error, if any
}

func (e *FileError) Error() string {
	var b strings.Builder
	b.WriteString(cmp.Or(e.Path, "mesh file"))
	if e.Line > 0 {
		b.WriteString(":" + strconv.Itoa(e.Line))
	}
	b.WriteString(": ")
	if e.Cell >= 0 {
		b.WriteString("cell " + strconv.Itoa(e.Cell) + ": ")
	}
	if e.Point >= 0 {
		b.WriteString("point " + strconv.Itoa(e.Point) + ": ")
	}
	b.WriteString(e.Msg)
	return b.String()
}

func (e *FileError) Unwrap() error { return e.Err }

// ReadOptions controls ReadVTU.
type ReadOptions struct {
	Name   string // file name for error messages
	Limits Limits // zero fields take the value of DefaultLimits
}

// ReadVTUFile reads a mesh from a .vtu file (ReadVTU).
func ReadVTUFile(path string) (*Mesh, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadVTU(f, ReadOptions{Name: path})
}

// ReadVTU reads a mesh from a VTK XML UnstructuredGrid file following the
// conventions of the package doc: it takes the vertices of the cells of
// the highest dimension present, repairs mirrored cells, drops points no
// such cell uses, matches facet cells to the boundary and names the
// boundary parts. Errors are *FileError.
func ReadVTU(r io.Reader, opts ReadOptions) (*Mesh, error) {
	lim := opts.Limits
	lim.MaxPoints = min(cmp.Or(lim.MaxPoints, DefaultLimits.MaxPoints), math.MaxInt32)
	lim.MaxCells = min(cmp.Or(lim.MaxCells, DefaultLimits.MaxCells), math.MaxInt32)
	lim.MaxNodes = min(cmp.Or(lim.MaxNodes, DefaultLimits.MaxNodes), math.MaxInt32)
	vr := &vtuReader{name: opts.Name, lim: lim}
	vr.in = &input{br: bufio.NewReaderSize(r, 1<<16), maxMarkup: maxMarkupBytes}
	vr.dec = xml.NewDecoder(vr.in)
	if err := vr.parse(); err != nil {
		return nil, err
	}
	return vr.build()
}

// role is what the reader uses an array for.
type role uint8

const (
	roleNone role = iota
	rolePoints
	roleConnectivity
	roleOffsets
	roleTypes
	rolePart
	rolePartIDs
	rolePartNames
	numRoles
)

var roleNames = [numRoles]string{
	rolePoints: "Points", roleConnectivity: "connectivity", roleOffsets: "offsets",
	roleTypes: "types", rolePart: PartArray, rolePartIDs: PartIDsArray, rolePartNames: PartNamesArray,
}

// array is one DataArray the reader uses.
type array struct {
	role   role
	typ    vtkType
	format string // ascii, binary or appended
	offset int64  // appended
	line   int
	want   int64 // values expected, -1 if not known in advance
	limit  int64 // values allowed
	tuples int   // strings declared (String arrays)
	ints   []int64
	floats []float64
	strs   []string
}

type vtuReader struct {
	name    string
	lim     Limits
	in      *input
	dec     *xml.Decoder
	lay     layout
	np, nc  int
	pieces  int
	arrays  [numRoles]*array
	pending []*array // appended, in file order
	zr      io.ReadCloser
}

func (r *vtuReader) line() int {
	l, _ := r.dec.InputPos()
	return l + r.in.lines
}

func (r *vtuReader) errAt(line int, format string, args ...any) *FileError {
	return &FileError{Path: r.name, Line: line, Cell: -1, Point: -1, Msg: fmt.Sprintf(format, args...)}
}

func (r *vtuReader) errf(format string, args ...any) *FileError {
	return r.errAt(r.line(), format, args...)
}

func (r *vtuReader) cellErr(c int, format string, args ...any) *FileError {
	e := r.errAt(0, format, args...)
	e.Cell = c
	return e
}

func (r *vtuReader) pointErr(p int, format string, args ...any) *FileError {
	e := r.errAt(0, format, args...)
	e.Point = p
	return e
}

// wrap turns an error met while reading an array or the XML into a
// *FileError at the current line.
func (r *vtuReader) wrap(err error, context string) error {
	if err == nil {
		return nil
	}
	var fe *FileError
	if errors.As(err, &fe) {
		return fe
	}
	var de *dataError
	if errors.As(err, &de) {
		if de.lines >= 0 {
			l, _ := r.dec.InputPos()
			return r.errAt(l+de.lines, "%s%s", context, de.msg)
		}
		return r.errf("%s%s", context, de.msg)
	}
	if errors.Is(err, errMarkupLimit) {
		return r.errf("more than %d bytes of XML markup outside the array data: not a mesh file this reader accepts", maxMarkupBytes)
	}
	var se *xml.SyntaxError
	if errors.As(err, &se) {
		e := r.errAt(se.Line+r.in.lines, "malformed XML: %s", se.Msg)
		e.Err = err
		return e
	}
	e := r.errf("%s%v", context, err)
	e.Err = err
	return e
}

func attr(t xml.StartElement, name string) (string, bool) {
	for _, a := range t.Attr {
		if a.Name.Local == name {
			return a.Value, true
		}
	}
	return "", false
}

// count parses a non-negative integer attribute no larger than max.
func (r *vtuReader) count(t xml.StartElement, name string, max int, def int) (int, error) {
	s, ok := attr(t, name)
	if !ok {
		if def >= 0 {
			return def, nil
		}
		return 0, r.errf("<%s> has no %s attribute", t.Name.Local, name)
	}
	n, err := strconv.ParseInt(strings.TrimSpace(s), 10, 64)
	if err != nil || n < 0 {
		return 0, r.errf("<%s %s=%q>: want a non-negative integer", t.Name.Local, name, s)
	}
	if n > int64(max) {
		return 0, r.errf("<%s %s=%q>: more than the limit of %d", t.Name.Local, name, s, max)
	}
	return int(n), nil
}

// parse walks the XML and decodes the arrays the mesh needs.
func (r *vtuReader) parse() error {
	var stack []string
	for {
		tok, err := r.dec.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			return r.wrap(err, "")
		}
		switch t := tok.(type) {
		case xml.StartElement:
			parent := ""
			if len(stack) > 0 {
				parent = stack[len(stack)-1]
			}
			name := t.Name.Local
			stack = append(stack, name)
			switch {
			case parent == "" && name != "VTKFile":
				return r.errf("not a VTK XML file: the root element is <%s>, want <VTKFile>", name)
			case name == "VTKFile" && parent == "":
				if err := r.header(t); err != nil {
					return err
				}
			case name == "Piece" && parent == "UnstructuredGrid":
				if err := r.piece(t); err != nil {
					return err
				}
			case (name == "DataArray" || name == "Array") && isArrayParent(parent):
				if err := r.array(t, parent, stack); err != nil {
					return err
				}
			case name == "AppendedData" && parent == "VTKFile":
				return r.appended(t)
			}
		case xml.EndElement:
			stack = stack[:len(stack)-1]
		case xml.CharData:
			if n := len(stack); n > 0 && (stack[n-1] == "DataArray" || stack[n-1] == "Array") && len(strings.TrimSpace(string(t))) > 0 {
				return r.errf("unexpected text inside <%s>: appended arrays have none, and the text of an inline array must come before any nested element", stack[n-1])
			}
		}
	}
	if r.pieces == 0 {
		return r.errf("no <UnstructuredGrid> with a <Piece>")
	}
	if len(r.pending) > 0 {
		a := r.pending[0]
		return r.errAt(a.line, "array %s is appended, but the file has no <AppendedData>", roleNames[a.role])
	}
	return nil
}

func isArrayParent(p string) bool {
	switch p {
	case "Points", "Cells", "CellData", "PointData", "FieldData":
		return true
	}
	return false
}

func (r *vtuReader) header(t xml.StartElement) error {
	if typ, _ := attr(t, "type"); typ != "UnstructuredGrid" {
		return r.errf("<VTKFile type=%q>: want a VTK XML UnstructuredGrid (.vtu) file", typ)
	}
	switch bo, _ := attr(t, "byte_order"); bo {
	case "LittleEndian", "":
		r.lay.order = binary.LittleEndian
	case "BigEndian":
		r.lay.order = binary.BigEndian
	default:
		return r.errf("<VTKFile byte_order=%q>: want LittleEndian or BigEndian", bo)
	}
	switch ht, _ := attr(t, "header_type"); ht {
	case "UInt32", "":
	case "UInt64":
		r.lay.header64 = true
	default:
		return r.errf("<VTKFile header_type=%q>: want UInt32 or UInt64", ht)
	}
	switch c, _ := attr(t, "compressor"); c {
	case "":
	case "vtkZLibDataCompressor":
		r.lay.compressed = true
	default:
		return r.errf("<VTKFile compressor=%q>: only vtkZLibDataCompressor is supported", c)
	}
	return nil
}

func (r *vtuReader) piece(t xml.StartElement) error {
	r.pieces++
	if r.pieces > 1 {
		return r.errf("a second <Piece>: the reader takes files of one piece (merge the pieces first)")
	}
	var err error
	if r.np, err = r.count(t, "NumberOfPoints", r.lim.MaxPoints, -1); err != nil {
		return err
	}
	r.nc, err = r.count(t, "NumberOfCells", r.lim.MaxCells, -1)
	return err
}

// classify finds the role of an array from its parent element and name.
func classify(parent, name string) role {
	switch parent {
	case "Points":
		return rolePoints
	case "Cells":
		switch name {
		case "connectivity":
			return roleConnectivity
		case "offsets":
			return roleOffsets
		case "types":
			return roleTypes
		}
	case "CellData":
		if name == PartArray {
			return rolePart
		}
	case "FieldData":
		switch name {
		case PartIDsArray:
			return rolePartIDs
		case PartNamesArray:
			return rolePartNames
		}
	}
	return roleNone
}

func (r *vtuReader) array(t xml.StartElement, parent string, stack []string) error {
	name, _ := attr(t, "Name")
	format, _ := attr(t, "format")
	ro := classify(parent, name)
	if ro != roleNone && parent != "FieldData" && (len(stack) < 3 || stack[len(stack)-3] != "Piece") {
		return r.errf("<%s> outside a <Piece>", parent)
	}
	switch format {
	case "ascii", "binary", "appended":
	default:
		return r.errf("<%s Name=%q format=%q>: want ascii, binary or appended", t.Name.Local, name, format)
	}
	if ro == roleNone {
		if format == "appended" {
			return nil
		}
		return r.wrap(r.in.skipText(), "")
	}
	if r.arrays[ro] != nil {
		return r.errf("a second %s array", roleNames[ro])
	}
	ts, _ := attr(t, "type")
	typ, ok := vtkTypeNames[ts]
	if !ok {
		return r.errf("array %s: unknown type %q", roleNames[ro], ts)
	}
	a := &array{role: ro, typ: typ, format: format, line: r.line(), want: -1}
	comps, err := r.count(t, "NumberOfComponents", 1<<10, 1)
	if err != nil {
		return err
	}
	if ro == rolePoints && comps != 3 {
		return r.errf("Points has %d components, want 3", comps)
	}
	if ro != rolePoints && comps != 1 {
		return r.errf("array %s has %d components, want 1", roleNames[ro], comps)
	}
	if (typ == vtkString) != (ro == rolePartNames) {
		return r.errf("array %s has type %s", roleNames[ro], ts)
	}
	switch ro {
	case rolePoints:
		a.want = 3 * int64(r.np)
	case roleConnectivity:
		a.limit = min(int64(r.lim.MaxNodes), maxCellNodes*int64(r.nc))
	case roleOffsets, roleTypes, rolePart:
		a.want = int64(r.nc)
	case rolePartIDs:
		a.limit = maxParts
	case rolePartNames:
		if a.tuples, err = r.count(t, "NumberOfTuples", maxParts, -1); err != nil {
			return err
		}
		a.limit = int64(a.tuples) * (maxNameLen + 1)
	}
	if a.want >= 0 {
		a.limit = a.want
	}
	if ro != rolePoints && typ.isFloat() {
		return r.errf("array %s has type %s, want an integer type", roleNames[ro], ts)
	}
	r.arrays[ro] = a
	switch format {
	case "appended":
		off, err := r.count(t, "offset", math.MaxInt, -1)
		if err != nil {
			return err
		}
		a.offset = int64(off)
		r.pending = append(r.pending, a)
		return nil
	case "binary":
		src := &b64Source{next: r.in.textByte}
		b, err := r.lay.readBinary(src, a.wantBytes(), a.limit*int64(typ.size()), &r.zr)
		if err == nil {
			err = a.setBytes(b, r.lay.order)
		}
		if err == nil {
			err = trailing(r.in, src)
		}
		return r.wrap(err, "array "+roleNames[ro]+": ")
	}
	// ascii
	var ints []int64
	var floats []float64
	pi, pf := &ints, (*[]float64)(nil)
	if ro == rolePoints {
		pi, pf = nil, &floats
	}
	if err := asciiValues(r.in, typ, a.limit, pi, pf); err != nil {
		return r.wrap(err, "array "+roleNames[ro]+": ")
	}
	n := int64(len(ints) + len(floats))
	if a.want >= 0 && n != a.want {
		return r.errAt(a.line, "array %s holds %d values, want %d", roleNames[ro], n, a.want)
	}
	if ro == rolePartNames {
		b := make([]byte, len(ints))
		for i, v := range ints {
			b[i] = byte(v)
		}
		a.strs, err = splitStrings(b, a.tuples)
		return r.wrap(err, "array "+roleNames[ro]+": ")
	}
	a.ints, a.floats = ints, floats
	return nil
}

// trailing checks that only white space follows inline binary data.
func trailing(in *input, src *b64Source) error {
	if src.i < src.np {
		return dataErrorf("data after the declared bytes")
	}
	for {
		b, ok, err := in.textByte()
		if err != nil {
			return err
		}
		if !ok {
			return nil
		}
		if !isSpace(b) {
			return dataErrorf("data after the declared bytes")
		}
	}
}

func (a *array) wantBytes() int64 {
	if a.want < 0 {
		return -1
	}
	return a.want * int64(a.typ.size())
}

// setBytes decodes binary values.
func (a *array) setBytes(b []byte, order binary.ByteOrder) error {
	if len(b)%a.typ.size() != 0 {
		return dataErrorf("%d bytes is not a whole number of %s values", len(b), typeName(a.typ))
	}
	var err error
	switch a.role {
	case rolePoints:
		a.floats, err = decodeFloats(b, a.typ, order)
	case rolePartNames:
		a.strs, err = splitStrings(b, a.tuples)
	default:
		a.ints, err = decodeInts(b, a.typ, order)
	}
	return err
}

// appended reads the arrays stored in <AppendedData>, in offset order,
// streaming past the data of arrays the mesh does not need.
func (r *vtuReader) appended(t xml.StartElement) error {
	enc, _ := attr(t, "encoding")
	if enc != "raw" && enc != "base64" {
		return r.errf("<AppendedData encoding=%q>: want raw or base64", enc)
	}
	line := r.line()
	for {
		b, err := r.in.br.ReadByte()
		if err != nil {
			return r.errAt(line, "<AppendedData> ends before its '_' marker")
		}
		if b == '_' {
			break
		}
		if b == '\n' {
			r.in.lines++
		}
		if !isSpace(b) {
			return r.errAt(line, "<AppendedData> must start with '_', found %q", b)
		}
	}
	pend := slices.Clone(r.pending)
	r.pending = nil
	slices.SortStableFunc(pend, func(a, b *array) int { return cmp.Compare(a.offset, b.offset) })
	var raw *rawSource
	var b64 *b64Source
	if enc == "raw" {
		raw = &rawSource{br: r.in.br}
	} else {
		b64 = &b64Source{next: r.in.textByte}
	}
	for _, a := range pend {
		fail := func(err error) error {
			var de *dataError
			if errors.As(err, &de) {
				return r.errAt(a.line, "array %s (appended, offset %d): %s", roleNames[a.role], a.offset, de.msg)
			}
			e := r.errAt(a.line, "array %s (appended, offset %d): %v", roleNames[a.role], a.offset, err)
			e.Err = err
			return e
		}
		var src byteSource
		if raw != nil {
			if a.offset < raw.pos {
				return fail(dataErrorf("overlaps the previous array, which ends at %d", raw.pos))
			}
			if err := raw.skip(a.offset - raw.pos); err != nil {
				return fail(err)
			}
			src = raw
		} else {
			if a.offset < b64.chars {
				return fail(dataErrorf("overlaps the previous array, which ends at %d", b64.chars))
			}
			for b64.chars < a.offset {
				_, ok, err := b64.next()
				if err != nil {
					return fail(err)
				}
				if !ok {
					return fail(dataErrorf("appended data ends at %d", b64.chars))
				}
				b64.chars++
			}
			b64.dropPending()
			src = b64
		}
		b, err := r.lay.readBinary(src, a.wantBytes(), a.limit*int64(a.typ.size()), &r.zr)
		if err == nil {
			err = a.setBytes(b, r.lay.order)
		}
		if err != nil {
			return fail(err)
		}
	}
	return nil
}
