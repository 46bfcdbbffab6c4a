package mesh

import (
	"bufio"
	"os"
	"strconv"
	"strings"
	"sync"
)

// BytesPerCell is the memory a P1 cell costs through a solve with the
// default solver, rounded up: the mesh, the dof numbering, the CSR matrix
// with its pattern, a copy for the value conditions, the preconditioner or
// LU factors, and Krylov vectors. Measured on the 2D advection–diffusion
// model (about 0.7 KiB per cell at 256² with the direct solver); common
// practice to leave a margin, no source.
const BytesPerCell = 1 << 11

// CellLimit is the largest number of cells a built-in mesh may have on
// this machine: its physical memory (MemTotal of /proc/meminfo on Linux;
// 16 GiB assumed where it cannot be read) divided by BytesPerCell, so a
// mesh spec that cannot be solved is refused before anything is
// allocated. Higher-degree elements need more per cell; the limit is for
// the cheapest case.
func CellLimit() int { limitOnce.Do(readLimit); return cellLimit }

var (
	limitOnce sync.Once
	cellLimit int
)

func readLimit() {
	mem := int64(16 << 30)
	if f, err := os.Open("/proc/meminfo"); err == nil {
		defer f.Close()
		sc := bufio.NewScanner(f)
		for sc.Scan() {
			if rest, ok := strings.CutPrefix(sc.Text(), "MemTotal:"); ok {
				fields := strings.Fields(rest)
				if len(fields) == 2 && fields[1] == "kB" {
					if kb, err := strconv.ParseInt(fields[0], 10, 64); err == nil && kb > 0 {
						mem = kb << 10
					}
				}
			}
		}
	}
	cellLimit = int(mem / BytesPerCell)
}
