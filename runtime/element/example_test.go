package element_test

import (
	"fmt"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/quadrature"
)

// Physical gradients and the area of the triangle (0,0), (2,0), (0,1).
func ExampleTable_Map() {
	e := element.MustLagrange(cell.Triangle, 1)
	tab := e.Sample(quadrature.For(cell.Triangle, 1))
	pg := tab.NewPointGeometry()
	coords := []float64{0, 0, 2, 0, 0, 1}
	if err := tab.Map(coords, 0, pg); err != nil {
		panic(err)
	}
	fmt.Println("area", pg.Weight, "det J", pg.DetJ)
	for i := 0; i < e.NumNodes(); i++ {
		fmt.Println("grad φ", i, pg.Grad[2*i:2*i+2])
	}
	// Output:
	// area 1 det J 2
	// grad φ 0 [-0.5 -1]
	// grad φ 1 [0.5 0]
	// grad φ 2 [0 1]
}

// Element lengths of a 2×1 rectangle along its long side and diagonal.
func ExampleSize() {
	v := []float64{0, 0, 2, 0, 2, 1, 0, 1}
	for _, k := range []element.SizeKind{element.SizeLongestEdge, element.SizeStreamline, element.SizeMetric} {
		fmt.Printf("%s: %.4f\n", k, element.Size(k, cell.Quadrilateral, v, []float64{1, 0}))
	}
	// Output:
	// longest-edge: 2.0000
	// streamline: 2.0000
	// metric: 2.0000
}
