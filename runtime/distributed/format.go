package distributed

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/formwright/formwright/runtime/problem"
)

// The files formwright and the driver exchange in a run directory. All
// numbers are little-endian; the driver (driver/driver.c, read_part)
// reads exactly this layout and checks every index it reads.
//
// part.<rank>, written by formwright, one per rank:
//
//	"FWPART01"
//	int64  dim, vertices per cell, local dofs N, sides S, global dofs,
//	       ranks, method, preconditioner, iteration limit, restart,
//	       direct limit, Picard limit, mean conditions M
//	double relative tolerance, time, time step, symmetry tolerance,
//	       Picard tolerance, Picard relaxation
//	int64  Newton (1 for a Newton step form), its iteration limit, 1
//	       for no line search
//	double Newton's relative and absolute tolerances, step tolerance,
//	       damping and shortest step
//	int64  fields K; K × int64 1 for a constraint field, else 0
//	S ×    int64 length, bytes: the name of each side with a boundary
//	       integral, in the kernels' side order
//	int64  lo, hi (the rank owns the dofs lo … hi−1 of the new
//	       numbering), vertices V, cells C, facets F, fixed dofs X
//	K ×    int64 the rank's dofs of each field (consecutive from lo,
//	       field by field)
//	double coordinates [V·dim]   the rank's vertices
//	int32  cells [C·vertices]    local vertex numbers
//	int32  dofs [C·N]            each cell's dofs (new numbering), in
//	                             the kernels' local order
//	int32  facets [F·3]          local cell, local facet, side index
//	int32  d_nnz [hi−lo], o_nnz [hi−lo]
//	int32  fixed [X]; double values [X]   owned prescribed dofs
//	double initial [hi−lo]       first previous iterate (Picard)
//	M ×    int64 pin; double mean; int64 K; int32 dofs [K];
//	       double weights [K]    owned dofs of the field
//	"FWPART01"
//
// x.<rank>, written by the driver: "FWXOUT01", int64 lo, hi, double
// x [hi−lo] (new numbering).
//
// result, written by rank 0: one "key value" per line (see Result).
const (
	partMagic = "FWPART01"
	xMagic    = "FWXOUT01"
)

// Method and preconditioner codes of the part header (driver.c's
// METHOD_* and PRECOND_*).
const (
	codeAuto = iota
	codeDirect
	codeCG
	codeGMRES
	codeBiCGStab
)

const (
	codePrecondDefault = iota
	codePrecondNone
	codePrecondJacobi
	codePrecondILU0
	codePrecondGAMG
	codePrecondHypre
	codePrecondBlock
)

// header is the common head of every part file.
type header struct {
	dim, verts, dofs, global, ranks            int64
	method, precond, maxIter, restart, direct  int64
	maxPicard                                  int64
	rtol, time, step, symTol, picardTol, relax float64
	newton, newtonMaxIter, newtonNoSearch      int64
	newtonOpts                                 [5]float64 // RelTol, AbsTol, StepTol, Damping, MinStep
	sides                                      []string
	constraint                                 []bool // per field
}

// part is what one rank reads.
type part struct {
	lo, hi  int64
	owned   []int64 // per field
	coords  []float64
	cells   []int32
	dofs    []int32
	facets  []int32
	dnnz    []int32
	onnz    []int32
	fixed   []int32
	values  []float64
	initial []float64
	means   []partMean
}

type partMean struct {
	pin    int64
	target float64
	dofs   []int32
	w      []float64
}

// binWriter writes little-endian numbers and keeps the first error.
type binWriter struct {
	w   *bufio.Writer
	buf [8]byte
	err error
}

func (b *binWriter) bytes(p []byte) {
	if b.err == nil {
		_, b.err = b.w.Write(p)
	}
}

func (b *binWriter) i64(v int64) {
	binary.LittleEndian.PutUint64(b.buf[:], uint64(v))
	b.bytes(b.buf[:8])
}

func (b *binWriter) f64(v float64) {
	binary.LittleEndian.PutUint64(b.buf[:], math.Float64bits(v))
	b.bytes(b.buf[:8])
}

func (b *binWriter) i32s(v []int32) {
	for _, x := range v {
		binary.LittleEndian.PutUint32(b.buf[:], uint32(x))
		b.bytes(b.buf[:4])
	}
}

func (b *binWriter) f64s(v []float64) {
	for _, x := range v {
		b.f64(x)
	}
}

// writePart writes one rank's file.
func writePart(path string, h *header, p *part) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	b := &binWriter{w: bufio.NewWriterSize(f, 1<<20)}
	b.bytes([]byte(partMagic))
	for _, v := range []int64{h.dim, h.verts, h.dofs, int64(len(h.sides)), h.global, h.ranks, h.method, h.precond,
		h.maxIter, h.restart, h.direct, h.maxPicard, int64(len(p.means))} {
		b.i64(v)
	}
	for _, v := range []float64{h.rtol, h.time, h.step, h.symTol, h.picardTol, h.relax} {
		b.f64(v)
	}
	b.i64(h.newton)
	b.i64(h.newtonMaxIter)
	b.i64(h.newtonNoSearch)
	b.f64s(h.newtonOpts[:])
	b.i64(int64(len(h.constraint)))
	for _, c := range h.constraint {
		if c {
			b.i64(1)
		} else {
			b.i64(0)
		}
	}
	for _, s := range h.sides {
		b.i64(int64(len(s)))
		b.bytes([]byte(s))
	}
	nv := int64(len(p.coords)) / h.dim
	for _, v := range []int64{p.lo, p.hi, nv, int64(len(p.cells)) / h.verts, int64(len(p.facets)) / 3, int64(len(p.fixed))} {
		b.i64(v)
	}
	for _, v := range p.owned {
		b.i64(v)
	}
	b.f64s(p.coords)
	b.i32s(p.cells)
	b.i32s(p.dofs)
	b.i32s(p.facets)
	b.i32s(p.dnnz)
	b.i32s(p.onnz)
	b.i32s(p.fixed)
	b.f64s(p.values)
	b.f64s(p.initial)
	for _, m := range p.means {
		b.i64(m.pin)
		b.f64(m.target)
		b.i64(int64(len(m.dofs)))
		b.i32s(m.dofs)
		b.f64s(m.w)
	}
	b.bytes([]byte(partMagic))
	if b.err == nil {
		b.err = b.w.Flush()
	}
	if cerr := f.Close(); b.err == nil {
		b.err = cerr
	}
	return b.err
}

// readX reads a rank's solution file into x (new numbering).
func readX(path string, x []float64) error {
	data, err := os.ReadFile(path)
	if err != nil {
		return err
	}
	if len(data) < 24 || string(data[:8]) != xMagic {
		return fmt.Errorf("%s: not a solution file of the driver", filepath.Base(path))
	}
	lo := int64(binary.LittleEndian.Uint64(data[8:]))
	hi := int64(binary.LittleEndian.Uint64(data[16:]))
	if lo < 0 || hi < lo || hi > int64(len(x)) || int64(len(data)) != 24+8*(hi-lo) {
		return fmt.Errorf("%s: range [%d, %d) and %d bytes do not fit %d dofs", filepath.Base(path), lo, hi, len(data), len(x))
	}
	for i := lo; i < hi; i++ {
		x[i] = math.Float64frombits(binary.LittleEndian.Uint64(data[24+8*(i-lo):]))
	}
	return nil
}

// Result is what the driver reports on rank 0 (the result file).
type Result struct {
	PETSc      string // PETSc version
	KSP, PC    string // PETSc's type names
	Factor     string // the factorisation package of a direct solve (mumps), or boomeramg
	Direct     bool
	Symmetric  bool // the assembled matrix was symmetric (before the conditions)
	Converged  bool
	Reason     string // PETSc's converged reason
	Iterations int    // of the last linear solve
	// TotalIterations sums the iterations of every Picard step.
	TotalIterations int
	// Residual is the explicit ‖b − A x‖/‖b‖ of the constrained system
	// of the last linear solve, recomputed after it.
	Residual     float64
	Picard       int
	PicardFailed bool
	PicardChange float64
	MeanResidual float64
	// Nonzeros of the assembled matrix; Mallocs (allocations during
	// assembly) and Unneeded (preallocated entries left unused) are 0
	// when the preallocation was exact.
	Nonzeros, Mallocs, Unneeded int64
	// Times are the driver's phases (read, setup, assembly, constrain,
	// pc_setup, solve), each the longest over the ranks, in seconds.
	Times map[string]float64
	// MaxRSS is getrusage's peak resident set of each rank, in bytes,
	// and BaseRSS the same when MPI and PETSc had started, before the
	// rank read its part: MaxRSS − BaseRSS is what the solve took.
	MaxRSS, BaseRSS []int64
	// Choice says why the automatic choice picked the solver ("as
	// asked" otherwise).
	Choice string
	// Newton's method: whether it failed and why, and its history (with
	// the relative residual of each linear solve).
	NewtonFailed    bool
	NewtonReason    string
	Newton          []problem.NewtonStep
	NewtonLinearRes []float64
}

// readResult parses the result file.
func readResult(path string) (*Result, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return parseResult(f)
}

func parseResult(rd io.Reader) (*Result, error) {
	r := &Result{Times: map[string]float64{}}
	sc := bufio.NewScanner(rd)
	seen := map[string]bool{}
	for sc.Scan() {
		key, val, _ := strings.Cut(sc.Text(), " ")
		seen[key] = true
		var err error
		atoi := func() int {
			var n int
			n, err = strconv.Atoi(val)
			return n
		}
		atof := func() float64 {
			var v float64
			v, err = strconv.ParseFloat(val, 64)
			return v
		}
		switch {
		case key == "petsc":
			r.PETSc = val
		case key == "ksp":
			r.KSP = val
		case key == "pc":
			r.PC = val
		case key == "factor":
			r.Factor = val
		case key == "direct":
			r.Direct = atoi() == 1
		case key == "symmetric":
			r.Symmetric = atoi() == 1
		case key == "converged":
			r.Converged = atoi() == 1
		case key == "reason":
			r.Reason = val
		case key == "iterations":
			r.Iterations = atoi()
		case key == "total_iterations":
			r.TotalIterations = atoi()
		case key == "residual":
			r.Residual = atof()
		case key == "picard":
			r.Picard = atoi()
		case key == "picard_failed":
			r.PicardFailed = atoi() == 1
		case key == "picard_change":
			r.PicardChange = atof()
		case key == "mean_residual":
			r.MeanResidual = atof()
		case key == "nonzeros":
			r.Nonzeros = int64(atof())
		case key == "mallocs":
			r.Mallocs = int64(atof())
		case key == "unneeded":
			r.Unneeded = int64(atof())
		case strings.HasPrefix(key, "time_"):
			r.Times[strings.TrimPrefix(key, "time_")] = atof()
		case key == "maxrss_kb", key == "baseline_kb":
			dst := &r.MaxRSS
			if key == "baseline_kb" {
				dst = &r.BaseRSS
			}
			for _, s := range strings.Fields(val) {
				kb, e := strconv.ParseInt(s, 10, 64)
				if e != nil {
					err = e
				}
				*dst = append(*dst, kb*1024)
			}
		case key == "choice":
			r.Choice = val
		case key == "newton_failed":
			r.NewtonFailed = atoi() == 1
		case key == "newton_reason":
			r.NewtonReason = val
		case key == "newton_step":
			var st problem.NewtonStep
			var lin float64
			if _, e := fmt.Sscan(val, &st.Iter, &st.Residual, &st.Relative, &st.Step, &st.Update, &st.Backtracks, &st.LinearIters, &lin); e != nil {
				err = e
			}
			r.Newton = append(r.Newton, st)
			r.NewtonLinearRes = append(r.NewtonLinearRes, lin)
		}
		if err != nil {
			return nil, fmt.Errorf("result: %s: %v", key, err)
		}
	}
	if err := sc.Err(); err != nil {
		return nil, err
	}
	for _, k := range []string{"ksp", "pc", "converged", "reason", "iterations", "residual"} {
		if !seen[k] {
			return nil, fmt.Errorf("result: no %s", k)
		}
	}
	return r, nil
}
