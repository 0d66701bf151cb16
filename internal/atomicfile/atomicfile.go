// Package atomicfile writes files so that readers see either the old
// content or the complete new content, never a partial file.
//
// Only a regular file can be replaced that way. A path that names something
// else is never swapped for a regular file: a symbolic link is followed and
// its final target replaced; a device or a named pipe is written to directly
// (there is nothing to rename over); a folder or a socket is refused.
package atomicfile

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
)

// How says how Save wrote its path.
type How int

// The ways Save writes.
const (
	// Replaced: the path was a regular file, or nothing, and now holds the
	// new content, swapped in atomically.
	Replaced How = iota
	// Followed: the path is a symbolic link (possibly through several); its
	// final target was created or replaced atomically and the link left
	// as it was.
	Followed
	// Through: the path is a device or a named pipe; the content was written
	// to it directly, without a temporary file.
	Through
)

// Outcome tells how Save wrote a path.
type Outcome struct {
	How    How
	Path   string // the path given to Save
	Target string // the file written: Path, or the symbolic link's target
	Kind   string // for Through: "a character device", "a block device" or "a named pipe"
}

// String describes an outcome other than Replaced in a sentence for people,
// and returns "" for Replaced.
func (o Outcome) String() string {
	switch o.How {
	case Followed:
		return fmt.Sprintf("%s is a symbolic link: wrote its target %s (replaced atomically; the link is unchanged)", o.Path, o.Target)
	case Through:
		return fmt.Sprintf("%s is %s: wrote to it directly (it cannot be replaced atomically)", o.Path, o.Kind)
	}
	return ""
}

// ErrNotWritable is wrapped by the errors of Check and Save for a path that
// names a folder, a socket, a symbolic-link loop, or a file in a folder that
// does not exist.
var ErrNotWritable = errors.New("cannot be written")

// notWritable is an error wrapping ErrNotWritable: "cannot write PATH: WHY".
type notWritable struct{ path, why string }

func (e *notWritable) Error() string        { return "cannot write " + e.path + ": " + e.why }
func (e *notWritable) Is(target error) bool { return target == ErrNotWritable }

// maxLinks bounds the symbolic links followed, as the kernel's limit does.
const maxLinks = 40

// Check reports how Save would write path, without writing anything: the
// outcome, or an error wrapping ErrNotWritable when path names a folder, a
// socket or a link loop, or lies in a folder that does not exist. Callers
// use it to refuse a bad output before a long computation.
func Check(path string) (Outcome, error) {
	target, fi, err := resolve(path)
	if err != nil {
		return Outcome{}, err
	}
	o := Outcome{How: Replaced, Path: path, Target: target}
	if target != path {
		o.How = Followed
	}
	if fi == nil {
		dir := filepath.Dir(target)
		di, err := os.Stat(dir)
		switch {
		case errors.Is(err, fs.ErrNotExist):
			return o, &notWritable{path, "its folder " + dir + " does not exist"}
		case err != nil:
			return o, &notWritable{path, fmt.Sprintf("its folder %s: %v", dir, unwrapPath(err))}
		case !di.IsDir():
			return o, &notWritable{path, dir + " is not a folder"}
		}
		return o, nil
	}
	switch m := fi.Mode(); {
	case m.IsRegular():
	case m.IsDir():
		return o, &notWritable{path, "it is a folder"}
	case m&fs.ModeNamedPipe != 0:
		o.How, o.Kind = Through, "a named pipe"
	case m&fs.ModeCharDevice != 0:
		o.How, o.Kind = Through, "a character device"
	case m&fs.ModeDevice != 0:
		o.How, o.Kind = Through, "a block device"
	default:
		return o, &notWritable{path, fmt.Sprintf("it is neither a regular file, a device nor a named pipe (%v)", m.Type())}
	}
	return o, nil
}

// resolve follows symbolic links from path and returns the final target's
// path and its information, or nil information when the target does not
// exist (a new file, or a dangling link).
func resolve(path string) (string, fs.FileInfo, error) {
	target := path
	for range maxLinks {
		fi, err := os.Lstat(target)
		if errors.Is(err, fs.ErrNotExist) {
			return target, nil, nil
		}
		if err != nil {
			return target, nil, fmt.Errorf("cannot write %s: %w", path, err)
		}
		if fi.Mode()&fs.ModeSymlink == 0 {
			return target, fi, nil
		}
		to, err := os.Readlink(target)
		if err != nil {
			return target, nil, fmt.Errorf("cannot write %s: %w", path, err)
		}
		if !filepath.IsAbs(to) {
			to = filepath.Join(filepath.Dir(target), to)
		}
		target = to
	}
	return target, nil, &notWritable{path, fmt.Sprintf("more than %d symbolic links", maxLinks)}
}

func unwrapPath(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// Write is Save without the outcome.
func Write(path string, fill func(w io.Writer) error) error {
	_, err := Save(path, fill)
	return err
}

// Save writes what fill writes to path and returns how (see Check).
//
// A regular file, or a path where nothing exists yet, is replaced
// atomically: fill writes to a temporary file in the same folder, which is
// flushed to disk and renamed over the path only when fill and every write
// succeeded; otherwise the temporary file is removed and the path left as it
// was. A new file has permission 0644; a replaced one keeps its permission. A symbolic link is followed to its final target,
// which is replaced the same way. A device or named pipe is opened for
// writing and written to directly: an error then may leave part of the
// content written.
func Save(path string, fill func(w io.Writer) error) (Outcome, error) {
	o, err := Check(path)
	if err != nil {
		return o, err
	}
	if o.How == Through {
		return o, writeThrough(path, fill)
	}
	return o, replace(path, o.Target, fill)
}

// writeThrough writes to a device or named pipe.
func writeThrough(path string, fill func(w io.Writer) error) (err error) {
	f, err := os.OpenFile(path, os.O_WRONLY, 0)
	if err != nil {
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	defer func() {
		if cerr := f.Close(); err == nil && cerr != nil {
			err = fmt.Errorf("writing %s: %w", path, cerr)
		}
	}()
	bw := bufio.NewWriterSize(f, 1<<20)
	if err := fill(bw); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return nil
}

// replace writes target atomically; path is the name given, for messages.
func replace(path, target string, fill func(w io.Writer) error) (err error) {
	dir := filepath.Dir(target)
	mode := fs.FileMode(0o644)
	if fi, err := os.Stat(target); err == nil {
		mode = fi.Mode().Perm()
	}
	tmp, err := os.CreateTemp(dir, "."+filepath.Base(target)+".*.tmp")
	if err != nil {
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	bw := bufio.NewWriterSize(tmp, 1<<20)
	if err = fill(bw); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = bw.Flush(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = tmp.Sync(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = tmp.Chmod(mode); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = tmp.Close(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = os.Rename(tmp.Name(), target); err != nil {
		return fmt.Errorf("cannot replace %s: %w", path, err)
	}
	return nil
}

// SameFile reports whether a and b name the same file: the same device and
// inode when both exist (symbolic links followed), or, when neither exists
// yet, the same name in the same folder once links are followed. Two
// spellings of one path, a link and its target, and two hard links of one
// file are the same file.
func SameFile(a, b string) bool {
	ia, ea := os.Stat(a)
	ib, eb := os.Stat(b)
	switch {
	case ea == nil && eb == nil:
		return os.SameFile(ia, ib)
	case errors.Is(ea, fs.ErrNotExist) && errors.Is(eb, fs.ErrNotExist):
		ta, tb := finalTarget(a), finalTarget(b)
		if filepath.Base(ta) != filepath.Base(tb) {
			return false
		}
		da, ea := os.Stat(filepath.Dir(ta))
		db, eb := os.Stat(filepath.Dir(tb))
		return ea == nil && eb == nil && os.SameFile(da, db)
	}
	return false
}

// finalTarget returns the path a (possibly dangling) symbolic link leads to
// in the end, or path itself.
func finalTarget(path string) string {
	target, _, err := resolve(path)
	if err != nil {
		return path
	}
	return target
}
