package ingest

import (
	"compress/flate"
	"compress/gzip"
	"errors"
	"fmt"
	"io"
	"strconv"
)

// Errors that the readers wrap in a ParseError (or, for problems that
// concern several files, in an error that names them). Test for them with
// errors.Is.
var (
	ErrEmpty          = errors.New("empty file")                             // no data where some is needed
	ErrFieldCount     = errors.New("wrong number of fields")                 // ragged row, short entry line
	ErrNotNumber      = errors.New("not a number")                           // in a numeric field
	ErrNotFinite      = errors.New("not a finite number")                    // NaN, ±Inf, beyond float32
	ErrMagnitude      = errors.New("number too large")                       // a table value beyond ±atlas.MaxMagnitude
	ErrNegative       = errors.New("negative value")                         // in an expression table or a counts matrix
	ErrHeader         = errors.New("bad header")                             // Matrix Market banner, table header
	ErrSizeLine       = errors.New("bad size line")                          // Matrix Market "rows cols entries"
	ErrUnsupported    = errors.New("not supported")                          // array, pattern, complex, symmetric …
	ErrIndexRange     = errors.New("index out of range")                     // Matrix Market row or column index
	ErrEntryCount     = errors.New("entry count differs from the size line") // too few or too many entries
	ErrDuplicateEntry = errors.New("duplicate entry")                        // one position given twice
	ErrLineTooLong    = errors.New("line too long")                          // beyond 256 MiB
	ErrQuote          = errors.New("bad quoting")                            // unclosed quote, text after one
	ErrTruncated      = errors.New("compressed data ends early")             // cut gzip stream
	ErrCorrupt        = errors.New("compressed data is damaged")             // gzip checksum or inflate error
	ErrTrailingData   = errors.New("data after the compressed stream")       // bytes after the last gzip member
	ErrBlankLabel     = errors.New("blank label")                            // empty ID or blank line
	ErrBadLabel       = errors.New("label holds a tab or line break")        // cannot be written
	ErrDuplicateID    = errors.New("duplicate ID")                           // a cell ID twice
	ErrLabelCount     = errors.New("label count matches no matrix dimension")
	ErrLabelRole      = errors.New("label file given for the other dimension") // a genes file given as cells
	ErrNoMatch        = errors.New("no row matches a cell")                    // annotation table
	ErrAmbiguous      = errors.New("ambiguous files")                          // Open cannot choose
	ErrNotRegular     = errors.New("not a regular file")                       // a pipe or device where a file is read twice
	ErrNothingToRead  = errors.New("no matrix or table found")
)

// A ParseError says where in which file a reader met a problem. Line and
// Column count from 1; Column is the number of the field on the line (a
// Matrix Market entry's row index is field 1, its value field 3; a table's
// first column is field 1), or 0 when the problem concerns the whole line.
// Line is 0 when the problem concerns the whole file.
type ParseError struct {
	File   string // the file's name as given to the reader
	Line   int    // line where the problem was found
	Column int    // field on that line
	Err    error  // what is wrong; wraps one of the Err… sentinels
}

// Error returns "file:line:column: what is wrong", leaving out a zero line or
// column.
func (e *ParseError) Error() string {
	switch {
	case e.Line == 0:
		return fmt.Sprintf("%s: %v", e.File, e.Err)
	case e.Column == 0:
		return fmt.Sprintf("%s:%d: %v", e.File, e.Line, e.Err)
	}
	return fmt.Sprintf("%s:%d:%d: %v", e.File, e.Line, e.Column, e.Err)
}

// Unwrap returns the underlying error.
func (e *ParseError) Unwrap() error { return e.Err }

// errorf returns a ParseError wrapping sentinel with a formatted detail:
// "sentinel: detail".
func errorf(file string, line, col int, sentinel error, format string, args ...any) *ParseError {
	return &ParseError{File: file, Line: line, Column: col, Err: fmt.Errorf("%w: "+format, append([]any{sentinel}, args...)...)}
}

// readError turns an error from reading the underlying (possibly compressed)
// stream into a ParseError at the given line: a gzip stream that stops early
// becomes ErrTruncated, damaged compressed data ErrCorrupt; bytes after the
// end of the compressed data keep their ErrTrailingData and concern the
// file, not a line of the text (which was read in full).
func readError(file string, line int, err error) error {
	var corrupt flate.CorruptInputError
	switch {
	case errors.Is(err, ErrTrailingData):
		return &ParseError{File: file, Err: err}
	case errors.Is(err, io.ErrUnexpectedEOF):
		return &ParseError{File: file, Line: line, Err: fmt.Errorf("%w (%w)", ErrTruncated, err)}
	case errors.Is(err, gzip.ErrChecksum), errors.Is(err, gzip.ErrHeader), errors.As(err, &corrupt):
		return &ParseError{File: file, Line: line, Err: fmt.Errorf("%w (%w)", ErrCorrupt, err)}
	}
	return &ParseError{File: file, Line: line, Err: err}
}

// quote returns b as a quoted Go string, shortened to at most 40 bytes, for
// error messages.
func quote(b []byte) string {
	const max = 40
	if len(b) > max {
		return strconv.Quote(string(b[:max])) + "…"
	}
	return strconv.Quote(string(b))
}
