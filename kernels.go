package main

// The generated kernels of the standard models, the examples and the
// user's own models (gen --builtin), compiled into the command; each registers itself with runtime/compiled under the
// content hash of its form.
import (
	_ "github.com/formwright/formwright/examples/crosswind_plume/kernels"
	_ "github.com/formwright/formwright/examples/estuary_mixing/kernels"
	_ "github.com/formwright/formwright/examples/hairpin_dye/kernels"
	_ "github.com/formwright/formwright/examples/river_outfall_layer/kernels"
	_ "github.com/formwright/formwright/examples/seep_cell_stokes/kernels"
	_ "github.com/formwright/formwright/examples/skew_front/kernels"
	_ "github.com/formwright/formwright/stdlib/kernels"
	_ "github.com/formwright/formwright/stdlib/kernels/local"
)
