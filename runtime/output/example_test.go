package output_test

import (
	"os"

	"github.com/formwright/formwright/runtime/output"
)

func ExampleWriteCSV() {
	g := &output.Grid{
		Points:       []float64{0, 0, 0, 0.5, 0, 0, 1, 0, 0},
		Connectivity: []int64{0, 1, 1, 2},
		Offsets:      []int64{2, 4},
		Types:        []uint8{output.CellLine, output.CellLine},
		PointData:    []output.Array{{Name: "u", Components: 1, Values: []float64{0, 1.0 / 3, 1}}},
	}
	output.WriteCSV(os.Stdout, g, 1)
	// Output:
	// # written by formwright
	// x,u
	// 0,0
	// 0.5,0.3333333333333333
	// 1,1
}
