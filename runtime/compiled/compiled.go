package compiled

import (
	"sort"
	"sync"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/kernel"
)

// Kernels are the constructors of the generated kernels of one lowered
// form.
type Kernels struct {
	// Method is the method the form was derived for (galerkin, supg, ...).
	Method string
	// Cell is the cell type the kernels were specialised for, and Degree
	// the quadrature degree they integrate with.
	Cell   cell.Type
	Degree int
	// NewCell returns the kernel of the cell integrals.
	NewCell func() kernel.Kernel
	// NewFacets returns one kernel per boundary side that carries an
	// integral, in the order the sides first appear in the form; nil or an
	// empty result when there are none.
	NewFacets func() []kernel.FacetKernel
}

var (
	mu       sync.RWMutex
	registry = map[string]Kernels{}
)

// Register records the kernels of the form with content hash hash. The
// first registration of a hash wins: two generated packages may hold
// kernels for the same form (the same model generated twice), and since the
// hash covers the whole form either implements it. Register panics if
// NewCell is nil.
func Register(hash string, k Kernels) {
	if k.NewCell == nil {
		panic("compiled: Register with a nil cell-kernel constructor")
	}
	mu.Lock()
	defer mu.Unlock()
	if _, ok := registry[hash]; !ok {
		registry[hash] = k
	}
}

// Lookup returns the kernels registered under hash.
func Lookup(hash string) (Kernels, bool) {
	mu.RLock()
	defer mu.RUnlock()
	k, ok := registry[hash]
	return k, ok
}

// Hashes lists the registered hashes in increasing order.
func Hashes() []string {
	mu.RLock()
	defer mu.RUnlock()
	out := make([]string, 0, len(registry))
	for h := range registry {
		out = append(out, h)
	}
	sort.Strings(out)
	return out
}
