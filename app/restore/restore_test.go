package restore_test

import (
	"bytes"
	"context"
	"errors"
	"math"
	"path/filepath"
	"reflect"
	"testing"

	"lodestone/app/cli"
	"lodestone/app/live"
	"lodestone/app/restore"
	"lodestone/app/session"
	"lodestone/compute/atlas"
	"lodestone/compute/ingest"
	"lodestone/compute/neighbors"
	"lodestone/compute/pipeline"
	"lodestone/sampledata"
)

// run runs a headless command and fails the test when it fails.
func run(t *testing.T, args ...string) {
	t.Helper()
	var out, errs bytes.Buffer
	if code := cli.Run(args, &out, &errs); code != 0 {
		t.Fatalf("%v: status %d: %s", args, code, errs.String())
	}
}

// smallAtlas writes a small example atlas and returns its folder.
func smallAtlas(t *testing.T) string {
	dir := t.TempDir()
	run(t, "example", "--out", dir, "--cells", "900", "--genes", "300", "--quiet")
	return dir
}

// prepFlags suit the small atlas.
var prepFlags = []string{"--pcs", "10", "--genes", "150", "--min-genes", "40", "--threads", "2", "--quiet"}

// recomputeEqualsStored reads a session, recomputes its layout from the
// inputs and checks it against the stored one bit for bit.
func recomputeEqualsStored(t *testing.T, path string) *session.Session {
	t.Helper()
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
	_, layout, err := restore.Recompute(context.Background(), s, nil)
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
	return s
}

// writeAndRead writes s to a session file and reads it back.
func writeAndRead(t *testing.T, s *session.Session) *session.Session {
	t.Helper()
	path := filepath.Join(t.TempDir(), "m"+session.Extension)
	if err := session.Write(path, s); err != nil {
		t.Fatal(err)
	}
	back, err := session.Read(path)
	if err != nil {
		t.Fatal(err)
	}
	return back
}

// TestRecomputeReproducesTheLayout embeds a small example atlas with a
// session, reads the session back and recomputes the layout from the
// inputs: it must equal the stored layout bit for bit (same seed, thread
// count and platform).
func TestRecomputeReproducesTheLayout(t *testing.T) {
	dir := smallAtlas(t)
	path := filepath.Join(t.TempDir(), "map"+session.Extension)
	run(t, append([]string{"embed", "--in", dir, "--session", path, "--iterations", "200", "--attraction", "3"}, prepFlags...)...)
	recomputeEqualsStored(t, path)
}

// TestSessionNamesTheFilesItWasReadFrom embeds a small atlas found in a
// folder, then writes tables that name its cells into that folder (a layout
// and a sweep's layouts, as users do): opening the folder alone is now
// ambiguous, but the session names the label files, the annotation table and
// the orientation the reader chose, and recomputes its layout bit for bit.
func TestSessionNamesTheFilesItWasReadFrom(t *testing.T) {
	dir := smallAtlas(t)
	path := filepath.Join(t.TempDir(), "map"+session.Extension)
	run(t, append([]string{"embed", "--in", dir, "--session", path, "--out", filepath.Join(dir, "layout.csv"), "--iterations", "200"}, prepFlags...)...)
	run(t, append([]string{"embed", "--in", dir, "--meta", filepath.Join(dir, "annotations.tsv"), "--out", filepath.Join(dir, "other.csv"), "--iterations", "10"}, prepFlags...)...)
	if _, err := ingest.Open(context.Background(), dir, ingest.Options{}); !errors.Is(err, ingest.ErrAmbiguous) {
		t.Fatalf("the folder with two more tables naming cells opened with %v, want ErrAmbiguous", err)
	}
	s := recomputeEqualsStored(t, path)
	r := s.Reading
	if r == nil || r.CellLabels == "" || r.GeneLabels == "" || r.Annotations == "" || r.MatrixRows == "" {
		t.Fatalf("the session names the files %+v", r)
	}
	for _, f := range []string{r.CellLabels, r.GeneLabels, r.Annotations} {
		if !filepath.IsAbs(f) || filepath.Dir(f) != dir {
			t.Errorf("file %q, want an absolute path in %s", f, dir)
		}
	}
}

// TestRecomputeReproducesASettledTurn turns the dial of a session's map as
// the window does (a warm run that ends once the layout has settled), stores
// the new map and its history in the session, and recomputes it from the
// inputs: the replay runs the iterations the turn did and gives the stored
// layout bit for bit.
func TestRecomputeReproducesASettledTurn(t *testing.T) {
	dir := smallAtlas(t)
	path := filepath.Join(t.TempDir(), "map"+session.Extension)
	run(t, append([]string{"embed", "--in", dir, "--session", path, "--iterations", "300"}, prepFlags...)...)
	s, err := session.Read(path)
	if err != nil {
		t.Fatal(err)
	}
	p, _, err := restore.Prepare(context.Background(), s, nil)
	if err != nil {
		t.Fatal(err)
	}
	e := live.New(&live.TSNE{P: p.P, Seed: p.Settings.Seed, Threads: p.Settings.Threads}, p.Settings.Perplexity, s.Initial, nil)
	e.SetLayout(s.Layout, restore.Steps(s))
	e.Turn(5, 5000)
	e.Wait()
	layout, st := e.Latest()
	h := e.History()
	if last := h[len(h)-1]; !st.Settled || !last.Settled || last.Done != st.Iteration || last.Done >= 5000 {
		t.Fatalf("the turn ended with status %+v, recorded as %+v", st, last)
	}
	s.Layout, s.History, s.Attraction = layout, restore.History(h), 5
	turned := filepath.Join(t.TempDir(), "turned"+session.Extension)
	if err := session.Write(turned, s); err != nil {
		t.Fatal(err)
	}
	back := recomputeEqualsStored(t, turned)
	if n := len(back.History); n != 2 || !back.History[1].Settled {
		t.Fatalf("stored history %+v; want the settled turn last", back.History)
	}
}

// TestRecomputeStartsFromTheStoredInitialLayout embeds a map, then continues
// from it (embed --init prior.csv --session S): the session's history is a
// warm run from the prior layout, which the inputs alone do not give, so the
// recomputation must start from the stored initial layout to reproduce the
// map.
func TestRecomputeStartsFromTheStoredInitialLayout(t *testing.T) {
	dir := smallAtlas(t)
	prior := filepath.Join(t.TempDir(), "prior.csv")
	run(t, append([]string{"embed", "--in", dir, "--out", prior, "--iterations", "150", "--attraction", "1", "--seed", "7"}, prepFlags...)...)
	path := filepath.Join(t.TempDir(), "continued"+session.Extension)
	run(t, append([]string{"embed", "--in", dir, "--init", prior, "--session", path, "--iterations", "120", "--attraction", "4"}, prepFlags...)...)
	s := recomputeEqualsStored(t, path)
	if len(s.History) != 1 || s.History[0].Kind != string(live.Warm) {
		t.Fatalf("history %+v, want one warm run", s.History)
	}
	// The stored initial layout is the prior map, not the preparation's.
	p, _, err := restore.Prepare(context.Background(), s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if reflect.DeepEqual(p.Init, s.Initial) {
		t.Fatal("the stored initial layout is the preparation's; the test does not test the prior")
	}

	// Spectral end from the prior: a glide from the prior layout.
	path = filepath.Join(t.TempDir(), "spectral"+session.Extension)
	run(t, append([]string{"embed", "--in", dir, "--init", prior, "--session", path, "--attraction", "inf"}, prepFlags...)...)
	recomputeEqualsStored(t, path)
}

// TestRecomputeWithATail embeds with a tail other than t-SNE's (embed
// --tail 0.5 --session S): the session stores the tail with the run, and
// recomputing it from the inputs gives the stored layout bit for bit.
func TestRecomputeWithATail(t *testing.T) {
	dir := smallAtlas(t)
	path := filepath.Join(t.TempDir(), "tail"+session.Extension)
	run(t, append([]string{"embed", "--in", dir, "--session", path, "--iterations", "200", "--tail", "0.5"}, prepFlags...)...)
	s := recomputeEqualsStored(t, path)
	if s.Tail != 0.5 || len(s.History) != 1 || s.History[0].Tail != 0.5 {
		t.Fatalf("session tail %v, history %+v; want 0.5 in both", s.Tail, s.History)
	}
}

// TestCaptureRoundTrip captures a map made of non-default values, writes and
// reads the session, and gets every value back through the conversions.
func TestCaptureRoundTrip(t *testing.T) {
	set := pipeline.Default()
	set.Prep.QC.MinGenes, set.Prep.QC.MinCells, set.Prep.QC.MaxMitoFraction = 50, 2, 0.2
	set.Prep.Genes, set.Prep.PCA.Components, set.Prep.PCA.Standardize = 700, 12, true
	set.Perplexity, set.Neighbors, set.Metric, set.Method = 12, 40, neighbors.Cosine, neighbors.ApproximateSearch
	set.Uniform, set.Init, set.Seed, set.Threads = true, pipeline.InitSpectral, 99, 3
	cols := []atlas.Column{
		{Name: "day", Kind: atlas.Categorical, Levels: []string{"d1", "d2"}, Codes: []int32{0, 1, -1}},
		{Name: "score", Kind: atlas.Continuous, Values: []float64{1, math.NaN(), -2}},
	}
	p := &pipeline.Prepared{Settings: set, CellIDs: []string{"a", "b", "c"}, Annotations: cols}
	hist := []live.Step{
		{Kind: live.Fresh, Attraction: 1, Iterations: 750, Done: 750, Setting: 30},
		{Kind: live.Warm, Attraction: 6, Iterations: 500, Done: 321, Setting: 12, Compact: true, Settled: true},
		{Kind: live.Spectral, Attraction: math.Inf(1), Iterations: 15, Done: 15, Setting: 12},
	}
	layout := []float32{1, 2, 3, 4, 5, 6}
	initial := []float32{-1, -2, -3, -4, -5, -6}
	for _, origin := range []restore.Origin{
		{Path: "relative/atlas", Inputs: []session.Input{{Path: "/x/counts.mtx", Size: 3, SHA256: "00"}}},
		{Example: &sampledata.Options{Cells: 500, Genes: 200, Seed: 4}},
	} {
		s := restore.Capture(restore.Map{Prepared: p, Origin: origin, Initial: initial, Layout: layout, Attraction: math.Inf(1), History: hist})
		back := writeAndRead(t, s)
		got, err := restore.Pipeline(back.Settings)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(got, set) {
			t.Errorf("settings\n got %+v\nwant %+v", got, set)
		}
		if h := restore.Steps(back); !reflect.DeepEqual(h, hist) {
			t.Errorf("history %+v, want %+v", h, hist)
		}
		a := restore.Annotations(back)
		if len(a) != 2 || !reflect.DeepEqual(a[0], cols[0]) || a[1].Name != "score" || a[1].Kind != atlas.Continuous ||
			a[1].Values[0] != 1 || !math.IsNaN(a[1].Values[1]) {
			t.Errorf("columns %+v", a)
		}
		if !reflect.DeepEqual(back.Initial, initial) || !reflect.DeepEqual(back.Layout, layout) || !math.IsInf(float64(back.Attraction), 1) {
			t.Errorf("layouts or dial differ: %+v", back)
		}
		switch {
		case origin.Example != nil:
			if back.Example == nil || *back.Example != (session.Example{Cells: 500, Genes: 200, Seed: 4}) || back.OpenedPath != "" {
				t.Errorf("example origin stored as %+v, %q", back.Example, back.OpenedPath)
			}
		default:
			if !filepath.IsAbs(back.OpenedPath) || filepath.Base(back.OpenedPath) != "atlas" || !reflect.DeepEqual(back.Inputs, origin.Inputs) {
				t.Errorf("path origin stored as %q, %+v", back.OpenedPath, back.Inputs)
			}
		}
	}
	if _, err := restore.Pipeline(session.Settings{Metric: "manhattan", Method: "auto"}); err == nil {
		t.Error("an unknown metric was accepted")
	}
}
