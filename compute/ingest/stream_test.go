package ingest

import (
	"bytes"
	"context"
	"errors"
	"io"
	"strings"
	"testing"
)

func TestLineScanner(t *testing.T) {
	// Lines longer than the first buffer, CRLF ends, a last line without
	// its end, a byte-order mark on the first line only.
	long := strings.Repeat("x", 3*firstBufSize+17)
	text := "\ufefffirst\r\n" + long + "\n\ufeffkept\n\nlast"
	want := []string{"first", long, "\ufeffkept", "", "last"}
	for _, data := range [][]byte{[]byte(text), gz(t, []byte(text))} {
		src, closeSrc, _, err := decompress(bytes.NewReader(data))
		if err != nil {
			t.Fatal(err)
		}
		s := newLineScanner(bg, src)
		var got []string
		for s.next() {
			got = append(got, string(s.text))
		}
		closeSrc()
		if s.failure("f") != nil || len(got) != len(want) {
			t.Fatalf("%d lines, error %v", len(got), s.failure("f"))
		}
		for k := range want {
			if got[k] != want[k] {
				t.Errorf("line %d: %.20q…, want %.20q…", k+1, got[k], want[k])
			}
		}
	}
}

func TestLineScannerTooLong(t *testing.T) {
	s := newLineScanner(bg, strings.NewReader("ok\n"+strings.Repeat("y", 3*lineBufSize)))
	s.max = 2 * lineBufSize
	for s.next() {
	}
	wantParseError(t, s.failure("long.txt"), "long.txt", 2, 0, ErrLineTooLong)
}

func TestAsyncReaderStops(t *testing.T) {
	// Closing before the end stops the inflating goroutine; reading a
	// damaged stream ends in its error.
	data := gz(t, bytes.Repeat([]byte("0123456789\n"), 1<<18))
	src, closeSrc, gzipped, err := decompress(bytes.NewReader(data))
	if err != nil || !gzipped {
		t.Fatal(err, gzipped)
	}
	buf := make([]byte, 100)
	if _, err := io.ReadFull(src, buf); err != nil {
		t.Fatal(err)
	}
	closeSrc()
	closeSrc() // twice is harmless
	src, closeSrc, _, _ = decompress(bytes.NewReader(data[:len(data)/2]))
	_, err = io.Copy(io.Discard, src)
	closeSrc()
	if !errors.Is(err, io.ErrUnexpectedEOF) {
		t.Errorf("error %v, want io.ErrUnexpectedEOF", err)
	}
	if err := readError("f.gz", 3, err); !errors.Is(err, ErrTruncated) {
		t.Errorf("%v does not wrap ErrTruncated", err)
	}
	s := newLineScanner(context.Background(), strings.NewReader("a\n"))
	s.next()
	if s.failure("f") != nil {
		t.Error("error at a plain end")
	}
}
