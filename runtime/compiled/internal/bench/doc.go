// Package bench holds checked-in generated kernels (compiler/gogen) for
// the back end's benchmarks: the SUPG form of the standard adr model on P1
// triangles (kernels_p1.go, from stdlib/models/adr.fw) and on Q2
// quadrilaterals (kernels_q2.go, from adr_q2.fw), with hand-written
// kernels of the same forms as the bar. TestRegenerate checks that the
// generator still produces these files byte for byte; run
//
//	go test ./runtime/compiled/internal/bench -run TestRegenerate -update
//
// to rewrite them after a change of the generator.
package bench
