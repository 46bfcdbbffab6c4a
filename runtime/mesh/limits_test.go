package mesh

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"regexp"
	"runtime"
	"testing"
)

// appendedTriangle is a one-triangle file whose Points array is appended
// raw with the given payload (byte-count header included); compressed
// adds the zlib compressor attribute.
func appendedTriangle(np int, compressed bool, payload []byte) []byte {
	comp := ""
	if compressed {
		comp = ` compressor="vtkZLibDataCompressor"`
	}
	var b bytes.Buffer
	fmt.Fprintf(&b, `<VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" header_type="UInt64"%s>
<UnstructuredGrid><Piece NumberOfPoints="%d" NumberOfCells="1">
<Points><DataArray type="Float64" NumberOfComponents="3" format="appended" offset="0"/></Points>
<Cells><DataArray type="Int64" Name="connectivity" format="ascii">0 1 2</DataArray>
<DataArray type="Int64" Name="offsets" format="ascii">3</DataArray>
<DataArray type="UInt8" Name="types" format="ascii">5</DataArray></Cells>
</Piece></UnstructuredGrid>
<AppendedData encoding="raw">_`, comp, np)
	b.Write(payload)
	b.WriteString("</AppendedData></VTKFile>\n")
	return b.Bytes()
}

func u64s(vs ...uint64) []byte {
	var b []byte
	for _, v := range vs {
		b = binary.LittleEndian.AppendUint64(b, v)
	}
	return b
}

var trianglePoints = func() []byte {
	var b []byte
	for _, x := range []float64{0, 0, 0, 1, 0, 0, 0, 1, 0} {
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(x))
	}
	return b
}()

// Sizes a file declares are checked against Limits and against each
// other before arrays are allocated, and buffers grow only with the data
// present: a short file that declares 2^24 points costs little memory.
func TestReadLimits(t *testing.T) {
	deflate := func(b []byte) []byte {
		var z bytes.Buffer
		zw := zlib.NewWriter(&z)
		zw.Write(b)
		zw.Close()
		return z.Bytes()
	}
	z := bytes.NewBuffer(deflate(trianglePoints))
	short, long := deflate(trianglePoints[:40]), deflate(append(trianglePoints, 1, 2, 3))
	cases := []struct {
		name string
		src  []byte
		lim  Limits
		re   string // "" = must succeed
	}{
		{"good", appendedTriangle(3, false, append(u64s(72), trianglePoints...)), Limits{}, ""},
		{"good zlib", appendedTriangle(3, true, append(u64s(1, 72, 72, uint64(z.Len())), z.Bytes()...)), Limits{}, ""},
		{"short", appendedTriangle(1<<24, false, append(u64s(24<<24), trianglePoints...)), Limits{}, `appended data ends early`},
		{"byte count", appendedTriangle(3, false, append(u64s(80), trianglePoints...)), Limits{}, `holds 80 bytes, want 72`},
		{"blocks", appendedTriangle(3, true, u64s(1<<40, 1, 0)), Limits{}, `declares 1099511627776 blocks of 1 bytes, more than the 72 bytes`},
		{"block sizes", appendedTriangle(3, true, u64s(1, 72, 73)), Limits{}, `bad compression header`},
		{"compressed size", appendedTriangle(3, true, u64s(1, 72, 0, 1<<40)), Limits{}, `compressed size 1099511627776 for 72 bytes`},
		{"not zlib", appendedTriangle(3, true, append(u64s(1, 72, 0, 10), make([]byte, 10)...)), Limits{}, `block 0: zlib: invalid header`},
		{"block total", appendedTriangle(3, true, append(u64s(2, 72, 0, uint64(z.Len()), uint64(z.Len())), append(z.Bytes(), z.Bytes()...)...)), Limits{}, `holds 144 bytes, want 72`},
		{"zlib short", appendedTriangle(3, true, append(u64s(1, 72, 0, uint64(len(short))), short...)), Limits{}, `zlib data shorter than the 72 bytes declared`},
		{"zlib long", appendedTriangle(3, true, append(u64s(1, 72, 0, uint64(len(long))), long...)), Limits{}, `zlib data longer than the 72 bytes declared`},
		{"points limit", appendedTriangle(3, false, append(u64s(72), trianglePoints...)), Limits{MaxPoints: 2}, `NumberOfPoints="3">: more than the limit of 2`},
		{"nodes limit", appendedTriangle(3, false, append(u64s(72), trianglePoints...)), Limits{MaxNodes: 2}, `connectivity: holds more than the 2 values expected`},
	}
	for _, c := range cases {
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		m, err := ReadVTU(bytes.NewReader(c.src), ReadOptions{Name: c.name, Limits: c.lim})
		runtime.ReadMemStats(&after)
		if c.re == "" {
			if err != nil || m.NumCells() != 1 {
				t.Errorf("%s: %v", c.name, err)
			}
			continue
		}
		var fe *FileError
		if !errors.As(err, &fe) || !regexp.MustCompile(c.re).MatchString(fe.Msg) {
			t.Errorf("%s: got %v, want a FileError matching %q", c.name, err, c.re)
		}
		// 8 MiB: the 64 KiB input buffer, a 1 MiB growth step, the XML
		// decoder; far below the 400 MB the short file declares.
		if alloc := after.TotalAlloc - before.TotalAlloc; alloc > 8<<20 {
			t.Errorf("%s: allocated %d bytes", c.name, alloc)
		}
	}
}
