package window

import (
	"errors"
	"runtime"
)

// ErrNoDisplay is returned by CheckDisplay when the window has no screen
// to open on.
var ErrNoDisplay = errors.New("no display to open the window on: DISPLAY is not set (the commands work without one: run \"lodestone help\")")

// CheckDisplay reports whether the window can open, reading the
// environment through getenv. On Linux and the BSDs the toolkit draws
// through X11 and needs the DISPLAY variable (a Wayland desktop sets it for
// its X11 layer); without it the toolkit would stop the process with a
// panic, so Lodestone says so first and returns ErrNoDisplay. Elsewhere it
// returns nil.
func CheckDisplay(getenv func(string) string) error {
	switch runtime.GOOS {
	case "linux", "freebsd", "openbsd", "netbsd", "dragonfly":
		if getenv("DISPLAY") == "" {
			return ErrNoDisplay
		}
	}
	return nil
}
