package cli

import (
	"bytes"
	"strings"
	"testing"
	"time"
)

func TestBarWritesPlainLinesOffATerminal(t *testing.T) {
	var out bytes.Buffer
	b := newBar(&out, false) // a buffer is no terminal
	b.report("reading", 0, 10)
	b.report("reading", 5, 10)
	b.note("took %s", "cells.tsv")
	b.report("reading", 10, 10)
	b.report("quality control", 1, 4)
	b.last = time.Now().Add(-2 * plainEvery) // a long stage
	b.report("quality control", 2, 4)
	b.finish()
	b.finish() // twice: nothing more
	got := out.String()
	if strings.Contains(got, "\r") || strings.Contains(got, "[") {
		t.Fatalf("terminal drawing in a plain stream: %q", got)
	}
	lines := strings.Split(strings.TrimSuffix(got, "\n"), "\n")
	want := []string{"took cells.tsv", "reading 100%", "quality control 50%", "quality control 50%"}
	if len(lines) != len(want) {
		t.Fatalf("lines %q", lines)
	}
	for i, w := range want {
		if strings.Join(strings.Fields(lines[i])[:len(strings.Fields(w))], " ") != w {
			t.Errorf("line %d %q, want it to start %q", i, lines[i], w)
		}
	}
}

func TestBarRedrawsInPlaceOnATerminal(t *testing.T) {
	var out bytes.Buffer
	b := newBar(&out, false)
	b.tty = true
	b.report("reading", 0, 10)
	b.report("reading", 10, 10)
	b.warn("a %s", "warning")
	b.report("affinities", 1, 2)
	b.finish()
	got := out.String()
	if strings.Count(got, "\n") != 3 || !strings.Contains(got, "\rreading") || !strings.Contains(got, "\r\x1b[Kwarning: a warning\n") {
		t.Fatalf("output %q", got)
	}
	if !strings.Contains(got, "[##############################] 100%") {
		t.Fatalf("no full bar in %q", got)
	}
}

func TestQuietBarKeepsOnlyWarnings(t *testing.T) {
	var out bytes.Buffer
	b := newBar(&out, true)
	b.report("reading", 1, 2)
	b.note("a note")
	b.warn("a warning")
	b.finish()
	if out.String() != "warning: a warning\n" {
		t.Fatalf("output %q", out.String())
	}
}
