// Package app is Lodestone's window and its headless commands: it wires the
// compute stages to the canvas and keeps long computations off the UI
// goroutine.
package app

import (
	fyneapp "fyne.io/fyne/v2/app"
	"fyne.io/fyne/v2/widget"
)

// Main runs Lodestone with the given command-line arguments and returns the
// process exit status.
func Main(args []string) int {
	a := fyneapp.NewWithID("org.lodestone.app")
	w := a.NewWindow("Lodestone")
	w.SetContent(widget.NewLabel("Lodestone"))
	w.ShowAndRun()
	return 0
}
