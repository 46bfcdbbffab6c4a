package output

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sync"
)

// WriteFileAtomic writes a file by calling write on a buffered writer to a
// temporary file in the same directory as path, flushing, fsyncing and
// closing it, and renaming it over path (then fsyncing the directory, best
// effort). If write or any step fails, the temporary file is removed, an
// existing file at path is left untouched, and the error is returned. A
// new file gets mode 0644; an existing file keeps its mode. If path is a
// symbolic link, the link itself is replaced by the new regular file.
// Callers should check the path against their inputs first (CheckNotInput).
func WriteFileAtomic(path string, write func(w io.Writer) error) (err error) {
	return writeAtomic(path, write, false)
}

// WriteFileNew is WriteFileAtomic for a file that must not exist yet: the
// finished temporary file is hard-linked to path, which fails when path
// exists, even when it appeared after the caller's checks, and the
// temporary name is then removed. An existing file is never replaced; the
// error then wraps fs.ErrExist.
func WriteFileNew(path string, write func(w io.Writer) error) error {
	return writeAtomic(path, write, true)
}

func writeAtomic(path string, write func(w io.Writer) error, fresh bool) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	mode := os.FileMode(0o644)
	if fi, statErr := os.Stat(path); statErr == nil {
		if !fi.Mode().IsRegular() {
			return fmt.Errorf("output: %s exists and is not a regular file", path)
		}
		mode = fi.Mode().Perm()
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return fmt.Errorf("output: %w", err)
	}
	tmp := f.Name()
	pending.add(tmp)
	defer pending.remove(tmp)
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	bw := bufio.NewWriterSize(f, 1<<16)
	if err = write(bw); err != nil {
		return err
	}
	if err = bw.Flush(); err != nil {
		return fmt.Errorf("output: writing %s: %w", path, err)
	}
	if err = f.Chmod(mode); err != nil {
		return fmt.Errorf("output: %w", err)
	}
	if err = f.Sync(); err != nil {
		return fmt.Errorf("output: syncing %s: %w", path, err)
	}
	if err = f.Close(); err != nil {
		return fmt.Errorf("output: closing %s: %w", path, err)
	}
	if fresh {
		if err = linkNew(tmp, path); err != nil {
			return fmt.Errorf("output: %w", err)
		}
		os.Remove(tmp)
	} else if err = os.Rename(tmp, path); err != nil {
		return fmt.Errorf("output: %w", err)
	}
	if d, derr := os.Open(dir); derr == nil {
		d.Sync() // best effort: makes the rename durable on most file systems
		d.Close()
	}
	return nil
}

// linkNew puts the finished file tmp at path, which must not exist. It
// hard-links tmp to path, which fails when path exists; where the file
// system has no hard links it reserves path with an exclusive create and
// renames tmp over the reservation (removing it again on failure).
func linkNew(tmp, path string) error {
	err := os.Link(tmp, path)
	if err == nil || errors.Is(err, fs.ErrExist) {
		return err
	}
	f, xerr := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if xerr != nil {
		return xerr
	}
	f.Close()
	if rerr := os.Rename(tmp, path); rerr != nil {
		os.Remove(path)
		return rerr
	}
	return nil
}

// pending holds the temporary files being written, so that an interrupt
// can remove them (RemovePending).
var pending = tempFiles{set: map[string]bool{}}

type tempFiles struct {
	mu  sync.Mutex
	set map[string]bool
}

func (t *tempFiles) add(p string)    { t.mu.Lock(); t.set[p] = true; t.mu.Unlock() }
func (t *tempFiles) remove(p string) { t.mu.Lock(); delete(t.set, p); t.mu.Unlock() }

// RemovePending removes the temporary files of writes in progress. A
// command calls it when it is interrupted (SIGINT, SIGTERM), so an
// interrupted write leaves nothing behind; the target keeps its old
// contents. (A SIGKILL cannot be caught: it may leave one hidden
// ".NAME.tmp-*" file next to the target.)
func RemovePending() {
	pending.mu.Lock()
	defer pending.mu.Unlock()
	for p := range pending.set {
		os.Remove(p)
	}
}

// SameFile reports whether paths a and b name the same file: the same
// inode when both exist (so links and different spellings are caught),
// otherwise the same cleaned absolute path.
func SameFile(a, b string) bool {
	fa, ea := os.Stat(a)
	fb, eb := os.Stat(b)
	if ea == nil && eb == nil {
		return os.SameFile(fa, fb)
	}
	aa, err1 := filepath.Abs(a)
	ab, err2 := filepath.Abs(b)
	return err1 == nil && err2 == nil && aa == ab
}

// OverwriteInputError reports an output path that names an input file.
type OverwriteInputError struct {
	Path, Input string
}

func (e *OverwriteInputError) Error() string {
	if e.Path == e.Input {
		return fmt.Sprintf("output: refusing to overwrite input file %s", e.Path)
	}
	return fmt.Sprintf("output: refusing to overwrite input file %s (given as output %s)", e.Input, e.Path)
}

// CheckNotInput returns *OverwriteInputError if path is the same file as
// one of inputs (see SameFile), nil otherwise.
func CheckNotInput(path string, inputs ...string) error {
	for _, in := range inputs {
		if SameFile(path, in) {
			return &OverwriteInputError{Path: path, Input: in}
		}
	}
	return nil
}

// errWriter remembers the first write error so formatting code can write
// freely and check once.
type errWriter struct {
	w   io.Writer
	err error
}

func (e *errWriter) Write(p []byte) (int, error) {
	if e.err != nil {
		return 0, e.err
	}
	n, err := e.w.Write(p)
	e.err = err
	return n, err
}

func (e *errWriter) str(s string) {
	if e.err == nil {
		_, e.err = io.WriteString(e.w, s)
	}
}

var errNilGrid = errors.New("output: nil Grid")

// Staged writes a group of files that must appear together or not at
// all: Write puts each into a hidden temporary file beside its target,
// Commit renames them all into place, and Abort (or an interrupt, see
// RemovePending) removes them. A time series written step by step uses
// it, so a run that fails halfway leaves none of its frames behind.
type Staged struct {
	tmp, dst []string
}

// Write stages one file.
func (s *Staged) Write(path string, write func(w io.Writer) error) error {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return fmt.Errorf("output: %w", err)
	}
	pending.add(f.Name())
	s.tmp, s.dst = append(s.tmp, f.Name()), append(s.dst, path)
	bw := bufio.NewWriterSize(f, 1<<16)
	err = write(bw)
	if err == nil {
		err = bw.Flush()
	}
	if err == nil {
		err = f.Chmod(0o644)
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return fmt.Errorf("output: writing %s: %w", path, err)
	}
	return nil
}

// Commit renames every staged file to its target.
func (s *Staged) Commit() error {
	for i, t := range s.tmp {
		if err := os.Rename(t, s.dst[i]); err != nil {
			s.Abort()
			return fmt.Errorf("output: %w", err)
		}
		pending.remove(t)
	}
	s.tmp, s.dst = nil, nil
	return nil
}

// Abort removes every staged file that was not committed.
func (s *Staged) Abort() {
	for _, t := range s.tmp {
		os.Remove(t)
		pending.remove(t)
	}
	s.tmp, s.dst = nil, nil
}
