// Package canvas holds Lodestone's own Fyne widgets: the map (points drawn
// into a raster of its own, pan, zoom, hover and lasso), the attraction dial,
// and the key that lists the categories of the current paint.
//
// The drawing itself lives in the window-free packages canvas/raster,
// canvas/colour and canvas/spatial, so it can be tested and benchmarked
// without a display.
package canvas
