// Package kernels holds the generated element kernels of the skew_front
// example (../model.fw): the Newton step of SUPG with discontinuity
// capturing, made by formwright gen and checked in. Regenerate with "go
// generate".
package kernels

//go:generate go run ../../.. gen ../model.fw -o . --package kernels --method supg
