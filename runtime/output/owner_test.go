package output

import (
	"bytes"
	"errors"
	"image"
	"image/png"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestTagPNG: the tagged image still decodes (Go's image/png, an
// independent PNG reader, checks every chunk CRC) to the same pixels, and
// the signature is found.
func TestTagPNG(t *testing.T) {
	img := image.NewGray(image.Rect(0, 0, 3, 2))
	img.Pix[4] = 200
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		t.Fatal(err)
	}
	tagged := TagPNG(buf.Bytes())
	got, err := png.Decode(bytes.NewReader(tagged))
	if err != nil {
		t.Fatalf("tagged PNG does not decode: %v", err)
	}
	if g := got.(*image.Gray); !bytes.Equal(g.Pix, img.Pix) {
		t.Error("pixels changed")
	}
	if !bytes.Contains(tagged[:min(len(tagged), 200)], []byte(Signature)) {
		t.Error("no signature in the tagged PNG")
	}
	if out := TagPNG([]byte("not a png")); string(out) != "not a png" {
		t.Error("non-PNG data changed")
	}
}

// TestCheckTarget: a new file and a file formwright wrote may be written;
// a user's file, a directory and a missing directory may not.
func TestCheckTarget(t *testing.T) {
	dir := t.TempDir()
	if err := CheckTarget(filepath.Join(dir, "new.vtu")); err != nil {
		t.Errorf("new file: %v", err)
	}
	ours := filepath.Join(dir, "ours.csv")
	if err := WriteCSVFile(ours, testGrid(), 2); err != nil {
		t.Fatal(err)
	}
	if err := CheckTarget(ours); err != nil {
		t.Errorf("our own file: %v", err)
	}
	theirs := filepath.Join(dir, "notes.csv")
	os.WriteFile(theirs, []byte("x,y\n1,2\n"), 0o644)
	for name, p := range map[string]string{"user file": theirs, "directory": dir, "missing directory": filepath.Join(dir, "no", "x.vtu")} {
		if err := CheckTarget(p); err == nil {
			t.Errorf("%s accepted", name)
		}
	}
	if err := CheckTarget(theirs); err == nil || !strings.Contains(err.Error(), "not written by formwright") {
		t.Errorf("user file: %v", err)
	}
}

// TestStaged: staged files appear only on Commit; Abort leaves nothing,
// not even temporary files.
func TestStaged(t *testing.T) {
	dir := t.TempDir()
	var s Staged
	for _, n := range []string{"a.csv", "b.csv"} {
		if err := s.Write(filepath.Join(dir, n), func(w io.Writer) error { return WriteCSV(w, testGrid(), 2) }); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "a.csv")); err == nil {
		t.Error("a staged file is visible before Commit")
	}
	if err := s.Commit(); err != nil {
		t.Fatal(err)
	}
	for _, n := range []string{"a.csv", "b.csv"} {
		if ok, err := Written(filepath.Join(dir, n)); !ok || err != nil {
			t.Errorf("%s after Commit: %v %v", n, ok, err)
		}
	}
	var s2 Staged
	s2.Write(filepath.Join(dir, "c.csv"), func(w io.Writer) error { return WriteCSV(w, testGrid(), 2) })
	s2.Abort()
	entries, _ := os.ReadDir(dir)
	if len(entries) != 2 {
		t.Errorf("after Abort the directory holds %d entries, want the 2 committed files", len(entries))
	}
}

// WriteFileNew writes a new file and never replaces an existing one, even
// one formwright wrote; no temporary file is left behind either way.
func TestWriteFileNew(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "m.vtu")
	write := func(s string) func(w io.Writer) error {
		return func(w io.Writer) error { _, err := io.WriteString(w, s); return err }
	}
	if err := WriteFileNew(p, write("first "+Signature)); err != nil {
		t.Fatal(err)
	}
	err := WriteFileNew(p, write("second"))
	if !errors.Is(err, fs.ErrExist) {
		t.Fatalf("second write: %v, want an error wrapping fs.ErrExist", err)
	}
	if b, _ := os.ReadFile(p); string(b) != "first "+Signature {
		t.Errorf("the file holds %q", b)
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 1 {
		t.Errorf("%d entries in the directory, want the file alone", len(ents))
	}
}
