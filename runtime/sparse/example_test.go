package sparse_test

import (
	"fmt"

	"github.com/formwright/formwright/runtime/sparse"
)

// Assemble the 1D P1 stiffness matrix of −u″ on three cells of length 1
// and fix both ends, keeping the system symmetric.
func Example() {
	cells := [][]int32{{0, 1}, {1, 2}, {2, 3}}
	A := sparse.PatternFromElements(4, len(cells), func(e int, buf []int32) []int32 {
		return append(buf, cells[e]...)
	})
	ke := []float64{1, -1, -1, 1} // element stiffness k/h [[1,-1],[-1,1]], k = h = 1
	var pos []int
	for _, c := range cells {
		pos = A.ScatterIndex(c, pos)
		A.AddScatter(pos, ke)
	}
	b := make([]float64, 4)
	A.EliminateRows([]bool{true, false, false, true}, []float64{0, 0, 0, 3}, b, true)
	fmt.Println(A.ToDense().RawMatrix().Data)
	fmt.Println(b, A.IsSymmetric(0))
	// Output:
	// [1 0 0 0 0 2 -1 0 0 -1 2 0 0 0 0 1]
	// [0 0 3 3] true
}
