package distributed

import (
	"bytes"
	"crypto/sha256"
	_ "embed"
	"encoding/hex"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"time"
)

// driverSource is the C driver (driver/driver.c), compiled with the
// kernels of each form.
//
//go:embed driver/driver.c
var driverSource []byte

// Kernels are the generated C kernels of one form: the header and source
// that compiler/gogen.GenerateC writes for it (COptions.Name is Name, so
// the source includes Name.h). The header must declare exactly one form's
// kernels.
type Kernels struct {
	Name           string
	Header, Source []byte
}

var (
	cellDecl = regexp.MustCompile(`(?m)^int ([A-Za-z][A-Za-z0-9_]*)_cell\(const struct fw_kernel_input \*in, double \*A, double \*b\);$`)
	nameRE   = regexp.MustCompile(`^[A-Za-z0-9_][A-Za-z0-9_.-]*$`)
)

// names returns names.h: the kernel header's include and the macros
// FW_CELL, FW_FACET and FW_LAYOUT that the driver calls.
func (k Kernels) names() ([]byte, error) {
	if !nameRE.MatchString(k.Name) {
		return nil, fmt.Errorf("distributed: kernel file name %q: use letters, digits, '_', '-' and '.'", k.Name)
	}
	m := cellDecl.FindAllSubmatch(k.Header, -1)
	if len(m) != 1 {
		return nil, fmt.Errorf("distributed: the kernel header declares %d cell kernels; generate the kernels of one form", len(m))
	}
	base := string(m[0][1])
	for _, decl := range []string{
		"int " + base + "_facet(const struct fw_kernel_input *in, int side, int facet, double *A, double *b);",
		"const struct fw_kernel_layout *" + base + "_layout(void);",
	} {
		if !bytes.Contains(k.Header, []byte(decl)) {
			return nil, fmt.Errorf("distributed: the kernel header lacks %s", decl)
		}
	}
	if !bytes.Contains(k.Source, []byte(`#include "`+k.Name+`.h"`)) {
		return nil, fmt.Errorf("distributed: the kernel source does not include %s.h", k.Name)
	}
	return []byte(fmt.Sprintf("/* The kernels of the form the driver assembles. */\n#include \"%s.h\"\n#define FW_CELL %s_cell\n#define FW_FACET %s_facet\n#define FW_LAYOUT %s_layout\n",
		k.Name, base, base, base)), nil
}

// toolchain is the MPI compiler and launcher and PETSc's flags.
type toolchain struct {
	mpicc, mpiexec string
	cflags, libs   []string
	petsc          string // PETSc's version by pkg-config
	mpi            string // e.g. "Open MPI 4.1.4"
	openMPI        bool
}

var (
	toolMu    sync.Mutex
	toolFound *toolchain
)

// Available reports whether the engine can run here: nil, or a
// *SetupError naming what is missing and how to install it.
func Available() error {
	_, err := findToolchain()
	return err
}

// findToolchain looks for mpicc, mpiexec and PETSc (through pkg-config:
// Debian's petsc-dev installs PETSc.pc); it remembers a success.
func findToolchain() (*toolchain, error) {
	toolMu.Lock()
	defer toolMu.Unlock()
	if toolFound != nil {
		return toolFound, nil
	}
	tc := &toolchain{}
	if _, err := exec.LookPath("pkg-config"); err != nil {
		return nil, &SetupError{Missing: "pkg-config (not on PATH), which finds PETSc"}
	}
	pkg := ""
	for _, name := range []string{"PETSc", "petsc"} {
		if exec.Command("pkg-config", "--exists", name).Run() == nil {
			pkg = name
			break
		}
	}
	if pkg == "" {
		return nil, &SetupError{Missing: "PETSc (pkg-config knows no PETSc.pc)"}
	}
	out := func(args ...string) (string, error) {
		b, err := exec.Command("pkg-config", args...).Output()
		return strings.TrimSpace(string(b)), err
	}
	cflags, err1 := out("--cflags", pkg)
	libs, err2 := out("--libs", pkg)
	tc.petsc, _ = out("--modversion", pkg)
	if err1 != nil || err2 != nil {
		return nil, &SetupError{Missing: "PETSc's compiler flags (pkg-config --cflags --libs " + pkg + " failed)"}
	}
	tc.cflags, tc.libs = strings.Fields(cflags), strings.Fields(libs)
	cc, err := exec.LookPath("mpicc")
	if err != nil {
		// PETSc records the compiler it was built with.
		if name, _ := out("--variable=ccompiler", pkg); name != "" {
			cc, err = exec.LookPath(name)
		}
	}
	if err != nil {
		return nil, &SetupError{Missing: "mpicc (not on PATH)"}
	}
	tc.mpicc = cc
	for _, name := range []string{"mpiexec", "mpirun"} {
		if p, err := exec.LookPath(name); err == nil {
			tc.mpiexec = p
			break
		}
	}
	if tc.mpiexec == "" {
		return nil, &SetupError{Missing: "mpiexec (not on PATH)"}
	}
	ver, _ := exec.Command(tc.mpiexec, "--version").CombinedOutput()
	first, _, _ := strings.Cut(string(ver), "\n")
	switch {
	case strings.Contains(string(ver), "OpenRTE") || strings.Contains(string(ver), "Open MPI"):
		tc.openMPI = true
		f := strings.Fields(first)
		tc.mpi = "Open MPI"
		if len(f) > 0 {
			tc.mpi += " " + f[len(f)-1]
		}
	case strings.Contains(string(ver), "HYDRA") || strings.Contains(string(ver), "MPICH"):
		tc.mpi = "MPICH"
	default:
		tc.mpi = "MPI"
	}
	toolFound = tc
	return tc, nil
}

// compileFlags are the flags the driver and kernels are built with,
// besides PETSc's.
var compileFlags = []string{"-O2", "-std=gnu99"}

// cacheVersion changes when the build procedure does.
const cacheVersion = "formwright-petsc-driver-1"

// cacheKeep is how long an unused driver stays in the cache.
const cacheKeep = 30 * 24 * time.Hour

// build returns the driver compiled with the kernels: from the cache
// (cacheDir/<key>/driver, key a hash of the driver source, the kernel
// sources, the compiler and every flag) or freshly built into it. When
// cacheDir is empty or cannot be written, it builds into scratch (a
// directory removed by the caller).
func (tc *toolchain) build(k Kernels, cacheDir, scratch string) (path string, cached bool, err error) {
	names, err := k.names()
	if err != nil {
		return "", false, err
	}
	h := sha256.New()
	for _, part := range [][]byte{[]byte(cacheVersion), driverSource, []byte(k.Name), k.Header, k.Source, names,
		[]byte(tc.mpicc), []byte(strings.Join(compileFlags, " ")), []byte(strings.Join(tc.cflags, " ")), []byte(strings.Join(tc.libs, " "))} {
		fmt.Fprintf(h, "%d:", len(part))
		h.Write(part)
	}
	key := hex.EncodeToString(h.Sum(nil))[:32]
	if cacheDir != "" {
		exe := filepath.Join(cacheDir, key, "driver")
		if st, err := os.Stat(exe); err == nil && st.Mode().IsRegular() {
			now := time.Now()
			os.Chtimes(filepath.Join(cacheDir, key), now, now)
			return exe, true, nil
		}
		if err := os.MkdirAll(cacheDir, 0o755); err != nil {
			cacheDir = ""
		}
	}
	dir := scratch
	if cacheDir != "" {
		if dir, err = os.MkdirTemp(cacheDir, "build-"); err != nil {
			dir, cacheDir = scratch, ""
		} else {
			// An interrupted build leaves nothing in the cache.
			pending.addDir(dir)
			defer pending.removeDir(dir)
		}
	}
	files := map[string][]byte{"driver.c": driverSource, k.Name + ".h": k.Header, k.Name + ".c": k.Source, "names.h": names}
	for name, data := range files {
		if err := os.WriteFile(filepath.Join(dir, name), data, 0o644); err != nil {
			return "", false, err
		}
	}
	args := append([]string{}, compileFlags...)
	args = append(args, "-o", "driver", "driver.c", k.Name+".c")
	args = append(args, tc.cflags...)
	args = append(args, tc.libs...)
	args = append(args, "-lm")
	cmd := exec.Command(tc.mpicc, args...)
	cmd.Dir = dir
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	if err := cmd.Run(); err != nil {
		if dir != scratch {
			os.RemoveAll(dir)
		}
		t := &tail{max: 8192}
		t.Write(out.Bytes())
		return "", false, &BuildError{Command: tc.mpicc + " " + strings.Join(args, " "), Stderr: t.String(), Err: err}
	}
	if cacheDir == "" {
		return filepath.Join(dir, "driver"), false, nil
	}
	final := filepath.Join(cacheDir, key)
	if err := os.Rename(dir, final); err != nil {
		// Built at the same time by another run: use that one.
		os.RemoveAll(dir)
		if _, serr := os.Stat(filepath.Join(final, "driver")); serr != nil {
			return "", false, errors.Join(err, serr)
		}
	}
	prune(cacheDir, key)
	return filepath.Join(final, "driver"), false, nil
}

// prune removes cached drivers unused for cacheKeep, and builds left
// behind by an interrupted run.
func prune(cacheDir, keep string) {
	entries, err := os.ReadDir(cacheDir)
	if err != nil {
		return
	}
	for _, e := range entries {
		if !e.IsDir() || e.Name() == keep {
			continue
		}
		if info, err := e.Info(); err == nil && time.Since(info.ModTime()) > cacheKeep {
			os.RemoveAll(filepath.Join(cacheDir, e.Name()))
		}
	}
}

// DefaultCacheDir is where built drivers are kept:
// os.UserCacheDir()/formwright/petsc-driver ("" when there is none).
func DefaultCacheDir() string {
	d, err := os.UserCacheDir()
	if err != nil {
		return ""
	}
	return filepath.Join(d, "formwright", "petsc-driver")
}
