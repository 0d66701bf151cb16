package window

import (
	"context"
	"fmt"
	"io"
	"path/filepath"
	"strings"

	"lodestone/internal/atomicfile"
)

// saver asks the user where to save (the chooser blocks, so it is asked in
// a job of the view) and writes files atomically in the background,
// telling the outcome in the status line or an error dialog.
type saver struct {
	chooser Chooser
	jobs    *viewJobs
	st      *atlasState
	errs    errorShower
}

// ask asks for a file to write, suggesting a name whose extension is the
// kind of file, and calls then with the path on the UI goroutine (with the
// extension added when the user gave none). Nothing happens when the user
// cancels.
func (s *saver) ask(title, suggested string, then func(path string)) {
	ext := strings.TrimPrefix(filepath.Ext(suggested), ".")
	s.jobs.run(func(context.Context) {
		path, err := s.chooser.SaveFile(title, suggested, strings.ToUpper(ext)+" file", ext)
		s.jobs.do(func() {
			switch {
			case err == errChoiceCancelled:
			case err != nil:
				s.errs.showError("Could not open the file dialog", err)
			default:
				if !strings.EqualFold(filepath.Ext(path), "."+ext) {
					path += "." + ext
				}
				then(path)
			}
		})
	})
}

// write writes a file atomically in the background and tells the outcome
// (see atomicfile.Save: a symbolic link has its target replaced, a device
// or a pipe is written to directly, and the status line says so). A path
// that is one of the files the atlas was read from (by device and inode: a
// link to it or another spelling too) is refused with an error dialog.
func (s *saver) write(path string, write func(io.Writer) error) {
	if s.st.data != nil {
		for _, src := range s.st.data.Sources {
			if atomicfile.SameFile(path, src) {
				what := path + " is a file the atlas was read from"
				if filepath.Clean(path) != filepath.Clean(src) {
					what = fmt.Sprintf("%s is the same file as %s, which the atlas was read from", path, src)
				}
				s.errs.showError("Could not save "+filepath.Base(path), fmt.Errorf("%s: saving would destroy it; choose another name", what))
				return
			}
		}
	}
	s.st.tell("saving " + filepath.Base(path) + "…")
	s.jobs.run(func(context.Context) {
		o, err := atomicfile.Save(path, write)
		s.jobs.do(func() {
			if err != nil {
				s.errs.showError("Could not save "+filepath.Base(path), err)
				return
			}
			if note := o.String(); note != "" {
				s.st.tell("saved: " + note) // a link followed, a device or pipe written through
				return
			}
			s.st.tell("saved " + path)
		})
	})
}

// save asks for a file and writes it.
func (s *saver) save(title, suggested string, write func(io.Writer) error) {
	s.ask(title, suggested, func(path string) { s.write(path, write) })
}
