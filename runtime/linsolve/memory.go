package linsolve

// MemoryUse is the memory of a prepared solver, in bytes.
type MemoryUse struct {
	Unknowns int
	// Matrix is the CSR matrix (8 bytes per row pointer, 12 per entry).
	Matrix int64
	// Preconditioner is what Prepare built: LU factors, ILU(0) factors,
	// the AMG hierarchy or the block preconditioner.
	Preconditioner int64
	// Work is the Krylov method's vectors, allocated for each Solve:
	// CG 4n, BiCGStab 8n, GMRES (m+3)n values; direct 2n.
	Work int64
}

// PerUnknown is the total (matrix, preconditioner and work vectors) in
// bytes per unknown.
func (m MemoryUse) PerUnknown() float64 {
	if m.Unknowns == 0 {
		return 0
	}
	return float64(m.Matrix+m.Preconditioner+m.Work) / float64(m.Unknowns)
}

// bytesizer is the optional capability of a Preconditioner to report its
// memory.
type bytesizer interface{ Bytes() int64 }

// Memory reports the memory of the prepared solver.
func (p *Prepared) Memory() MemoryUse {
	n := p.A.N
	m := MemoryUse{Unknowns: n, Matrix: csrBytes(p.A)}
	switch {
	case p.lu != nil:
		m.Preconditioner = p.lu.bytes()
	case p.M != nil:
		if b, ok := p.M.(bytesizer); ok {
			m.Preconditioner = b.Bytes()
		}
	}
	vecs := 2
	switch p.opts.Method {
	case MethodCG:
		vecs = 4
	case MethodBiCGStab:
		vecs = 8
	case MethodGMRES:
		vecs = min(p.opts.restart(), n) + 3
	}
	m.Work = int64(8 * vecs * n)
	return m
}
