package main

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strings"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/output"
	"github.com/formwright/formwright/runtime/problem"
)

// maxRefine bounds --refine: each level multiplies the cells by 2^d.
const maxRefine = 8

// cmdMesh writes a mesh, built-in or read and optionally refined, as a VTK
// XML unstructured grid with its boundary parts (runtime/mesh.WriteVTU),
// so that it can be edited or inspected elsewhere and read back with
// --mesh FILE.vtu. With --model, the parts the model defines are computed
// on the mesh (runtime/problem.ResolveParts) and written as parts too. The
// file is written under a temporary name and linked into place, so an
// existing file is never replaced unless --replace says so.
func cmdMesh(args []string, stdout, stderr io.Writer) error {
	fl := newFlags("mesh", "SPEC|FILE.vtu -o FILE.vtu [flags]", "Build a mesh from a spec (span:X0,X1[,Y0,Y1[,Z0,Z1]]:COUNTS[:PATTERN]) or read a .vtu file,\nrefine it if asked, and write it as a VTK XML unstructured grid with its boundary parts.")
	out := fl.String("o", "", "the file to write, `FILE.vtu`")
	refine := fl.Int("refine", 0, "refine the mesh uniformly `N` times (each cell into 2^d children)")
	model := fl.String("model", "", "also write the boundary parts that `MODEL` defines (its part statements), computed on the mesh")
	ascii := fl.Bool("ascii", false, "write the arrays as text instead of binary appended data")
	replace := fl.Bool("replace", false, "replace FILE.vtu if it exists (by default an existing file is never overwritten)")
	pos, err := parseArgs(fl, args, stdout)
	if err != nil {
		return err
	}
	switch {
	case len(pos) != 1:
		return usagef("mesh takes one mesh spec or .vtu file")
	case *out == "":
		return usagef("mesh: name the file to write with -o FILE.vtu")
	case !strings.EqualFold(filepath.Ext(*out), ".vtu"):
		return usagef("-o: mesh files are VTK XML unstructured grids: name it FILE.vtu")
	case *refine < 0 || *refine > maxRefine:
		return usagef("--refine %d: give 0 to %d levels", *refine, maxRefine)
	}
	if err := output.CheckNotInput(*out, pos[0], *model); err != nil {
		return usagef("-o: %v", err)
	}
	if _, err := os.Lstat(*out); err == nil && !*replace {
		return usagef("-o: %s exists: refusing to overwrite it (remove it, choose another name, or pass --replace)", *out)
	}
	if err := output.CheckDir(*out); err != nil {
		return usagef("-o: %v", err)
	}
	var m *compiler.Model
	if *model != "" {
		if m, err = loadModel(*model); err != nil {
			return err
		}
	}
	msh, err := mesh.Load(pos[0])
	if err != nil {
		var se *mesh.SpecError
		if errors.As(err, &se) {
			return usagef("mesh: %s", se.Detail())
		}
		return usagef("mesh: %v", err)
	}
	if cells := float64(msh.NumCells()) * math.Pow(float64(int(1)<<msh.Dim), float64(*refine)); cells > float64(mesh.CellLimit()) {
		return usagef("--refine %d would reach %g cells, more than this machine can solve (%d)", *refine, cells, mesh.CellLimit())
	}
	for k := 0; k < *refine; k++ {
		msh = mesh.Refine(msh)
	}
	if m != nil {
		if m.Dim != msh.Dim {
			return usagef("--model: %s is %d-dimensional and the mesh %d-dimensional", m.Name, m.Dim, msh.Dim)
		}
		lf, err := lowerModel(m, compiler.Galerkin)
		if err != nil {
			return err
		}
		if msh, _, err = problem.ResolveParts(lf, msh); err != nil {
			return meshFitError(m, err)
		}
	}
	enc := mesh.Binary
	if *ascii {
		enc = mesh.ASCII
	}
	write := func(w io.Writer) error { return mesh.WriteVTU(w, msh, enc) }
	if *replace {
		err = output.WriteFileAtomic(*out, write)
	} else {
		err = output.WriteFileNew(*out, write)
	}
	if errors.Is(err, fs.ErrExist) {
		return usagef("-o: %s appeared while the mesh was written: refusing to overwrite it", *out)
	}
	if err != nil {
		return ioError(err)
	}
	fmt.Fprintf(stdout, "wrote %s: %v mesh, %d dimensions, %d cells, %d vertices\n", *out, msh.Cell, msh.Dim, msh.NumCells(), msh.NumVertices())
	for _, n := range msh.BoundaryNames() {
		fmt.Fprintf(stdout, "  part %-12s %d facets\n", n, len(msh.Boundaries[n]))
	}
	return nil
}
