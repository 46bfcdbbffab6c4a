package mesh_test

import (
	"fmt"
	"os"

	"github.com/formwright/formwright/runtime/mesh"
)

func ExampleLoad() {
	m, err := mesh.Load("span:0,1,0,1:2x2:tri")
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
	_, err := mesh.ParseSpec("span:0,1,0:4x4")
	fmt.Println(err.(*mesh.SpecError).Detail())
	// Output:
	// col 6: want 2, 4 or 6 comma-separated bounds (x0,x1[,y0,y1[,z0,z1]]), got 3
	// 	span:0,1,0:4x4
	// 	     ^
}

// The interval [0,1] in two cells, its end points written as facet cells
// (VTK_VERTEX, type 1) of the parts left (1) and right (2).
func ExampleWriteVTU() {
	m := mesh.Span1(0, 1, 2, 1)
	if err := mesh.WriteVTU(os.Stdout, m, mesh.ASCII); err != nil {
		panic(err)
	}
	// Output:
	// <?xml version="1.0"?>
	// <VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" header_type="UInt64">
	//   <UnstructuredGrid>
	//     <FieldData>
	//       <DataArray type="Int32" Name="formwright_part_ids" NumberOfTuples="2" format="ascii">
	//         1 2
	//       </DataArray>
	//       <Array type="String" Name="formwright_part_names" NumberOfTuples="2" format="ascii">
	//         108 101 102 116 0 114 105 103 104 116
	//         0
	//       </Array>
	//     </FieldData>
	//     <Piece NumberOfPoints="3" NumberOfCells="4">
	//       <CellData>
	//         <DataArray type="Int32" Name="formwright_part" format="ascii">
	//           0 0 1 2
	//         </DataArray>
	//       </CellData>
	//       <Points>
	//         <DataArray type="Float64" NumberOfComponents="3" format="ascii">
	//           0 0 0
	//           0.5 0 0
	//           1 0 0
	//         </DataArray>
	//       </Points>
	//       <Cells>
	//         <DataArray type="Int64" Name="connectivity" format="ascii">
	//           0 1
	//           1 2
	//           0
	//           2
	//         </DataArray>
	//         <DataArray type="Int64" Name="offsets" format="ascii">
	//           2 4 5 6
	//         </DataArray>
	//         <DataArray type="UInt8" Name="types" format="ascii">
	//           3 3 1 1
	//         </DataArray>
	//       </Cells>
	//     </Piece>
	//   </UnstructuredGrid>
	// </VTKFile>
}

// Two uniform refinements of the unit square in two triangles.
func ExampleRefine() {
	m := mesh.Span2(0, 1, 0, 1, 1, 1, mesh.DiagonalUp)
	for range 2 {
		m = mesh.Refine(m)
	}
	fmt.Println(m.NumCells(), "cells", m.NumVertices(), "vertices", len(m.Boundaries[mesh.Bottom]), "facets at the bottom")
	fmt.Printf("area %.15g\n", m.Measure())
	// Output:
	// 32 cells 25 vertices 4 facets at the bottom
	// area 1
}
