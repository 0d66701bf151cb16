// Package figure exports the map and the expression-by-group plot as
// figures for slides and papers: PNG files that carry their resolution, and
// SVG files whose text stays editable.
//
// A Figure is what the map widget shows (layout, paint, drawing order, view,
// point radius and opacity) plus a title, a key and category labels. Its
// points are drawn by lodestone/canvas/raster exactly as on screen, with the
// radius scaled by the ratio of the figure's map width to the screen's, so
// the density of the map looks the same at any output size. Text is set in
// the Go fonts (golang.org/x/image/font/gofont, BSD licence), embedded in
// the program; SVG files name the same family first and fall back to a
// sans-serif face.
//
// Everything is laid out once into a list of shapes and text in pixel
// coordinates, which WritePNG rasterises and WriteSVG writes out, so the two
// formats agree shape for shape. The same inputs give the same bytes.
//
// The package draws with the standard library, golang.org/x/image and the
// window-free canvas packages only, so the headless command and the window
// share it.
package figure
