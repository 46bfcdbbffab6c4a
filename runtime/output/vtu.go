package output

import (
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"strconv"
)

// Encoding selects how WriteVTU stores the data arrays.
type Encoding int

const (
	ASCII  Encoding = iota // format="ascii", shortest round-trip decimal text
	Binary                 // format="appended", AppendedData encoding="raw"
)

// HeaderType is the integer type of the byte-count headers of appended
// blocks (header_type attribute).
type HeaderType int

const (
	HeaderUInt64 HeaderType = iota // header_type="UInt64": arrays of any size
	HeaderUInt32                   // header_type="UInt32": arrays below 4 GiB each
)

func (h HeaderType) String() string {
	if h == HeaderUInt32 {
		return "UInt32"
	}
	return "UInt64"
}

// VTUOptions controls WriteVTU. The zero value is ASCII with UInt64
// headers.
type VTUOptions struct {
	Encoding   Encoding
	HeaderType HeaderType
}

// array is one DataArray to write.
type vtkArray struct {
	typ   string // Float64, Int64, UInt8
	name  string // "" for Points
	comps int
	f64   []float64
	i64   []int64
	u8    []uint8
}

func (a *vtkArray) len() int {
	switch a.typ {
	case "Float64":
		return len(a.f64)
	case "Int64":
		return len(a.i64)
	}
	return len(a.u8)
}

func (a *vtkArray) elemSize() int {
	if a.typ == "UInt8" {
		return 1
	}
	return 8
}

// WriteVTU writes g as a VTK XML UnstructuredGrid file (see the package
// documentation for the exact layout). It validates g first.
func WriteVTU(w io.Writer, g *Grid, opts VTUOptions) error {
	if err := g.Validate(); err != nil {
		return err
	}
	ew := &errWriter{w: w}
	hdr := opts.HeaderType
	if opts.Encoding != ASCII && opts.Encoding != Binary {
		panic(fmt.Sprintf("output: unknown Encoding %d", int(opts.Encoding)))
	}
	if hdr != HeaderUInt32 && hdr != HeaderUInt64 {
		panic(fmt.Sprintf("output: unknown HeaderType %d", int(hdr)))
	}
	ew.str(`<?xml version="1.0"?>` + "\n<!-- " + Signature + " -->\n")
	ew.str(`<VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" header_type="` + hdr.String() + `">` + "\n")
	ew.str("  <UnstructuredGrid>\n")
	if g.Timed {
		// The time of a frame of a series, as field data named TimeValue,
		// the name VTK's XML readers take as the time of the data set
		// [memory: VTK's vtkXMLReader].
		ew.str(`    <FieldData>` + "\n")
		ew.str(`      <DataArray type="Float64" Name="TimeValue" NumberOfTuples="1" format="ascii">` + strconv.FormatFloat(g.Time, 'g', -1, 64) + "</DataArray>\n")
		ew.str(`    </FieldData>` + "\n")
	}
	ew.str(fmt.Sprintf(`    <Piece NumberOfPoints="%d" NumberOfCells="%d">`+"\n", g.NumPoints(), g.NumCells()))

	var appended []*vtkArray
	offset := int64(0)
	hsize := int64(8)
	if hdr == HeaderUInt32 {
		hsize = 4
	}
	emit := func(indent string, a *vtkArray) {
		ew.str(indent + `<DataArray type="` + a.typ + `"`)
		if a.name != "" {
			ew.str(` Name="` + a.name + `"`)
		}
		if a.comps > 0 {
			ew.str(` NumberOfComponents="` + strconv.Itoa(a.comps) + `"`)
		}
		if opts.Encoding == Binary {
			nbytes := int64(a.len() * a.elemSize())
			if hdr == HeaderUInt32 && nbytes > math.MaxUint32 {
				ew.err = fmt.Errorf("output: array %q has %d bytes, too many for header_type UInt32", a.name, nbytes)
				return
			}
			ew.str(` format="appended" offset="` + strconv.FormatInt(offset, 10) + `"/>` + "\n")
			offset += hsize + nbytes
			appended = append(appended, a)
			return
		}
		ew.str(` format="ascii">` + "\n")
		writeASCII(ew, indent+"  ", a)
		ew.str(indent + "</DataArray>\n")
	}
	section := func(tag string, arrs []Array) {
		if len(arrs) == 0 {
			return
		}
		ew.str("      <" + tag + ">\n")
		for i := range arrs {
			emit("        ", &vtkArray{typ: "Float64", name: arrs[i].Name, comps: arrs[i].Components, f64: arrs[i].Values})
		}
		ew.str("      </" + tag + ">\n")
	}
	section("PointData", g.PointData)
	section("CellData", g.CellData)
	ew.str("      <Points>\n")
	emit("        ", &vtkArray{typ: "Float64", comps: 3, f64: g.Points})
	ew.str("      </Points>\n")
	ew.str("      <Cells>\n")
	emit("        ", &vtkArray{typ: "Int64", name: "connectivity", i64: g.Connectivity})
	emit("        ", &vtkArray{typ: "Int64", name: "offsets", i64: g.Offsets})
	emit("        ", &vtkArray{typ: "UInt8", name: "types", u8: g.Types})
	ew.str("      </Cells>\n")
	ew.str("    </Piece>\n")
	ew.str("  </UnstructuredGrid>\n")
	if opts.Encoding == Binary {
		ew.str(`  <AppendedData encoding="raw">` + "\n   _")
		buf := make([]byte, 0, 1<<16)
		for _, a := range appended {
			nbytes := uint64(a.len() * a.elemSize())
			if hdr == HeaderUInt32 {
				buf = binary.LittleEndian.AppendUint32(buf, uint32(nbytes))
			} else {
				buf = binary.LittleEndian.AppendUint64(buf, nbytes)
			}
			for i := 0; i < a.len(); i++ {
				switch a.typ {
				case "Float64":
					buf = binary.LittleEndian.AppendUint64(buf, math.Float64bits(a.f64[i]))
				case "Int64":
					buf = binary.LittleEndian.AppendUint64(buf, uint64(a.i64[i]))
				default:
					buf = append(buf, a.u8[i])
				}
				if len(buf) >= 1<<16-8 {
					ew.Write(buf)
					buf = buf[:0]
				}
			}
		}
		ew.Write(buf)
		ew.str("\n  </AppendedData>\n")
	}
	ew.str("</VTKFile>\n")
	return ew.err
}

// writeASCII writes the values of a, a few per line.
func writeASCII(ew *errWriter, indent string, a *vtkArray) {
	per := 6
	if a.comps > 1 {
		per = a.comps * max(1, 6/a.comps)
	}
	var buf []byte
	n := a.len()
	for i := 0; i < n; i++ {
		if i%per == 0 {
			if i > 0 {
				buf = append(buf, '\n')
				ew.Write(buf)
				buf = buf[:0]
			}
			buf = append(buf, indent...)
		} else {
			buf = append(buf, ' ')
		}
		switch a.typ {
		case "Float64":
			buf = strconv.AppendFloat(buf, a.f64[i], 'g', -1, 64)
		case "Int64":
			buf = strconv.AppendInt(buf, a.i64[i], 10)
		default:
			buf = strconv.AppendUint(buf, uint64(a.u8[i]), 10)
		}
	}
	if n > 0 {
		buf = append(buf, '\n')
		ew.Write(buf)
	}
}

// WriteVTUFile writes g to path atomically (see WriteFileAtomic).
func WriteVTUFile(path string, g *Grid, opts VTUOptions) error {
	return WriteFileAtomic(path, func(w io.Writer) error { return WriteVTU(w, g, opts) })
}
