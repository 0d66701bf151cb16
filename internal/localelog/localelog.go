// Package localelog keeps two spurious toolkit complaints about the locale
// off the error stream: the window toolkit's about the C locale (below) and,
// on Linux, the file dialogs' toolkit's about a locale that the C library
// lacks (setlocale_linux.c). Both come before main runs, on every start,
// headless commands included.
//
// Under LANG=C.UTF-8 (or C.<codeset>, POSIX.<codeset>), the default of
// Debian's containers and servers, the toolkit's translation package reads
// the locale through github.com/jeandeaual/go-locale, which strips the
// codeset and hands "C" to golang.org/x/text/language.Parse. "C" is no
// BCP 47 tag, and the toolkit logs three lines through the standard
// logger:
//
//	Fyne error:  Error parsing user locale C
//	  Cause: language: tag is not well-formed
//	  At: …/fyne.io/fyne/v2/lang/locale.go:35
//
// It does so in the init function of fyne.io/fyne/v2/lang, before main
// runs, on every start, also of the headless commands; the toolkit then
// falls back to English, which is what the C locale means. Nothing in the
// toolkit's API can be called earlier.
//
// This package's init function wraps the standard logger's output in a
// filter that drops exactly that complaint and passes every other line
// through. Go initialises the packages of a program in dependency order,
// taking at each step the first ready package in the order of import paths
// (the Go specification, "Package initialization"); this package imports
// only the standard library's log, os, bytes and sync, so it is ready as
// soon as log is, and it is initialised before fyne.io/fyne/v2/lang, which
// waits on text/template and the toolkit. The program's test
// (TestHeadlessCommandsPrintNoToolkitLog) checks the order by running the
// built program under LANG=C.UTF-8.
package localelog

import (
	"bytes"
	"io"
	"log"
	"os"
	"sync"
)

func init() {
	log.SetOutput(NewFilter(os.Stderr))
}

// Filter is an io.Writer for the standard logger that drops the toolkit's
// complaint about the C locale (three writes: the message, its cause and
// its place) and passes every other write through to its destination.
type Filter struct {
	mu   sync.Mutex
	w    io.Writer
	skip int // writes still to drop: the cause and place of a dropped message
}

// NewFilter returns a Filter writing to w.
func NewFilter(w io.Writer) *Filter { return &Filter{w: w} }

// The complaint's lines, as the toolkit's fyne.LogError writes them after
// the logger's date and time.
var (
	complaint = [][]byte{
		[]byte("Fyne error:  Error parsing user locale C\n"),
		[]byte("Fyne error:  Error parsing user locale POSIX\n"),
	}
	cause = []byte("  Cause: language: tag is not well-formed")
	place = []byte("  At: ")
)

// Write writes p to the destination unless p is a line of the complaint.
func (f *Filter) Write(p []byte) (int, error) {
	f.mu.Lock()
	defer f.mu.Unlock()
	switch {
	case f.skip == 2 && bytes.Contains(p, cause), f.skip == 1 && bytes.Contains(p, place):
		f.skip--
		return len(p), nil
	}
	f.skip = 0
	for _, c := range complaint {
		if bytes.HasSuffix(p, c) {
			f.skip = 2
			return len(p), nil
		}
	}
	return f.w.Write(p)
}
