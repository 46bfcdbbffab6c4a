package output

import (
	"bytes"
	"encoding/binary"
	"encoding/csv"
	"encoding/xml"
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// testGrid: two triangles and a quad on 6 points, with awkward floats
// (non-terminating binary fractions, extremes, a subnormal, negative zero)
// so that any loss of precision shows.
func testGrid() *Grid {
	return &Grid{
		Points: []float64{
			0, 0, 0,
			0.1, 0, 0,
			1.0 / 3, 0.7, 0,
			math.Pi, 1e300, -2.5e-300,
			5e-324, math.Copysign(0, -1), 1,
			-7.25, 2, 3,
		},
		Connectivity: []int64{0, 1, 2, 1, 3, 2, 2, 3, 4, 5},
		Offsets:      []int64{3, 6, 10},
		Types:        []uint8{CellTriangle, CellTriangle, CellQuad},
		PointData: []Array{
			{Name: "u", Components: 1, Values: []float64{1, 2.5, -1e-17, 123456789.123456789, math.E, -0.3}},
			{Name: "velocity", Components: 3, Values: []float64{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 0.1, 0.2, 0.3, 1e-5, 2e-5, 3e-5}},
		},
		CellData: []Array{{Name: "tau", Components: 1, Values: []float64{0.033311132253990, 0.313035285499331, 0.9}}},
	}
}

type xArray struct {
	Type   string `xml:"type,attr"`
	Name   string `xml:"Name,attr"`
	NComp  string `xml:"NumberOfComponents,attr"`
	Format string `xml:"format,attr"`
	Offset string `xml:"offset,attr"`
	Text   string `xml:",chardata"`
}

type xArrays struct {
	Arrays []xArray `xml:"DataArray"`
}

type xFile struct {
	XMLName    xml.Name `xml:"VTKFile"`
	Type       string   `xml:"type,attr"`
	Version    string   `xml:"version,attr"`
	ByteOrder  string   `xml:"byte_order,attr"`
	HeaderType string   `xml:"header_type,attr"`
	Piece      struct {
		NumberOfPoints string  `xml:"NumberOfPoints,attr"`
		NumberOfCells  string  `xml:"NumberOfCells,attr"`
		PointData      xArrays `xml:"PointData"`
		CellData       xArrays `xml:"CellData"`
		Points         xArrays `xml:"Points"`
		Cells          xArrays `xml:"Cells"`
	} `xml:"UnstructuredGrid>Piece"`
}

// decoded values of one DataArray, as float64 (exact for the Int64 and
// UInt8 values used here).
func decodeASCII(t *testing.T, a xArray) []float64 {
	var out []float64
	for _, f := range strings.Fields(a.Text) {
		v, err := strconv.ParseFloat(f, 64)
		if err != nil {
			t.Fatalf("array %q: %v", a.Name, err)
		}
		out = append(out, v)
	}
	return out
}

// decodeAppended reads the block at the array's offset: a header of
// hsize bytes with the byte count, then little-endian values.
func decodeAppended(t *testing.T, raw []byte, a xArray, hsize int) ([]float64, int) {
	off, err := strconv.Atoi(a.Offset)
	if err != nil || off < 0 || off+hsize > len(raw) {
		t.Fatalf("array %q: bad offset %q (raw block %d bytes)", a.Name, a.Offset, len(raw))
	}
	var n int
	if hsize == 4 {
		n = int(binary.LittleEndian.Uint32(raw[off:]))
	} else {
		n = int(binary.LittleEndian.Uint64(raw[off:]))
	}
	data := raw[off+hsize : off+hsize+n]
	var out []float64
	switch a.Type {
	case "Float64":
		for i := 0; i < n; i += 8 {
			out = append(out, math.Float64frombits(binary.LittleEndian.Uint64(data[i:])))
		}
	case "Int64":
		for i := 0; i < n; i += 8 {
			out = append(out, float64(int64(binary.LittleEndian.Uint64(data[i:]))))
		}
	case "UInt8":
		for _, b := range data {
			out = append(out, float64(b))
		}
	default:
		t.Fatalf("array %q: unexpected type %q", a.Name, a.Type)
	}
	return out, off + hsize + n
}

func sameBits(a, b float64) bool { return math.Float64bits(a) == math.Float64bits(b) }

// Round trip through encoding/xml (and the raw appended block), comparing
// every number bit for bit and the header attributes VTK readers rely on:
// VTKFile type/version/byte_order/header_type, Piece NumberOfPoints and
// NumberOfCells, DataArray type/Name/NumberOfComponents/format/offset
// (VTK User's Guide, 11th ed., "VTK File Formats").
func TestVTURoundTrip(t *testing.T) {
	g := testGrid()
	for _, opts := range []VTUOptions{{ASCII, HeaderUInt64}, {Binary, HeaderUInt64}, {Binary, HeaderUInt32}} {
		var buf bytes.Buffer
		if err := WriteVTU(&buf, g, opts); err != nil {
			t.Fatal(err)
		}
		data := buf.Bytes()
		xmlPart := data
		var raw []byte
		hsize := 8
		if opts.HeaderType == HeaderUInt32 {
			hsize = 4
		}
		if opts.Encoding == Binary {
			const open = `<AppendedData encoding="raw">`
			i := bytes.Index(data, []byte(open))
			if i < 0 {
				t.Fatal("no raw AppendedData element")
			}
			j := i + len(open)
			for data[j] == ' ' || data[j] == '\n' {
				j++
			}
			if data[j] != '_' {
				t.Fatalf("appended data does not start with '_': %q", data[j])
			}
			const tail = "\n  </AppendedData>\n</VTKFile>\n"
			if !bytes.HasSuffix(data, []byte(tail)) {
				t.Fatal("file does not end with </AppendedData></VTKFile>")
			}
			raw = data[j+1 : len(data)-len(tail)]
			xmlPart = append(append([]byte(nil), data[:i]...), "</VTKFile>\n"...)
		} else if bytes.Contains(data, []byte("AppendedData")) {
			t.Error("ASCII file has an AppendedData element")
		}
		var f xFile
		if err := xml.Unmarshal(xmlPart, &f); err != nil {
			t.Fatalf("%+v: %v", opts, err)
		}
		if f.Type != "UnstructuredGrid" || f.Version != "1.0" || f.ByteOrder != "LittleEndian" || f.HeaderType != opts.HeaderType.String() {
			t.Errorf("%+v: header %q %q %q %q", opts, f.Type, f.Version, f.ByteOrder, f.HeaderType)
		}
		if f.Piece.NumberOfPoints != "6" || f.Piece.NumberOfCells != "3" {
			t.Errorf("Piece sizes %q, %q", f.Piece.NumberOfPoints, f.Piece.NumberOfCells)
		}
		type want struct {
			arr   []xArray
			typ   string
			name  string
			comps string
			vals  []float64
		}
		i64 := func(v []int64) []float64 {
			out := make([]float64, len(v))
			for i, x := range v {
				out[i] = float64(x)
			}
			return out
		}
		u8 := func(v []uint8) []float64 {
			out := make([]float64, len(v))
			for i, x := range v {
				out[i] = float64(x)
			}
			return out
		}
		checks := []want{
			{f.Piece.PointData.Arrays, "Float64", "u", "1", g.PointData[0].Values},
			{f.Piece.PointData.Arrays, "Float64", "velocity", "3", g.PointData[1].Values},
			{f.Piece.CellData.Arrays, "Float64", "tau", "1", g.CellData[0].Values},
			{f.Piece.Points.Arrays, "Float64", "", "3", g.Points},
			{f.Piece.Cells.Arrays, "Int64", "connectivity", "", i64(g.Connectivity)},
			{f.Piece.Cells.Arrays, "Int64", "offsets", "", i64(g.Offsets)},
			{f.Piece.Cells.Arrays, "UInt8", "types", "", u8(g.Types)},
		}
		end := 0
		for _, c := range checks {
			var a *xArray
			for k := range c.arr {
				if c.arr[k].Name == c.name {
					a = &c.arr[k]
				}
			}
			if a == nil {
				t.Fatalf("%+v: array %q missing", opts, c.name)
			}
			if a.Type != c.typ || a.NComp != c.comps {
				t.Errorf("%+v: array %q type %q comps %q, want %q %q", opts, c.name, a.Type, a.NComp, c.typ, c.comps)
			}
			var got []float64
			if opts.Encoding == ASCII {
				if a.Format != "ascii" || a.Offset != "" {
					t.Errorf("array %q format %q offset %q", c.name, a.Format, a.Offset)
				}
				got = decodeASCII(t, *a)
			} else {
				if a.Format != "appended" {
					t.Errorf("array %q format %q", c.name, a.Format)
				}
				var e int
				got, e = decodeAppended(t, raw, *a, hsize)
				end = max(end, e)
			}
			if len(got) != len(c.vals) {
				t.Fatalf("%+v: array %q has %d values, want %d", opts, c.name, len(got), len(c.vals))
			}
			for k := range got {
				if !sameBits(got[k], c.vals[k]) {
					t.Errorf("%+v: array %q value %d = %v, want %v", opts, c.name, k, got[k], c.vals[k])
				}
			}
		}
		if opts.Encoding == Binary && end != len(raw) {
			t.Errorf("%+v: blocks end at %d, raw data has %d bytes", opts, end, len(raw))
		}
	}
}

func TestValidate(t *testing.T) {
	bad := map[string]func(g *Grid){
		"points":       func(g *Grid) { g.Points = g.Points[:17] },
		"types":        func(g *Grid) { g.Types = g.Types[:2] },
		"offsets":      func(g *Grid) { g.Offsets[1] = 3 },
		"last offset":  func(g *Grid) { g.Connectivity = append(g.Connectivity, 0) },
		"range":        func(g *Grid) { g.Connectivity[4] = 6 },
		"cell size":    func(g *Grid) { g.Types[2] = CellTriangle },
		"field length": func(g *Grid) { g.PointData[0].Values = g.PointData[0].Values[:5] },
		"components":   func(g *Grid) { g.PointData[1].Components = 0 },
		"duplicate":    func(g *Grid) { g.PointData[1].Name = "u" },
		"quote":        func(g *Grid) { g.CellData[0].Name = `a"b` },
		"empty name":   func(g *Grid) { g.CellData[0].Name = "" },
	}
	if err := testGrid().Validate(); err != nil {
		t.Fatal(err)
	}
	for name, spoil := range bad {
		g := testGrid()
		spoil(g)
		if err := g.Validate(); err == nil {
			t.Errorf("%s: accepted", name)
		}
		if err := WriteVTU(io.Discard, g, VTUOptions{}); err == nil {
			t.Errorf("%s: WriteVTU accepted", name)
		}
	}
}

func TestCSV(t *testing.T) {
	g := testGrid()
	g.PointData[0].Name = "u, scaled" // needs quoting
	var buf bytes.Buffer
	if err := WriteCSV(&buf, g, 2); err != nil {
		t.Fatal(err)
	}
	// The first line is a comment that marks the file as formwright's
	// (Signature); encoding/csv skips it with Comment set.
	if !strings.HasPrefix(buf.String(), "# "+Signature+"\n") {
		t.Errorf("no signature line: %q", buf.String()[:20])
	}
	rd := csv.NewReader(&buf)
	rd.Comment = '#'
	recs, err := rd.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	wantHeader := []string{"x", "y", "u, scaled", "velocity_0", "velocity_1", "velocity_2"}
	if strings.Join(recs[0], "|") != strings.Join(wantHeader, "|") {
		t.Errorf("header %q", recs[0])
	}
	if len(recs) != 1+6 {
		t.Fatalf("%d records", len(recs))
	}
	for p := 0; p < 6; p++ {
		want := []float64{g.Points[3*p], g.Points[3*p+1], g.PointData[0].Values[p],
			g.PointData[1].Values[3*p], g.PointData[1].Values[3*p+1], g.PointData[1].Values[3*p+2]}
		for k, s := range recs[p+1] {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil || !sameBits(v, want[k]) {
				t.Errorf("row %d col %d: %q, want %v", p, k, s, want[k])
			}
		}
	}
}

var errBoom = errors.New("boom")

func listDir(t *testing.T, dir string) []string {
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range ents {
		names = append(names, e.Name())
	}
	return names
}

func TestWriteFileAtomic(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "out.vtu")
	failing := func(w io.Writer) error {
		io.WriteString(w, strings.Repeat("partial ", 20000)) // beyond the buffer: reaches the temp file
		return errBoom
	}
	// New file: failure leaves nothing behind.
	if err := WriteFileAtomic(path, failing); !errors.Is(err, errBoom) {
		t.Fatalf("error %v, want errBoom", err)
	}
	if names := listDir(t, dir); len(names) != 0 {
		t.Fatalf("directory not empty after failure: %v", names)
	}
	// Success creates it with mode 0644.
	if err := WriteFileAtomic(path, func(w io.Writer) error { _, err := io.WriteString(w, "first"); return err }); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(path); string(b) != "first" {
		t.Fatalf("content %q", b)
	}
	if fi, _ := os.Stat(path); fi.Mode().Perm() != 0o644 {
		t.Errorf("mode %v", fi.Mode())
	}
	// Existing file: failure leaves content, mode and mtime untouched.
	os.Chmod(path, 0o600)
	fi0, _ := os.Stat(path)
	if err := WriteFileAtomic(path, failing); !errors.Is(err, errBoom) {
		t.Fatalf("error %v", err)
	}
	fi1, _ := os.Stat(path)
	if b, _ := os.ReadFile(path); string(b) != "first" || !os.SameFile(fi0, fi1) || !fi1.ModTime().Equal(fi0.ModTime()) {
		t.Fatalf("existing file touched: %q", b)
	}
	if names := listDir(t, dir); len(names) != 1 {
		t.Fatalf("leftovers: %v", names)
	}
	// Success replaces it and keeps the mode.
	if err := WriteFileAtomic(path, func(w io.Writer) error { _, err := io.WriteString(w, "second"); return err }); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(path); string(b) != "second" {
		t.Fatalf("content %q", b)
	}
	if fi, _ := os.Stat(path); fi.Mode().Perm() != 0o600 {
		t.Errorf("mode not kept: %v", fi.Mode())
	}
	if err := WriteFileAtomic(filepath.Join(dir, "missing", "x"), func(io.Writer) error { return nil }); err == nil {
		t.Error("write into a missing directory succeeded")
	}
	// Whole VTU and CSV files through the atomic path.
	if err := WriteVTUFile(filepath.Join(dir, "g.vtu"), testGrid(), VTUOptions{Encoding: Binary}); err != nil {
		t.Fatal(err)
	}
	if err := WriteCSVFile(filepath.Join(dir, "g.csv"), testGrid(), 3); err != nil {
		t.Fatal(err)
	}
	bad := testGrid()
	bad.Types[0] = CellQuad
	if err := WriteVTUFile(filepath.Join(dir, "g.vtu"), bad, VTUOptions{}); err == nil {
		t.Error("invalid grid written")
	}
	if b, _ := os.ReadFile(filepath.Join(dir, "g.vtu")); !bytes.Contains(b, []byte("AppendedData")) {
		t.Error("previous g.vtu replaced by a failed write")
	}
}

func TestSameFileAndCheckNotInput(t *testing.T) {
	dir := t.TempDir()
	in := filepath.Join(dir, "model.txt")
	os.WriteFile(in, []byte("x"), 0o644)
	link := filepath.Join(dir, "link.txt")
	if err := os.Symlink(in, link); err != nil {
		t.Skip("no symlinks:", err)
	}
	alt := filepath.Join(dir, ".", "sub", "..", "model.txt")
	os.Mkdir(filepath.Join(dir, "sub"), 0o755)
	if !SameFile(in, link) || !SameFile(in, alt) {
		t.Error("same file not recognised")
	}
	if SameFile(in, filepath.Join(dir, "other.txt")) {
		t.Error("different files reported same")
	}
	if !SameFile(filepath.Join(dir, "new.vtu"), filepath.Join(dir, "sub", "..", "new.vtu")) {
		t.Error("same non-existent path not recognised")
	}
	var oe *OverwriteInputError
	if err := CheckNotInput(link, "other", in); !errors.As(err, &oe) || oe.Input != in {
		t.Errorf("CheckNotInput: %v", err)
	}
	if err := CheckNotInput(filepath.Join(dir, "out.vtu"), in); err != nil {
		t.Errorf("CheckNotInput: %v", err)
	}
}
