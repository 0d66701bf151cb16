//go:build cgo

package localelog

// The constructor in setlocale_linux.c keeps GTK's warning about a locale
// the C library lacks off the error stream (see there).

// #cgo pkg-config: gtk+-3.0
import "C"
