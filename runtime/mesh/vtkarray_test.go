package mesh

import (
	"encoding/base64"
	"encoding/binary"
	"math"
	"slices"
	"strings"
	"testing"
)

// Binary values of every integer type, in both byte orders, decode to
// the values encoding/binary wrote (the extremes of each type), and
// UInt64 values beyond MaxInt64 are refused.
func TestDecodeInts(t *testing.T) {
	cases := []struct {
		typ  vtkType
		vals []int64
	}{
		{vtkInt8, []int64{math.MinInt8, -1, 0, math.MaxInt8}},
		{vtkUInt8, []int64{0, 1, math.MaxUint8}},
		{vtkInt16, []int64{math.MinInt16, -2, math.MaxInt16}},
		{vtkUInt16, []int64{0, math.MaxUint16}},
		{vtkInt32, []int64{math.MinInt32, -3, math.MaxInt32}},
		{vtkUInt32, []int64{0, math.MaxUint32}},
		{vtkInt64, []int64{math.MinInt64, -4, math.MaxInt64}},
		{vtkUInt64, []int64{0, math.MaxInt64}},
	}
	for _, order := range []interface {
		binary.ByteOrder
		binary.AppendByteOrder
	}{binary.LittleEndian, binary.BigEndian} {
		for _, c := range cases {
			var b []byte
			for _, v := range c.vals {
				switch c.typ.size() {
				case 1:
					b = append(b, byte(v))
				case 2:
					b = order.AppendUint16(b, uint16(v))
				case 4:
					b = order.AppendUint32(b, uint32(v))
				case 8:
					b = order.AppendUint64(b, uint64(v))
				}
			}
			got, err := decodeInts(b, c.typ, order)
			if err != nil || !slices.Equal(got, c.vals) {
				t.Errorf("%v %v: %v %v, want %v", order, typeName(c.typ), got, err, c.vals)
			}
			fs, err := decodeFloats(b, c.typ, order)
			if err != nil || len(fs) != len(c.vals) || fs[0] != float64(c.vals[0]) {
				t.Errorf("%v %v as floats: %v %v", order, typeName(c.typ), fs, err)
			}
		}
	}
	if _, err := decodeInts(binary.LittleEndian.AppendUint64(nil, 1<<63), vtkUInt64, binary.LittleEndian); err == nil {
		t.Error("UInt64 2^63 accepted")
	}
	f32 := binary.BigEndian.AppendUint32(nil, math.Float32bits(0.1))
	if fs, _ := decodeFloats(f32, vtkFloat32, binary.BigEndian); fs[0] != float64(float32(0.1)) {
		t.Errorf("Float32: %v", fs)
	}
}

// The base64 reader decodes one run or several separately padded runs
// (as VTK writes header and data), skips white space, and refuses bad
// characters, misplaced padding and truncated groups.
func TestBase64Runs(t *testing.T) {
	read := func(text string, n int) ([]byte, error) {
		i := 0
		src := &b64Source{next: func() (byte, bool, error) {
			if i == len(text) {
				return 0, false, nil
			}
			i++
			return text[i-1], true, nil
		}}
		out := make([]byte, n)
		return out, src.readFull(out)
	}
	data := []byte("formwright mesh data")
	enc := base64.StdEncoding.EncodeToString
	for _, text := range []string{
		enc(data),
		enc(data[:4]) + enc(data[4:]),
		enc(data[:1]) + enc(data[1:2]) + "\n  " + enc(data[2:]),
	} {
		got, err := read(text, len(data))
		if err != nil || string(got) != string(data) {
			t.Errorf("%q: %q %v", text, got, err)
		}
	}
	for text, msg := range map[string]string{
		"Zm9y*w==": "bad base64 character",
		"Zm=y":     "bad base64 character",
		"Z===":     "bad base64 character",
		"Zm9":      "inside a 4-character group",
		"":         "ends early",
	} {
		if _, err := read(text, 4); err == nil || !strings.Contains(err.Error(), msg) {
			t.Errorf("%q: got %v, want %q", text, err, msg)
		}
	}
}
