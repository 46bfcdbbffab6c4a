package main

import (
	"path/filepath"

	"github.com/formwright/formwright/runtime/output"
)

// outputTarget is a file a command will write, named by the flag that
// asked for it.
type outputTarget struct{ flag, path string }

// checkOutputs checks, before any work is done, every file a command will
// write: none is one of the inputs (compared by file identity, so links
// and other spellings are caught), no two name the same file, each
// directory exists and is writable, and an existing file is one that
// formwright wrote (output.CheckTarget): a user's file is never
// overwritten. A failure is a usage error: nothing has been written.
func checkOutputs(inputs []string, targets ...outputTarget) error {
	var live []outputTarget
	for _, t := range targets {
		if t.path != "" {
			live = append(live, t)
		}
	}
	for i, t := range live {
		var in []string
		for _, p := range inputs {
			if p != "" {
				in = append(in, p)
			}
		}
		if err := output.CheckNotInput(t.path, in...); err != nil {
			return usagef("%s: %v", t.flag, err)
		}
		for _, u := range live[:i] {
			if sameTarget(t.path, u.path) {
				return usagef("%s and %s name the same file %s: choose two names", u.flag, t.flag, t.path)
			}
		}
		if err := output.CheckTarget(t.path); err != nil {
			return usagef("%s: %v", t.flag, err)
		}
	}
	return nil
}

// sameTarget reports whether two output paths name one file: the same
// file when both exist, otherwise the same canonical path (directories
// resolved through their symbolic links).
func sameTarget(a, b string) bool {
	if output.SameFile(a, b) {
		return true
	}
	return canonical(a) == canonical(b)
}

func canonical(p string) string {
	abs, err := filepath.Abs(p)
	if err != nil {
		return p
	}
	if r, err := filepath.EvalSymlinks(abs); err == nil {
		return r
	}
	dir, base := filepath.Split(abs)
	if r, err := filepath.EvalSymlinks(dir); err == nil {
		return filepath.Join(r, base)
	}
	return abs
}

// ioError is a file that could not be read or written: like bad input,
// exit status 2.
func ioError(err error) error {
	if err == nil {
		return nil
	}
	return usagef("%v", err)
}
