package mesh_test

import (
	"fmt"

	"github.com/formwright/formwright/runtime/mesh"
)

func ExampleLoad() {
	m, err := mesh.Load("rect:0,1,0,1:2x2:tri")
	if err != nil {
		panic(err)
	}
	fmt.Println(m.Cell, m.NumVertices(), "vertices", m.NumCells(), "cells")
	for _, name := range m.BoundaryNames() {
		fmt.Println(name, m.Boundaries[name])
	}
	// Output:
	// triangle 9 vertices 8 cells
	// all [{0 2} {1 1} {2 0} {2 2} {5 0} {5 1} {6 0} {7 0}]
	// bottom [{0 2} {2 2}]
	// left [{1 1} {5 1}]
	// right [{2 0} {6 0}]
	// top [{5 0} {7 0}]
}

func ExampleParseSpec() {
	_, err := mesh.ParseSpec("rect:0,1,0:4x4")
	fmt.Println(err.(*mesh.SpecError).Detail())
	// Output:
	// col 6: want 4 comma-separated bounds, got 3
	// 	rect:0,1,0:4x4
	// 	     ^
}
