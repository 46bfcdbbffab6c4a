package output

import (
	"encoding/csv"
	"fmt"
	"io"
	"strconv"
)

// WriteCSV writes the nodal values of g as CSV (RFC 4180, via
// encoding/csv): a comment line "# written by formwright" (Signature; CSV
// readers skip it with '#' as their comment character), a header row,
// then one row per point with the first dim
// coordinates (named x, y, z) followed by every point-data array (a
// one-component array as its name, a k-component array as name_0 …
// name_{k−1}). Numbers use strconv 'g' with precision -1: the shortest
// text that reads back to the same float64.
func WriteCSV(w io.Writer, g *Grid, dim int) error {
	if dim < 1 || dim > 3 {
		panic(fmt.Sprintf("output: WriteCSV: dim = %d, want 1, 2 or 3", dim))
	}
	if err := g.Validate(); err != nil {
		return err
	}
	if _, err := io.WriteString(w, "# "+Signature+"\n"); err != nil {
		return err
	}
	cw := csv.NewWriter(w)
	header := []string{"x", "y", "z"}[:dim]
	for _, a := range g.PointData {
		if a.Components == 1 {
			header = append(header, a.Name)
			continue
		}
		for c := 0; c < a.Components; c++ {
			header = append(header, a.Name+"_"+strconv.Itoa(c))
		}
	}
	if err := cw.Write(header); err != nil {
		return err
	}
	row := make([]string, len(header))
	for p := 0; p < g.NumPoints(); p++ {
		k := 0
		for d := 0; d < dim; d++ {
			row[k] = strconv.FormatFloat(g.Points[3*p+d], 'g', -1, 64)
			k++
		}
		for _, a := range g.PointData {
			for c := 0; c < a.Components; c++ {
				row[k] = strconv.FormatFloat(a.Values[p*a.Components+c], 'g', -1, 64)
				k++
			}
		}
		if err := cw.Write(row); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// WriteCSVFile writes the nodal CSV of g to path atomically.
func WriteCSVFile(path string, g *Grid, dim int) error {
	return WriteFileAtomic(path, func(w io.Writer) error { return WriteCSV(w, g, dim) })
}
