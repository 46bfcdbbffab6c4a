// Package plot draws the pictures that the solve and verify commands
// write next to their numbers: PNG files made with gonum.org/v1/plot.
//
// It sits at the very end of the flow lang -> compiler -> runtime: the
// compiler has derived and lowered the weak forms, the runtime has
// assembled and solved them, and this package turns the nodal values and
// the measured errors into three kinds of figure:
//
//   - Line: a 1D solution plot, the nodal values of one or more methods
//     (markers joined by lines) and, optionally, an exact solution drawn
//     as a dashed curve sampled finely.
//   - ColourMap: a 2D scalar field on an unstructured triangulation,
//     rasterised pixel by pixel by linear interpolation on each triangle,
//     with a colour bar and contour lines computed on the mesh itself by
//     marching triangles (see ContourSegments); the axes have equal scale.
//   - Convergence: error against mesh size h on log–log axes, one line per
//     (method, norm), with dashed reference lines labelled "h^k".
//
// Every function checks its input first (lengths, NaN and infinities,
// positivity on log axes, node indices) and returns *InputError when it is
// unusable; nothing is written then. The file is written atomically with
// output.WriteFileAtomic: it appears complete or not at all.
//
// Sizes are in pixels; the canvas resolution is 96 dots per inch (gonum's
// vgimg default), so a point of line width is 4/3 pixel.
package plot
