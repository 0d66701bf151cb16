package ingest

import (
	"bufio"
	"bytes"
	"compress/gzip"
	"context"
	"fmt"
	"io"
	"sync"
)

const (
	// readBufSize is the size of the buffer between a file and the
	// decompressor; the line scanner reads past it.
	readBufSize = 64 << 10
	// The line scanner's buffer starts at firstBufSize, grows to
	// lineBufSize once the input proves longer, and grows further only for
	// lines longer than that, up to maxLineSize.
	firstBufSize = 64 << 10
	lineBufSize  = 1 << 20
	maxLineSize  = 256 << 20
	// chunkSize and chunkCount set the double buffering between the
	// goroutine that inflates gzip data and the parser.
	chunkSize  = 512 << 10
	chunkCount = 4
)

// utf8BOM is removed from the start of the first line.
var utf8BOM = []byte{0xef, 0xbb, 0xbf}

// gzipMagic starts every gzip member (RFC 1952, section 2.3.1: ID1 ID2).
var gzipMagic = []byte{0x1f, 0x8b}

// decompress returns a reader of the text held by r: r itself, or, when r
// starts with the gzip magic bytes, the inflated stream, decoded on a
// separate goroutine so that inflating and parsing overlap. The returned
// close function stops that goroutine and must be called before r is closed.
// gz reports whether r was compressed.
func decompress(r io.Reader) (text io.Reader, close func(), gz bool, err error) {
	br := bufio.NewReaderSize(r, readBufSize)
	magic, err := br.Peek(2)
	if err != nil && err != io.EOF {
		return nil, nil, false, err
	}
	if !bytes.Equal(magic, gzipMagic) {
		return br, func() {}, false, nil
	}
	zr, err := gzip.NewReader(br)
	if err != nil {
		return nil, nil, true, err
	}
	zr.Multistream(false)
	a := newAsyncReader(&gzipMembers{br: br, zr: zr})
	return a, a.close, true, nil
}

// gzipMembers inflates a gzip file member by member (RFC 1952, section 2.2:
// a file is a series of members). After the last member only zero bytes
// (padding) may follow; anything else is ErrTrailingData, not a damaged
// or truncated member.
type gzipMembers struct {
	br *bufio.Reader
	zr *gzip.Reader
}

func (g *gzipMembers) Read(p []byte) (int, error) {
	for {
		n, err := g.zr.Read(p)
		if err == io.EOF && n > 0 {
			return n, nil // the member's end is seen again on the next call
		}
		if err != io.EOF {
			return n, err
		}
		next, err := g.br.Peek(len(gzipMagic))
		switch {
		case len(next) == 0 && err == io.EOF:
			return 0, io.EOF
		case bytes.Equal(next, gzipMagic):
			if err := g.zr.Reset(g.br); err != nil {
				return 0, err
			}
			g.zr.Multistream(false)
		default:
			return 0, g.trailing()
		}
	}
}

// trailing reads what follows the last member: io.EOF when it is all zero
// bytes, else ErrTrailingData saying how much there is.
func (g *gzipMembers) trailing() error {
	var n, nonZero int64
	buf := make([]byte, 32<<10)
	for {
		k, err := g.br.Read(buf)
		for _, c := range buf[:k] {
			if c != 0 {
				nonZero++
			}
		}
		n += int64(k)
		if err == io.EOF {
			break
		}
		if err != nil {
			return err
		}
	}
	if nonZero == 0 {
		return io.EOF
	}
	return fmt.Errorf("%w: %d bytes that are not gzip data follow the end of the compressed stream (the compressed text before them is whole: remove them, or compress the file again)", ErrTrailingData, n)
}

// asyncReader reads its source on its own goroutine into a ring of chunks.
type asyncReader struct {
	full chan []byte // chunks holding data, in order
	free chan []byte // empty chunks
	stop chan struct{}
	wg   sync.WaitGroup
	err  error  // the source's final error, set before full is closed
	cur  []byte // unread part of the chunk being consumed
	held []byte // the chunk being consumed, returned to free when done
	once sync.Once
}

func newAsyncReader(src io.Reader) *asyncReader {
	a := &asyncReader{
		full: make(chan []byte, chunkCount),
		free: make(chan []byte, chunkCount),
		stop: make(chan struct{}),
	}
	for i := 0; i < chunkCount; i++ {
		a.free <- nil // allocated when first needed
	}
	a.wg.Add(1)
	go a.run(src)
	return a
}

func (a *asyncReader) run(src io.Reader) {
	defer a.wg.Done()
	defer close(a.full)
	for {
		var buf []byte
		select {
		case buf = <-a.free:
		case <-a.stop:
			return
		}
		if buf == nil {
			buf = make([]byte, chunkSize)
		}
		n := 0
		var err error
		for n < len(buf) && err == nil {
			var got int
			got, err = src.Read(buf[n:])
			n += got
		}
		if n > 0 {
			select {
			case a.full <- buf[:n]:
			case <-a.stop:
				return
			}
		}
		if err != nil {
			if err != io.EOF {
				a.err = err
			}
			return
		}
	}
}

// Read copies inflated data into p.
func (a *asyncReader) Read(p []byte) (int, error) {
	for len(a.cur) == 0 {
		if a.held != nil {
			a.free <- a.held[:cap(a.held)]
			a.held = nil
		}
		buf, ok := <-a.full
		if !ok {
			if a.err != nil {
				return 0, a.err
			}
			return 0, io.EOF
		}
		a.held, a.cur = buf, buf
	}
	n := copy(p, a.cur)
	a.cur = a.cur[n:]
	return n, nil
}

// close stops the decoding goroutine and waits for it to return.
func (a *asyncReader) close() {
	a.once.Do(func() {
		close(a.stop)
		a.wg.Wait()
	})
}

// lineScanner hands out the lines of a text stream without copying them:
// each line is a slice of an internal buffer, valid until the next call to
// next. Lines end at "\n"; a "\r" before it is removed. The last line may
// lack its "\n".
type lineScanner struct {
	ctx  context.Context
	src  io.Reader
	buf  []byte
	r, w int   // unread data is buf[r:w]
	eof  bool  // src has no more data
	err  error // a read error other than io.EOF, or the context's error
	line int   // number of the line last returned
	text []byte
	max  int // the longest line allowed
}

func newLineScanner(ctx context.Context, src io.Reader) *lineScanner {
	return &lineScanner{ctx: ctx, src: src, buf: make([]byte, firstBufSize), max: maxLineSize}
}

// next advances to the next line, which is then s.text, and reports whether
// there was one. After it returns false, s.err says why when the stream did
// not simply end.
func (s *lineScanner) next() bool {
	for {
		if i := bytes.IndexByte(s.buf[s.r:s.w], '\n'); i >= 0 {
			s.take(s.r + i)
			s.r++
			return true
		}
		if s.eof || s.err != nil {
			if s.r < s.w && s.err == nil {
				s.take(s.w)
				return true
			}
			return false
		}
		s.fill()
	}
}

// take makes buf[s.r:end] the current line and moves past it.
func (s *lineScanner) take(end int) {
	line := s.buf[s.r:end]
	if n := len(line); n > 0 && line[n-1] == '\r' {
		line = line[:n-1]
	}
	if s.line == 0 {
		line = bytes.TrimPrefix(line, utf8BOM)
	}
	s.text = line
	s.line++
	s.r = end
}

// fill moves the unread data to the front of the buffer, grows the buffer
// when a single line fills it, and reads more.
func (s *lineScanner) fill() {
	if err := s.ctx.Err(); err != nil {
		s.err = err
		return
	}
	if s.r > 0 {
		s.w = copy(s.buf, s.buf[s.r:s.w])
		s.r = 0
	}
	if len(s.buf) < lineBufSize && s.w > 0 {
		// The input is longer than the first buffer: take a larger one.
		nb := make([]byte, lineBufSize)
		copy(nb, s.buf[:s.w])
		s.buf = nb
	} else if s.w == len(s.buf) {
		if len(s.buf) >= s.max {
			s.err = errorf("", 0, 0, ErrLineTooLong, "a line exceeds %d bytes", s.max)
			return
		}
		nb := make([]byte, 2*len(s.buf))
		copy(nb, s.buf[:s.w])
		s.buf = nb
	}
	n, err := s.src.Read(s.buf[s.w:])
	s.w += n
	if err == io.EOF {
		s.eof = true
	} else if err != nil {
		s.err = err
	}
}

// failure returns the error that stopped the scanner, as a ParseError naming
// file and the line being read, or nil when the stream simply ended.
func (s *lineScanner) failure(file string) error {
	switch {
	case s.err == nil:
		return nil
	case s.err == s.ctx.Err():
		return s.err
	}
	if pe, ok := s.err.(*ParseError); ok {
		pe.File, pe.Line = file, s.line+1
		return pe
	}
	return readError(file, s.line+1, s.err)
}
