package mesh

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"

	"github.com/formwright/formwright/runtime/cell"
)

// Encoding selects how WriteVTU stores the arrays.
type Encoding uint8

const (
	// Binary stores every array in an <AppendedData encoding="raw">
	// section: a UInt64 byte count, then the little-endian values.
	Binary Encoding = iota
	// ASCII stores every array as text in its element: numbers in the
	// shortest form that reads back exactly (strconv 'g', precision -1),
	// strings as their byte values, each followed by 0.
	ASCII
)

// WriteVTUFile writes m to path with WriteVTU. The file is created or
// truncated; on a write error it may be left incomplete.
func WriteVTUFile(path string, m *Mesh, enc Encoding) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := WriteVTU(f, m, enc); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// WriteVTU writes m as a VTK XML UnstructuredGrid file in the conventions
// of the package doc: the cells, then for each boundary part except "all"
// (in name order) its facets as facet cells, oriented as in
// Mesh.FacetVertices; the cell-data array PartArray with the region
// number of each cell and the part number of each facet cell (parts are
// numbered 1, 2, ... in name order); the field-data arrays PartIDsArray
// and PartNamesArray naming the parts. ReadVTU(WriteVTU(m)) equals m when
// every vertex of m belongs to a cell and m.Boundaries["all"] is the
// topological boundary, as for every generated, read or refined mesh.
func WriteVTU(w io.Writer, m *Mesh, enc Encoding) error {
	if enc != Binary && enc != ASCII {
		panic(fmt.Sprintf("mesh: WriteVTU with unknown Encoding %d", enc))
	}
	nc := m.NumCells()
	if m.Regions != nil && len(m.Regions) != nc {
		return fmt.Errorf("mesh: %d region numbers for %d cells", len(m.Regions), nc)
	}
	var names []string
	for _, n := range m.BoundaryNames() {
		if n == All {
			continue
		}
		if !validName(n) {
			return fmt.Errorf("mesh: boundary name %q cannot be written (want a letter followed by letters, digits, '_' or '-', at most %d bytes)", n, maxNameLen)
		}
		names = append(names, n)
	}
	// Facet cells: (part number, facet).
	type fc struct {
		part int32
		ref  FacetRef
	}
	var facets []fc
	for i, n := range names {
		for _, f := range m.Boundaries[n] {
			if f.Cell < 0 || int(f.Cell) >= nc || f.Facet < 0 || int(f.Facet) >= m.Cell.NumFacets() {
				return fmt.Errorf("mesh: boundary %q: no facet %d of cell %d", n, f.Facet, f.Cell)
			}
			facets = append(facets, fc{int32(i + 1), f})
		}
	}
	nvc := m.Cell.NumVertices()
	nfv := len(m.Cell.Facets()[0])
	ntot := nc + len(facets)
	nv := m.NumVertices()
	d := m.Dim
	top := int64(cellVTKType(m.Cell))
	ftype := int64(facetVTKType(m.Cell))
	var fv []int32
	facetVertex := func(i int) int64 { // connectivity entry i of the facet cells
		f := facets[i/nfv].ref
		fv = m.FacetVertices(f, fv[:0])
		return int64(fv[i%nfv])
	}
	var nameBytes []byte
	for _, n := range names {
		nameBytes = append(append(nameBytes, n...), 0)
	}
	arrays := []*outArray{}
	if len(names) > 0 {
		arrays = append(arrays,
			&outArray{section: "FieldData", elem: "DataArray", typ: "Int32", name: PartIDsArray, tuples: len(names), n: len(names),
				ival: func(i int) int64 { return int64(i + 1) }},
			&outArray{section: "FieldData", elem: "Array", typ: "String", name: PartNamesArray, tuples: len(names), n: len(nameBytes),
				ival: func(i int) int64 { return int64(nameBytes[i]) }})
	}
	arrays = append(arrays,
		&outArray{section: "CellData", elem: "DataArray", typ: "Int32", name: PartArray, n: ntot,
			ival: func(i int) int64 {
				if i >= nc {
					return int64(facets[i-nc].part)
				}
				if m.Regions != nil {
					return int64(m.Regions[i])
				}
				return 0
			}},
		&outArray{section: "Points", elem: "DataArray", typ: "Float64", comps: 3, n: 3 * nv, perLine: 3,
			fval: func(i int) float64 {
				if k := i % 3; k < d {
					return m.Coords[i/3*d+k]
				}
				return 0
			}},
		&outArray{section: "Cells", elem: "DataArray", typ: "Int64", name: "connectivity", n: nc*nvc + len(facets)*nfv,
			lineEnd: func(i int) bool { // one cell per line
				if i < nc*nvc {
					return i%nvc == nvc-1
				}
				return (i-nc*nvc)%nfv == nfv-1
			},
			ival: func(i int) int64 {
				if i < nc*nvc {
					return int64(m.Cells[i])
				}
				return facetVertex(i - nc*nvc)
			}},
		&outArray{section: "Cells", elem: "DataArray", typ: "Int64", name: "offsets", n: ntot,
			ival: func(i int) int64 {
				if i < nc {
					return int64((i + 1) * nvc)
				}
				return int64(nc*nvc + (i-nc+1)*nfv)
			}},
		&outArray{section: "Cells", elem: "DataArray", typ: "UInt8", name: "types", n: ntot,
			ival: func(i int) int64 {
				if i < nc {
					return top
				}
				return ftype
			}},
	)
	bw := bufio.NewWriterSize(w, 1<<16)
	bw.WriteString(`<?xml version="1.0"?>` + "\n")
	bw.WriteString(`<VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" header_type="UInt64">` + "\n")
	bw.WriteString("  <UnstructuredGrid>\n")
	offset := int64(0)
	section := ""
	closeSection := func() {
		if section != "" {
			indent := "    "
			if section != "FieldData" {
				indent = "      "
			}
			bw.WriteString(indent + "</" + section + ">\n")
		}
	}
	var buf []byte
	for _, a := range arrays {
		if a.section != section {
			closeSection()
			if a.section != "FieldData" && (section == "" || section == "FieldData") {
				fmt.Fprintf(bw, "    <Piece NumberOfPoints=\"%d\" NumberOfCells=\"%d\">\n", nv, ntot)
			}
			section = a.section
			indent := "      "
			if section == "FieldData" {
				indent = "    "
			}
			bw.WriteString(indent + "<" + section + ">\n")
		}
		indent := "        "
		if section == "FieldData" {
			indent = "      "
		}
		buf = append(buf[:0], indent+"<"+a.elem+` type="`+a.typ+`"`...)
		if a.name != "" {
			buf = append(buf, ` Name="`+a.name+`"`...)
		}
		if a.comps > 0 {
			buf = append(buf, ` NumberOfComponents="`+strconv.Itoa(a.comps)+`"`...)
		}
		if a.tuples > 0 {
			buf = append(buf, ` NumberOfTuples="`+strconv.Itoa(a.tuples)+`"`...)
		}
		if enc == Binary {
			buf = append(buf, ` format="appended" offset="`+strconv.FormatInt(offset, 10)+`"/>`+"\n"...)
			offset += 8 + int64(a.n*a.size())
			bw.Write(buf)
			continue
		}
		buf = append(buf, ` format="ascii">`+"\n"...)
		bw.Write(buf)
		a.writeText(bw, indent+"  ")
		bw.WriteString(indent + "</" + a.elem + ">\n")
	}
	closeSection()
	bw.WriteString("    </Piece>\n  </UnstructuredGrid>\n")
	if enc == Binary {
		bw.WriteString("  <AppendedData encoding=\"raw\">\n   _")
		for _, a := range arrays {
			a.writeBinary(bw)
		}
		bw.WriteString("\n  </AppendedData>\n")
	}
	bw.WriteString("</VTKFile>\n")
	return bw.Flush()
}

// cellVTKType is the linear VTK type of a formwright cell.
func cellVTKType(c cell.Type) int { return cell.VTKType(c, 1) }

// outArray is one array WriteVTU writes; value i comes from ival or fval.
type outArray struct {
	section, elem, typ, name string
	comps, tuples, n         int
	perLine                  int              // values per text line (default 10)
	lineEnd                  func(i int) bool // if set, replaces perLine: a line ends after value i
	ival                     func(i int) int64
	fval                     func(i int) float64
}

func (a *outArray) size() int {
	switch a.typ {
	case "UInt8", "String":
		return 1
	case "Int32":
		return 4
	}
	return 8
}

func (a *outArray) writeText(bw *bufio.Writer, indent string) {
	per := a.perLine
	if per == 0 {
		per = 10
	}
	buf := make([]byte, 0, 256)
	lineEnd := a.lineEnd
	if lineEnd == nil {
		lineEnd = func(i int) bool { return i%per == per-1 }
	}
	start := true
	for i := 0; i < a.n; i++ {
		if start {
			buf = append(buf, indent...)
		} else {
			buf = append(buf, ' ')
		}
		if a.fval != nil {
			buf = strconv.AppendFloat(buf, a.fval(i), 'g', -1, 64)
		} else {
			buf = strconv.AppendInt(buf, a.ival(i), 10)
		}
		if start = lineEnd(i) || i == a.n-1; start {
			buf = append(buf, '\n')
			bw.Write(buf)
			buf = buf[:0]
		}
	}
}

func (a *outArray) writeBinary(bw *bufio.Writer) {
	le := binary.LittleEndian
	var b [8]byte
	le.PutUint64(b[:], uint64(a.n*a.size()))
	bw.Write(b[:])
	for i := 0; i < a.n; i++ {
		switch a.typ {
		case "Float64":
			le.PutUint64(b[:], math.Float64bits(a.fval(i)))
			bw.Write(b[:8])
		case "Int64":
			le.PutUint64(b[:], uint64(a.ival(i)))
			bw.Write(b[:8])
		case "Int32":
			le.PutUint32(b[:], uint32(a.ival(i)))
			bw.Write(b[:4])
		default:
			bw.WriteByte(byte(a.ival(i)))
		}
	}
}
