// Package kernels holds the generated element kernels of the crosswind_plume
// example (../model.fw), made by formwright gen and checked in; a project
// uses formwright the same way. Regenerate with "go generate".
package kernels

//go:generate go run ../../.. gen ../model.fw -o . --package kernels --method all
//go:generate go run ../../.. gen ../capture.fw -o . --package kernels --method supg
