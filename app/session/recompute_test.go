package session_test

import (
	"bytes"
	"context"
	"math"
	"path/filepath"
	"testing"

	"lodestone/app/cli"
	"lodestone/app/session"
)

// TestRecomputeReproducesTheLayout writes a small example atlas, embeds it
// with a session, reads the session back and recomputes the layout from the
// inputs: it must equal the stored layout bit for bit (same seed, thread
// count and platform).
func TestRecomputeReproducesTheLayout(t *testing.T) {
	dir := t.TempDir()
	var out, errs bytes.Buffer
	if code := cli.Run([]string{"example", "--out", dir, "--cells", "900", "--genes", "300", "--quiet"}, &out, &errs); code != 0 {
		t.Fatalf("example: %s", errs.String())
	}
	path := filepath.Join(t.TempDir(), "map"+session.Extension)
	args := []string{"embed", "--in", dir, "--session", path, "--iterations", "200", "--attraction", "3",
		"--pcs", "10", "--genes", "150", "--min-genes", "40", "--threads", "2", "--quiet"}
	if code := cli.Run(args, &out, &errs); code != 0 {
		t.Fatalf("embed: %s", errs.String())
	}
	s, err := session.Read(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Inputs) < 3 {
		t.Fatalf("session records %d inputs", len(s.Inputs))
	}
	if c := session.Changed(s); len(c) != 0 {
		t.Fatalf("inputs reported changed: %v", c)
	}
	_, layout, err := s.Recompute(context.Background(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(layout) != len(s.Layout) {
		t.Fatalf("recomputed %d coordinates, stored %d", len(layout), len(s.Layout))
	}
	for i := range layout {
		if math.Float32bits(layout[i]) != math.Float32bits(s.Layout[i]) {
			t.Fatalf("coordinate %d: recomputed %v, stored %v", i, layout[i], s.Layout[i])
		}
	}
}
