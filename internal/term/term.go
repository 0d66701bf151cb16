// Package term tells whether a stream is an interactive terminal, so that
// progress can be redrawn in place there and written as plain lines to files
// and pipes.
package term

import "io"

// fder is a stream backed by a file descriptor, such as *os.File.
type fder interface {
	Fd() uintptr
}

// IsTerminal reports whether w is an interactive terminal: a file whose
// descriptor answers the terminal's own query (not merely a character
// device: /dev/null is one too, and is not a terminal).
func IsTerminal(w io.Writer) bool {
	f, ok := w.(fder)
	return ok && isTerminal(f.Fd())
}
