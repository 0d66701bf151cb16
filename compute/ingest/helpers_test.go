package ingest

import (
	"bytes"
	"compress/gzip"
	"context"
	"errors"
	"os"
	"path/filepath"
	"testing"

	"lodestone/compute/sparse"
)

// gz returns text compressed with gzip.
func gz(t testing.TB, text []byte) []byte {
	t.Helper()
	var b bytes.Buffer
	w := gzip.NewWriter(&b)
	if _, err := w.Write(text); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// writeFiles writes name → contents into a new temporary folder.
func writeFiles(t testing.TB, files map[string]string) string {
	t.Helper()
	dir := t.TempDir()
	for name, text := range files {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// dense expands m into a row-major float64 matrix.
func dense(m *sparse.Counts) [][]float64 {
	out := make([][]float64, m.Rows)
	var cols []int32
	var vals []float32
	for i := range out {
		out[i] = make([]float64, m.Cols)
		cols, vals = m.Row(i, cols, vals)
		for k, c := range cols {
			out[i][c] = float64(vals[k])
		}
	}
	return out
}

// wantParseError checks that err is a ParseError at file:line:column
// wrapping sentinel, and that its message starts with the position.
func wantParseError(t *testing.T, err error, file string, line, column int, sentinel error) {
	t.Helper()
	if err == nil {
		t.Fatalf("no error; want %v at %s:%d:%d", sentinel, file, line, column)
	}
	var pe *ParseError
	if !errors.As(err, &pe) {
		t.Fatalf("error %q (%T) is not a *ParseError", err, err)
	}
	if pe.File != file || pe.Line != line || pe.Column != column {
		t.Errorf("error %q at %s:%d:%d, want %s:%d:%d", err, pe.File, pe.Line, pe.Column, file, line, column)
	}
	if !errors.Is(err, sentinel) {
		t.Errorf("error %q does not wrap %q", err, sentinel)
	}
	prefix := (&ParseError{File: file, Line: line, Column: column, Err: errors.New("")}).Error()
	if msg := err.Error(); len(msg) < len(prefix) || msg[:len(prefix)] != prefix {
		t.Errorf("message %q does not start with %q", msg, prefix)
	}
}

var bg = context.Background()
