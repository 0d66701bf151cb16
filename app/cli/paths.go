package cli

import (
	"fmt"
	"io"

	"lodestone/app/session"
	"lodestone/internal/atomicfile"
)

// Roles of path flags.
const (
	roleIn  = "input"
	roleOut = "output"
)

// pathFlag is a string flag naming a file a command reads or writes.
type pathFlag struct {
	name, role string
	path       *string
}

// inputPath registers a flag naming a file or folder the command reads.
func (f *flags) inputPath(p *string, name, usage string) {
	f.StringVar(p, name, "", usage)
	f.paths = append(f.paths, pathFlag{name: name, role: roleIn, path: p})
}

// outputPath registers a flag naming a file the command writes.
func (f *flags) outputPath(p *string, name, usage string) {
	f.StringVar(p, name, "", usage)
	f.paths = append(f.paths, pathFlag{name: name, role: roleOut, path: p})
}

// named is a path with the flag (or the description) it came from.
type named struct{ from, path string }

// given returns the paths of the path flags that are set, by role.
func (f *flags) given() (ins, outs []named) {
	for _, p := range f.paths {
		if *p.path == "" {
			continue
		}
		n := named{"--" + p.name, *p.path}
		if p.role == roleIn {
			ins = append(ins, n)
		} else {
			outs = append(outs, n)
		}
	}
	return ins, outs
}

// checkPaths refuses, as usage errors, outputs that cannot be written (a
// folder, a file in a missing folder) and any output that is the same file
// as an input, another output or a file in extra (what was read besides the
// flags' paths, such as the files found in an atlas's folder). Files are
// compared by device and inode (atomicfile.SameFile), so that two
// spellings of one path, a symbolic link and its target, or two hard links
// are the same file; an output that does not exist yet is compared by its
// folder and name.
func (f *flags) checkPaths(extra ...named) error {
	ins, outs := f.given()
	ins = append(ins, extra...)
	for k, o := range outs {
		if _, err := atomicfile.Check(o.path); err != nil {
			return usageError{fmt.Errorf("%s: %w", o.from, err)}
		}
		for _, in := range ins {
			if atomicfile.SameFile(o.path, in.path) {
				return usagef("%s %s is the same file as %s %s: writing it would destroy what is read; choose another output", o.from, o.path, in.from, in.path)
			}
		}
		for _, o2 := range outs[:k] {
			if atomicfile.SameFile(o.path, o2.path) {
				return usagef("%s %s and %s %s are the same file: one would overwrite the other; choose two outputs", o2.from, o2.path, o.from, o.path)
			}
		}
	}
	return nil
}

// checkRead refuses, as usage errors, an output that is the same file as
// one of sources, the files an atlas was read from (pipeline.Prepared or
// atlas.Dataset Sources: the files found in a folder among them), each
// named as what in the message.
func (f *flags) checkRead(what string, sources []string) error {
	read := make([]named, len(sources))
	for k, src := range sources {
		read[k] = named{what, src}
	}
	return f.checkPaths(read...)
}

// checkSession refuses, as usage errors and before anything is read, an
// output that is the same file as one a session names as its input: the
// file or folder it was opened from, its label files and its annotation
// table. The files found in a folder are known once they are read again;
// commands check them with checkRead.
func (f *flags) checkSession(s *session.Session) error {
	var read []string
	if s.OpenedPath != "" {
		read = append(read, s.OpenedPath)
	}
	if r := s.Reading; r != nil {
		for _, p := range []string{r.CellLabels, r.GeneLabels, r.Annotations} {
			if p != "" {
				read = append(read, p)
			}
		}
	}
	return f.checkRead("the session's input file", read)
}

// writeOutput writes the file of output flag name at path atomically (see
// atomicfile.Save) and tells on b what happened when path is not a
// regular file: a symbolic link followed, a device or pipe written through.
func writeOutput(b *bar, name, path string, fill func(w io.Writer) error) error {
	o, err := atomicfile.Save(path, fill)
	if err != nil {
		return err
	}
	if s := o.String(); s != "" {
		b.warn("--%s %s", name, s)
	}
	return nil
}

// pathFlags returns the path flags of a flag set by role, for tests.
func (f *flags) pathFlags() map[string]string {
	m := map[string]string{}
	for _, p := range f.paths {
		m[p.name] = p.role
	}
	return m
}

// writeSession validates s and writes it to path, the path of the output
// flag --session (see writeOutput).
func writeSession(b *bar, path string, s *session.Session) error {
	if err := s.Validate(); err != nil {
		return fmt.Errorf("session %s: %w", path, err)
	}
	return writeOutput(b, "session", path, func(w io.Writer) error { return session.Encode(w, s) })
}
