// Command lodestone is a desktop program for exploring single-cell atlases.
//
// With no arguments it opens the window; with a subcommand (embed, score,
// bench, example, figure, cluster) it runs that command without a window.
// Run "lodestone help" for the list.
package main

import (
	"os"

	"lodestone/app"
	_ "lodestone/internal/localelog" // before the toolkit's init: see its doc
)

func main() {
	os.Exit(app.Main(os.Args[1:]))
}
