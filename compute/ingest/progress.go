package ingest

import (
	"io"

	"lodestone/compute/progress"
)

// reportEvery is how many bytes pass between two progress reports.
const reportEvery = 1 << 20

// byteCounter adds up the bytes read from the files of one Open and reports
// them out of the files' total size. Files are read one after another, so
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
		c.f.Report(min(c.done, c.total), c.total)
	}
}

// finish reports everything as read.
func (c *byteCounter) finish() { c.f.Report(c.total, c.total) }

type countingReader struct {
	r io.Reader
	c *byteCounter
}

func (r *countingReader) Read(p []byte) (int, error) {
	n, err := r.r.Read(p)
	r.c.add(int64(n))
	return n, err
}
