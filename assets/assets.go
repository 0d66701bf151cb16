// Package assets holds the files built into the program: its icon.
//
// The icon is drawn by hand in icon.svg; "go generate ./assets" renders it
// into the committed icon-N.png files and icon.ico, which the packages in
// packaging/ install. LICENSES.md lists the licences of everything the
// program embeds.
package assets

import _ "embed"

//go:generate go run lodestone/packaging/cmd/mkicons -svg icon.svg -out .

// IconPNG is the program's icon as a 256 × 256 PNG image with an alpha
// channel, for the window and the task bar. It must not be modified.
//
//go:embed icon-256.png
var IconPNG []byte
