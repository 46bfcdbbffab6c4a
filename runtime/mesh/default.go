package mesh

// DefaultSpec is the built-in mesh a model runs on when none is given: the
// unit interval, square or cube, with 64 intervals, 64×64 triangles (48×48
// quadrilaterals), or a 10×10×10 box of tetrahedra (hexahedra), the cells
// of the family the model's elements need (tensorProduct for Q elements).
func DefaultSpec(dim int, tensorProduct bool) string {
	switch {
	case dim == 1:
		return "span:0,1:64"
	case dim == 2 && tensorProduct:
		return "span:0,1,0,1:48x48:quad"
	case dim == 2:
		return "span:0,1,0,1:64x64:tri"
	case tensorProduct:
		return "span:0,1,0,1,0,1:10x10x10:hex"
	}
	return "span:0,1,0,1,0,1:10x10x10:tet"
}
