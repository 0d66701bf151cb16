package ingest

import (
	"errors"
	"io"

	"lodestone/compute/progress"
)

// track returns r counting the bytes read from it for p, out of r's size
// when r can tell it (see sizeOf), and a function that reports the end.
// With a nil p it returns r itself.
func track(r io.Reader, p progress.Func) (io.Reader, func()) {
	if p == nil {
		return r, func() {}
	}
	c := newByteCounter(p, sizeOf(r))
	return c.reader(r), func() { c.f.Report(c.done, max(c.done, c.total)) }
}

// reportEvery is how many bytes pass between two progress reports.
const reportEvery = 1 << 20

// byteCounter adds up the bytes read from the files of one Open and reports
// them out of the files' total size (0 when unknown). Files are read one after another, so
// it needs no locking.
type byteCounter struct {
	f           progress.Func
	done, total int64
	last        int64
}

func newByteCounter(f progress.Func, total int64) *byteCounter {
	return &byteCounter{f: f, total: total}
}

// reader returns r counting what is read from it.
func (c *byteCounter) reader(r io.Reader) io.Reader { return &countingReader{r: r, c: c} }

// skip counts n bytes as read without reading them (a file read earlier).
func (c *byteCounter) skip(n int64) { c.add(n) }

func (c *byteCounter) add(n int64) {
	c.done += n
	if c.done-c.last >= reportEvery {
		c.last = c.done
		if c.total > 0 {
			c.f.Report(min(c.done, c.total), c.total)
		} else {
			c.f.Report(c.done, 0)
		}
	}
}

// finish reports everything as read.
func (c *byteCounter) finish() { c.f.Report(c.total, c.total) }

type countingReader struct {
	r io.Reader
	c *byteCounter
}

// Seek seeks the underlying reader when it can; ReadMatrixMarket uses it
// to read a file again to name the lines of a duplicate entry.
func (r *countingReader) Seek(offset int64, whence int) (int64, error) {
	if s, ok := r.r.(io.Seeker); ok {
		return s.Seek(offset, whence)
	}
	return 0, errors.New("ingest: input cannot seek")
}

// Read reads from the underlying reader and counts the bytes.
func (r *countingReader) Read(p []byte) (int, error) {
	n, err := r.r.Read(p)
	r.c.add(int64(n))
	return n, err
}
