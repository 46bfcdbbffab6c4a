package mesh

import (
	"bufio"
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
)

// This file decodes the payload of VTK XML DataArray elements: the value
// types, the three data formats (ascii, inline base64 "binary", appended
// raw or base64), the byte-count headers and the zlib block layout. The
// layout is the one described in "VTK File Formats" (Kitware, The VTK
// User's Guide, 11th ed.) and was checked against files written by
// VTK 9.1's vtkXMLUnstructuredGridWriter (testdata/vtkwritten/):
//
//   - uncompressed binary data is a byte count (header_type) followed by
//     the values;
//   - compressed data is a header of header_type integers — the number of
//     blocks n, the uncompressed block size, the uncompressed size of the
//     last block (0 when it is a full block), then the n compressed
//     sizes — followed by the n zlib streams;
//   - base64 text may be one run or several separately padded runs (VTK
//     encodes the header and the data separately); the decoder reads
//     4-character quanta and accepts padding at the end of any quantum;
//   - all integers, headers included, follow byte_order.

// vtkType is the value type of a DataArray.
type vtkType uint8

const (
	vtkInt8 vtkType = iota + 1
	vtkUInt8
	vtkInt16
	vtkUInt16
	vtkInt32
	vtkUInt32
	vtkInt64
	vtkUInt64
	vtkFloat32
	vtkFloat64
	vtkString
)

var vtkTypeNames = map[string]vtkType{
	"Int8": vtkInt8, "UInt8": vtkUInt8, "Int16": vtkInt16, "UInt16": vtkUInt16,
	"Int32": vtkInt32, "UInt32": vtkUInt32, "Int64": vtkInt64, "UInt64": vtkUInt64,
	"Float32": vtkFloat32, "Float64": vtkFloat64, "String": vtkString,
}

// size is the byte size of one value (1 for the characters of strings).
func (t vtkType) size() int {
	switch t {
	case vtkInt16, vtkUInt16:
		return 2
	case vtkInt32, vtkUInt32, vtkFloat32:
		return 4
	case vtkInt64, vtkUInt64, vtkFloat64:
		return 8
	}
	return 1
}

func (t vtkType) isFloat() bool { return t == vtkFloat32 || t == vtkFloat64 }

// intRange is the range of an integer type (UInt64 is capped at MaxInt64:
// larger values are refused).
func (t vtkType) intRange() (lo, hi int64) {
	switch t {
	case vtkInt8:
		return math.MinInt8, math.MaxInt8
	case vtkUInt8, vtkString:
		return 0, math.MaxUint8
	case vtkInt16:
		return math.MinInt16, math.MaxInt16
	case vtkUInt16:
		return 0, math.MaxUint16
	case vtkInt32:
		return math.MinInt32, math.MaxInt32
	case vtkUInt32:
		return 0, math.MaxUint32
	case vtkUInt64:
		return 0, math.MaxInt64
	}
	return math.MinInt64, math.MaxInt64
}

// dataError is a payload problem; the reader adds file, line and array.
// lines, when >= 0, is the value of input.lines at the offending text.
type dataError struct {
	msg   string
	lines int
}

func (e *dataError) Error() string { return e.msg }

func dataErrorf(format string, args ...any) error {
	return &dataError{fmt.Sprintf(format, args...), -1}
}

// errMarkupLimit stops the XML decoder when the markup exceeds
// maxMarkupBytes.
var errMarkupLimit = errors.New("mesh: markup limit")

// input is the byte stream of a file. The XML decoder reads the markup
// through ReadByte (counted against a budget, so that a huge tag cannot
// exhaust memory); the array reader takes over the stream for array text
// and appended data, which never pass through the decoder's buffers.
type input struct {
	br        *bufio.Reader
	markup    int64 // bytes read through ReadByte
	maxMarkup int64
	lines     int // newlines read outside the decoder
}

func (in *input) ReadByte() (byte, error) {
	in.markup++
	if in.markup > in.maxMarkup {
		return 0, errMarkupLimit
	}
	return in.br.ReadByte()
}

// Read is never used by encoding/xml when ReadByte exists; it is here so
// that input is an io.Reader.
func (in *input) Read(p []byte) (int, error) {
	if len(p) == 0 {
		return 0, nil
	}
	b, err := in.ReadByte()
	if err != nil {
		return 0, err
	}
	p[0] = b
	return 1, nil
}

// textByte returns the next byte of element text, or ok = false at the
// next '<' (left unread) or at the end of input.
func (in *input) textByte() (b byte, ok bool, err error) {
	b, err = in.br.ReadByte()
	if err == io.EOF {
		return 0, false, nil
	}
	if err != nil {
		return 0, false, err
	}
	switch b {
	case '<':
		in.br.UnreadByte()
		return 0, false, nil
	case '\n':
		in.lines++
	case '&':
		return 0, false, dataErrorf("entity or character reference in array data")
	}
	return b, true, nil
}

// textChunk returns the buffered element text up to the next '<' (or
// the end of the buffer), without consuming it: the caller processes it,
// counting newlines, and calls in.br.Discard(len). It returns an empty
// chunk at '<' or at the end of input.
func (in *input) textChunk() ([]byte, error) {
	if in.br.Buffered() == 0 {
		if _, err := in.br.Peek(1); err == io.EOF {
			return nil, nil
		} else if err != nil {
			return nil, err
		}
	}
	b, _ := in.br.Peek(in.br.Buffered())
	if i := bytes.IndexByte(b, '<'); i >= 0 {
		b = b[:i]
	}
	if bytes.IndexByte(b, '&') >= 0 {
		return nil, dataErrorf("entity or character reference in array data")
	}
	return b, nil
}

// skipText discards element text up to the next '<'.
func (in *input) skipText() error {
	for {
		b, err := in.textChunk()
		if err != nil || len(b) == 0 {
			return err
		}
		in.lines += bytes.Count(b, []byte{'\n'})
		in.br.Discard(len(b))
	}
}

func isSpace(b byte) bool { return b == ' ' || b == '\t' || b == '\n' || b == '\r' }

// byteSource yields decoded binary bytes: raw appended data or base64.
type byteSource interface {
	readFull(p []byte) error
}

// rawSource reads appended raw bytes, counting them for the offsets.
type rawSource struct {
	br  *bufio.Reader
	pos int64
}

func (s *rawSource) readFull(p []byte) error {
	n, err := io.ReadFull(s.br, p)
	s.pos += int64(n)
	if err == io.EOF || err == io.ErrUnexpectedEOF {
		return dataErrorf("appended data ends early (%d bytes after '_')", s.pos)
	}
	return err
}

// skip discards n bytes.
func (s *rawSource) skip(n int64) error {
	m, err := s.br.Discard(int(min(n, math.MaxInt32)))
	s.pos += int64(m)
	if err == io.EOF {
		return dataErrorf("appended data ends early (%d bytes after '_')", s.pos)
	}
	if err != nil {
		return err
	}
	if int64(m) < n {
		return s.skip(n - int64(m))
	}
	return nil
}

var b64Value = func() (t [256]int8) {
	for i := range t {
		t[i] = -1
	}
	const alphabet = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/"
	for i := 0; i < len(alphabet); i++ {
		t[alphabet[i]] = int8(i)
	}
	return t
}()

// b64Source decodes base64 (RFC 4648, standard alphabet) from a stream of
// characters, skipping white space, a quantum of 4 characters at a time.
// Padding may end any quantum, so separately encoded runs concatenate.
type b64Source struct {
	next  func() (byte, bool, error) // next character; ok = false at the end of the text
	pend  [3]byte
	np, i int   // pending decoded bytes pend[i:np]
	chars int64 // characters consumed, white space included
}

func (s *b64Source) quantum() error {
	var q [4]byte
	for k := 0; k < 4; {
		c, ok, err := s.next()
		if err != nil {
			return err
		}
		if !ok {
			if k == 0 {
				return dataErrorf("base64 data ends early")
			}
			return dataErrorf("base64 data ends inside a 4-character group")
		}
		s.chars++
		if isSpace(c) {
			continue
		}
		q[k] = c
		k++
	}
	var v [4]int8
	pad := 0
	for k, c := range q {
		if c == '=' && k >= 2 {
			pad++
			v[k] = 0
			continue
		}
		if pad > 0 || b64Value[c] < 0 {
			return dataErrorf("bad base64 character %q", c)
		}
		v[k] = b64Value[c]
	}
	n := uint32(v[0])<<18 | uint32(v[1])<<12 | uint32(v[2])<<6 | uint32(v[3])
	s.pend = [3]byte{byte(n >> 16), byte(n >> 8), byte(n)}
	s.np, s.i = 3-pad, 0
	return nil
}

func (s *b64Source) readFull(p []byte) error {
	for len(p) > 0 {
		if s.i == s.np {
			if err := s.quantum(); err != nil {
				return err
			}
			continue
		}
		n := copy(p, s.pend[s.i:s.np])
		s.i += n
		p = p[n:]
	}
	return nil
}

// dropPending forgets decoded bytes not yet read (the tail of a quantum
// past the end of an array).
func (s *b64Source) dropPending() { s.i = s.np }

// blockHeader reads one header_type integer.
type layout struct {
	order      binary.ByteOrder
	header64   bool
	compressed bool
}

func (l *layout) headerSize() int {
	if l.header64 {
		return 8
	}
	return 4
}

func (l *layout) readHeader(src byteSource) (uint64, error) {
	var b [8]byte
	if l.header64 {
		if err := src.readFull(b[:8]); err != nil {
			return 0, err
		}
		return l.order.Uint64(b[:8]), nil
	}
	if err := src.readFull(b[:4]); err != nil {
		return 0, err
	}
	return uint64(l.order.Uint32(b[:4])), nil
}

// readBinary reads one binary array from src: its header, then its bytes,
// decompressed if the file is compressed. The decoded size must equal
// want bytes when want >= 0, and must not exceed limit bytes otherwise;
// both are checked before anything is allocated.
func (l *layout) readBinary(src byteSource, want, limit int64, zr *io.ReadCloser) ([]byte, error) {
	check := func(n uint64) (int, error) {
		if want >= 0 && n != uint64(want) {
			return 0, dataErrorf("holds %d bytes, want %d", n, want)
		}
		if n > uint64(limit) {
			return 0, dataErrorf("declares %d bytes, more than the %d this array may hold", n, limit)
		}
		return int(n), nil
	}
	if !l.compressed {
		n, err := l.readHeader(src)
		if err != nil {
			return nil, err
		}
		size, err := check(n)
		if err != nil {
			return nil, err
		}
		// Grow with the data actually present: a short file that declares
		// a large array fails before much is allocated.
		buf := make([]byte, 0, min(size, chunk))
		for len(buf) < size {
			k := min(size-len(buf), chunk)
			buf = slices.Grow(buf, k)
			if err := src.readFull(buf[len(buf) : len(buf)+k]); err != nil {
				return nil, err
			}
			buf = buf[:len(buf)+k]
		}
		return buf, nil
	}
	var h [3]uint64
	for k := range h {
		var err error
		if h[k], err = l.readHeader(src); err != nil {
			return nil, err
		}
	}
	nblocks, bsize, last := h[0], h[1], h[2]
	var total uint64
	if nblocks > 0 {
		if bsize == 0 || last > bsize {
			return nil, dataErrorf("bad compression header: block size %d, last block size %d", bsize, last)
		}
		if last == 0 {
			last = bsize
		}
		if nblocks-1 > uint64(limit)/bsize {
			return nil, dataErrorf("declares %d blocks of %d bytes, more than the %d bytes this array may hold", nblocks, bsize, limit)
		}
		total = (nblocks-1)*bsize + last
	}
	size, err := check(total)
	if err != nil {
		return nil, err
	}
	csizes := make([]uint64, 0, min(nblocks, chunk))
	for range nblocks {
		cs, err := l.readHeader(src)
		if err != nil {
			return nil, err
		}
		csizes = append(csizes, cs)
	}
	out := make([]byte, 0, min(size, chunk))
	var cbuf []byte
	for k, cs := range csizes {
		usize := bsize
		if uint64(k) == nblocks-1 {
			usize = last
		}
		// zlib adds at most 5 bytes per 16 KiB stored block and 6 bytes
		// of framing (RFC 1950, RFC 1951); twice the size is ample.
		if cs > 2*usize+64 {
			return nil, dataErrorf("block %d: compressed size %d for %d bytes", k, cs, usize)
		}
		cbuf = slices.Grow(cbuf[:0], int(min(cs, chunk)))
		for uint64(len(cbuf)) < cs {
			n := int(min(cs-uint64(len(cbuf)), chunk))
			cbuf = slices.Grow(cbuf, n)
			if err := src.readFull(cbuf[len(cbuf) : len(cbuf)+n]); err != nil {
				return nil, err
			}
			cbuf = cbuf[:len(cbuf)+n]
		}
		if out, err = inflate(cbuf, out, int(usize), zr); err != nil {
			return nil, dataErrorf("block %d: %v", k, err)
		}
	}
	return out, nil
}

// chunk is the step by which the binary reader grows its buffers.
const chunk = 1 << 20

// inflate decompresses one zlib stream of exactly n bytes, appending them
// to dst.
func inflate(src, dst []byte, n int, zr *io.ReadCloser) ([]byte, error) {
	var err error
	if *zr == nil {
		*zr, err = zlib.NewReader(bytes.NewReader(src))
	} else {
		err = (*zr).(zlib.Resetter).Reset(bytes.NewReader(src), nil)
	}
	if err != nil {
		return dst, err
	}
	for want := len(dst) + n; len(dst) < want; {
		k := min(want-len(dst), chunk)
		dst = slices.Grow(dst, k)
		got, err := io.ReadFull(*zr, dst[len(dst):len(dst)+k])
		dst = dst[:len(dst)+got]
		if err != nil {
			return dst, fmt.Errorf("zlib data shorter than the %d bytes declared (%v)", n, err)
		}
	}
	var one [1]byte
	if k, _ := (*zr).Read(one[:]); k != 0 {
		return dst, fmt.Errorf("zlib data longer than the %d bytes declared", n)
	}
	return dst, nil
}

// decodeInts converts binary values of an integer type to int64.
func decodeInts(b []byte, t vtkType, order binary.ByteOrder) ([]int64, error) {
	if t.isFloat() {
		return nil, dataErrorf("want an integer type, have %v", typeName(t))
	}
	sz := t.size()
	out := make([]int64, len(b)/sz)
	for i := range out {
		p := b[i*sz:]
		var v int64
		switch t {
		case vtkInt8:
			v = int64(int8(p[0]))
		case vtkUInt8, vtkString:
			v = int64(p[0])
		case vtkInt16:
			v = int64(int16(order.Uint16(p)))
		case vtkUInt16:
			v = int64(order.Uint16(p))
		case vtkInt32:
			v = int64(int32(order.Uint32(p)))
		case vtkUInt32:
			v = int64(order.Uint32(p))
		case vtkInt64:
			v = int64(order.Uint64(p))
		case vtkUInt64:
			u := order.Uint64(p)
			if u > math.MaxInt64 {
				return nil, dataErrorf("value %d (index %d) out of range", u, i)
			}
			v = int64(u)
		}
		out[i] = v
	}
	return out, nil
}

// decodeFloats converts binary values of any numeric type to float64.
func decodeFloats(b []byte, t vtkType, order binary.ByteOrder) ([]float64, error) {
	switch t {
	case vtkFloat32:
		out := make([]float64, len(b)/4)
		for i := range out {
			out[i] = float64(math.Float32frombits(order.Uint32(b[4*i:])))
		}
		return out, nil
	case vtkFloat64:
		out := make([]float64, len(b)/8)
		for i := range out {
			out[i] = math.Float64frombits(order.Uint64(b[8*i:]))
		}
		return out, nil
	}
	is, err := decodeInts(b, t, order)
	if err != nil {
		return nil, err
	}
	out := make([]float64, len(is))
	for i, v := range is {
		out[i] = float64(v)
	}
	return out, nil
}

// splitStrings splits NUL-terminated strings; there must be exactly n.
func splitStrings(b []byte, n int) ([]string, error) {
	out := make([]string, 0, n)
	for len(b) > 0 {
		i := bytes.IndexByte(b, 0)
		if i < 0 {
			return nil, dataErrorf("string %d is not NUL-terminated", len(out))
		}
		if len(out) == n {
			return nil, dataErrorf("holds more than the %d strings declared", n)
		}
		out = append(out, string(b[:i]))
		b = b[i+1:]
	}
	if len(out) != n {
		return nil, dataErrorf("holds %d strings, %d declared", len(out), n)
	}
	return out, nil
}

func typeName(t vtkType) string {
	for s, u := range vtkTypeNames {
		if u == t {
			return s
		}
	}
	return "type(" + strconv.Itoa(int(t)) + ")"
}

// maxToken bounds one number in ascii data; the longest float64 in 'g'
// format has 24 characters.
const maxToken = 64

// asciiValues parses white-space separated numbers of type t from the
// element text (in.textByte) into ints or floats (whichever is non-nil),
// at most limit values (an error beyond).
func asciiValues(in *input, t vtkType, limit int64, ints *[]int64, floats *[]float64) error {
	var tok [maxToken]byte
	n := 0
	lo, hi := t.intRange()
	count := int64(0)
	tokLines := 0 // in.lines at the start of the token
	fail := func(format string, args ...any) error {
		return &dataError{fmt.Sprintf(format, args...), tokLines}
	}
	flush := func() error {
		if n == 0 {
			return nil
		}
		s := tok[:n]
		n = 0
		if count == limit {
			return fail("holds more than the %d values expected", limit)
		}
		count++
		if t.isFloat() {
			if ints != nil {
				return fail("want an integer type, have %v", typeName(t))
			}
			bits := 64
			if t == vtkFloat32 {
				bits = 32
			}
			x, err := strconv.ParseFloat(string(s), bits)
			if err != nil {
				return fail("value %d: bad number %q", count-1, s)
			}
			*floats = append(*floats, x)
			return nil
		}
		v, err := strconv.ParseInt(string(s), 10, 64)
		if err != nil || v < lo || v > hi {
			return fail("value %d: %q is not a %v", count-1, s, typeName(t))
		}
		if ints != nil {
			*ints = append(*ints, v)
		} else {
			*floats = append(*floats, float64(v))
		}
		return nil
	}
	for {
		chunk, err := in.textChunk()
		if err != nil {
			return err
		}
		if len(chunk) == 0 {
			return flush()
		}
		for _, b := range chunk {
			if isSpace(b) {
				if err := flush(); err != nil {
					return err
				}
				if b == '\n' {
					in.lines++
				}
				continue
			}
			if n == maxToken {
				return fail("value %d: number longer than %d characters", count, maxToken)
			}
			if n == 0 {
				tokLines = in.lines
			}
			tok[n] = b
			n++
		}
		in.br.Discard(len(chunk))
	}
}
