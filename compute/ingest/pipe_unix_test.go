//go:build unix

package ingest

import (
	"errors"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

func TestOpenRefusesPipesItMustReadTwice(t *testing.T) {
	dir := writeFiles(t, map[string]string{"m.mtx": mtxText(cellsByGenes, false), "g.tsv": geneNames})
	fifo := filepath.Join(dir, "cells.fifo")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("mkfifo: %v", err)
	}
	for _, opt := range []struct {
		path string
		o    Options
	}{{filepath.Join(dir, "m.mtx"), Options{Cells: fifo}}, {fifo, Options{}}} {
		ds, err := Open(bg, opt.path, opt.o)
		if ds != nil || !errors.Is(err, ErrNotRegular) || !strings.Contains(err.Error(), fifo) || !strings.Contains(err.Error(), "it is a pipe") ||
			!strings.Contains(err.Error(), "save it to a file first") {
			t.Fatalf("error %v", err)
		}
	}
}
