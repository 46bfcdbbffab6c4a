package study

import (
	"fmt"
	"io"
)

// WriteTables writes one convergence table per method and field: h, dofs,
// the L² and H¹ errors and their observed orders.
func (r *Report) WriteTables(w io.Writer) {
	for _, t := range r.Methods {
		status := "ok"
		if !t.Pass {
			status = "FAILED"
		}
		h1 := fmt.Sprintf("H1 %.0f", t.ExpectedH1)
		if !t.CheckH1 {
			h1 = "H1 not checked"
		}
		fmt.Fprintf(w, "\n%s, %s %s (expected orders: L2 %.0f, %s) %s\n", t.Method, t.Field, t.Element, t.ExpectedL2, h1, status)
		fmt.Fprintf(w, "  %10s %8s %12s %6s %12s %6s\n", "h", "dofs", "L2 error", "order", "H1 error", "order")
		for i, lv := range t.Levels {
			o2, o1 := "", ""
			if i > 0 {
				o2, o1 = fmt.Sprintf("%.2f", lv.OrderL2), fmt.Sprintf("%.2f", lv.OrderH1)
			}
			fmt.Fprintf(w, "  %10.4g %8d %12.4e %6s %12.4e %6s\n", lv.H, lv.Dofs, lv.L2, o2, lv.H1, o1)
		}
	}
}

// WriteSweep writes the Péclet sweep, one table per method; coef is the
// name of the swept coefficient.
func WriteSweep(w io.Writer, sweep []SweepMethod, coef string) {
	for _, sm := range sweep {
		fmt.Fprintf(w, "%s\n  %10s %12s %12s %12s\n", sm.Method, "Pe_h", coef, "L2 error", "H1 error")
		for _, r := range sm.Rows {
			fmt.Fprintf(w, "  %10.3g %12.4e %12.4e %12.4e\n", r.Peclet, r.Value, r.L2, r.H1)
		}
	}
}
