package ingest

import (
	"bufio"
	"bytes"
	"context"
	"fmt"
	"io"
	"strings"

	"lodestone/compute/progress"
)

// Labels are the contents of a label file: one cell or gene per line.
type Labels struct {
	IDs []string
	// Symbols holds each line's second tab-separated field, or its ID when
	// the line has none. It shares IDs' backing array when no line has a
	// second field.
	Symbols []string
	// Fields is the largest number of tab-separated fields on any line.
	Fields int
}

// Len returns the number of labels.
func (l *Labels) Len() int { return len(l.IDs) }

// dropFirst removes the first label (a header line).
func (l *Labels) dropFirst() {
	l.IDs = l.IDs[1:]
	l.Symbols = l.Symbols[1:]
}

// ReadLabels reads a label file from r, plain or gzip compressed: one label
// per line, optionally followed by more tab-separated fields
//
//	ID                     or
//	ID <TAB> symbol <TAB> anything else
//
// The first field is the ID and the second, when present and not empty, the
// symbol. Blank lines at the end are ignored; a blank line or an empty ID
// elsewhere is an error (ErrBlankLabel). IDs are not checked for
// uniqueness here. name is used in error messages. p, when not nil,
// receives the bytes read from r, out of r's size when r has a Len or Stat
// method (else 0).
func ReadLabels(ctx context.Context, r io.Reader, name string, p progress.Func) (*Labels, error) {
	r, done := track(r, p)
	defer done()
	src, closeSrc, _, err := decompress(r)
	if err != nil {
		return nil, readError(name, 1, err)
	}
	defer closeSrc()
	s := newLineScanner(ctx, src)
	l := &Labels{}
	var symbols []string
	blank := 0 // line number of the first blank line not yet followed by a label
	for s.next() {
		line := s.text
		if len(bytes.TrimSpace(line)) == 0 {
			if blank == 0 {
				blank = s.line
			}
			continue
		}
		if blank != 0 {
			return nil, errorf(name, blank, 0, ErrBlankLabel, "blank line among labels")
		}
		id, rest, more := bytes.Cut(line, []byte{'\t'})
		if len(bytes.TrimSpace(id)) == 0 {
			return nil, errorf(name, s.line, 1, ErrBlankLabel, "line starts with an empty ID")
		}
		nf := 1
		if more {
			nf = 2 + bytes.Count(rest, []byte{'\t'})
		}
		ids := string(id)
		l.IDs = append(l.IDs, ids)
		if nf >= 2 && symbols == nil {
			symbols = make([]string, len(l.IDs)-1, cap(l.IDs))
			copy(symbols, l.IDs)
		}
		if symbols != nil {
			sym, _, _ := bytes.Cut(rest, []byte{'\t'})
			if len(sym) == 0 || !more {
				symbols = append(symbols, ids)
			} else {
				symbols = append(symbols, string(sym))
			}
		}
		l.Fields = max(l.Fields, nf)
	}
	if err := s.failure(name); err != nil {
		return nil, err
	}
	if len(l.IDs) == 0 {
		return nil, errorf(name, 1, 0, ErrEmpty, "no labels")
	}
	l.Symbols = l.IDs
	if symbols != nil {
		l.Symbols = symbols
	}
	return l, nil
}

// WriteLabels writes one label per line to w: the ID alone, or
// "ID<TAB>symbol" when symbols is not nil and differs from ids anywhere.
// ReadLabels reads the result back. Labels that are empty or hold a tab or
// line break cannot be written and give an error (ErrBlankLabel,
// ErrBadLabel) before anything is written.
func WriteLabels(w io.Writer, ids, symbols []string) error {
	if symbols != nil && len(symbols) != len(ids) {
		return fmt.Errorf("ingest: %d symbols for %d IDs: %w", len(symbols), len(ids), ErrFieldCount)
	}
	two := false
	for i, id := range ids {
		if err := checkLabel(i, "ID", id); err != nil {
			return err
		}
		if symbols != nil && symbols[i] != id {
			if err := checkLabel(i, "symbol", symbols[i]); err != nil {
				return err
			}
			two = true
		}
	}
	bw := bufio.NewWriterSize(w, 64<<10)
	for i, id := range ids {
		bw.WriteString(id)
		if two {
			bw.WriteByte('\t')
			bw.WriteString(symbols[i])
		}
		bw.WriteByte('\n')
	}
	return bw.Flush()
}

// checkLabel reports whether a label can be written on a line of its own.
func checkLabel(i int, what, s string) error {
	if strings.TrimSpace(s) == "" {
		return fmt.Errorf("ingest: label %d: %s %q: %w", i+1, what, s, ErrBlankLabel)
	}
	if strings.ContainsAny(s, "\t\r\n") {
		return fmt.Errorf("ingest: label %d: %s %q: %w", i+1, what, s, ErrBadLabel)
	}
	return nil
}
