package window

import (
	"errors"

	"github.com/sqweek/dialog"
)

// errChoiceCancelled is returned by a Chooser when the user closes the dialog
// without choosing.
var errChoiceCancelled = errors.New("no file chosen")

// Chooser asks the user for a file or folder. The native implementation
// blocks until the dialog closes, so the window calls it off the UI goroutine
// and hands the answer back with fyne.Do. Tests answer it without a person.
type Chooser interface {
	// OpenFile asks for an existing file to read.
	OpenFile(title string) (string, error)
	// OpenFolder asks for an existing folder.
	OpenFolder(title string) (string, error)
	// SaveFile asks for a file to write, suggesting a name; filter names the
	// kind of file and its extensions (without dots).
	SaveFile(title, suggested, filter string, extensions ...string) (string, error)
}

// nativeChooser opens the operating system's own file dialogs.
type nativeChooser struct{}

func nativeErr(err error) error {
	if errors.Is(err, dialog.ErrCancelled) {
		return errChoiceCancelled
	}
	return err
}

func (nativeChooser) OpenFile(title string) (string, error) {
	p, err := dialog.File().Title(title).Load()
	return p, nativeErr(err)
}

func (nativeChooser) OpenFolder(title string) (string, error) {
	p, err := dialog.Directory().Title(title).Browse()
	return p, nativeErr(err)
}

func (nativeChooser) SaveFile(title, suggested, filter string, extensions ...string) (string, error) {
	b := dialog.File().Title(title).SetStartFile(suggested)
	if len(extensions) > 0 {
		b = b.Filter(filter, extensions...)
	}
	p, err := b.Save()
	return p, nativeErr(err)
}
