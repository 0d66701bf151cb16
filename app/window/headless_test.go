package window

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2/test"

	"lodestone/app/cli"
	"lodestone/app/session"
	"lodestone/sampledata"
)

// TestSweepTabMatchesTheSweepCommand runs the Sweep tab on the tests' atlas
// (from the first map, labels of the states) and the sweep command on the
// same atlas written as files (square: --matrix-rows says its rows are the
// cells), with the same settings and thread count:
// every score of every map is the same number, and every map the same
// layout, bit for bit.
func TestSweepTabMatchesTheSweepCommand(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	onUI(func() {
		v.sweep.values.SetText("4, 1.5, inf")
		v.sweep.label.SetSelected(sampledata.ColumnState)
		v.run.iterations.SetText("80")
		test.Tap(v.sweep.run)
	})
	waitFor(t, "the sweep", 120*time.Second, func() bool { return !v.sweep.running() && len(v.sweep.results) == 3 })
	var results []sweepResult
	onUI(func() { results = append(results, v.sweep.results...) })

	dir, out := t.TempDir(), t.TempDir()
	var stdout, stderr bytes.Buffer
	o := fixtureOptions
	s := fixtureSettings()
	if code := cli.Run([]string{"example", "--out", dir, "--cells", strconv.Itoa(o.Cells), "--genes", strconv.Itoa(o.Genes),
		"--seed", strconv.FormatInt(o.Seed, 10), "--quiet"}, &stdout, &stderr); code != 0 {
		t.Fatalf("example: %s", stderr.String())
	}
	args := []string{"sweep", "--in", dir, "--values", "4,1.5,inf", "--iterations", "80", "--label", sampledata.ColumnState,
		"--matrix-rows", "cells", "--pcs", strconv.Itoa(s.Prep.PCA.Components), "--threads", strconv.Itoa(s.Threads), "--out", out, "--quiet"}
	if code := cli.Run(args, &stdout, &stderr); code != 0 {
		t.Fatalf("sweep: %s", stderr.String())
	}
	sameSweep(t, results, out, "1")
}

// TestSweepTabFromASessionMatchesTheSweepCommand turns the dial to ∞, moves
// the grain to 2 there (which runs nothing) and saves the session; the Sweep
// tab's sweep of the dial then runs at grain 2, and so does the sweep
// command started from the saved session without --tail: the same scores
// and maps, bit for bit.
func TestSweepTabFromASessionMatchesTheSweepCommand(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	onUI(func() { v.run.turnTo(math.Inf(1)) })
	waitForRun(t, v, 2)
	path := filepath.Join(t.TempDir(), "spectral"+session.Extension)
	onUI(func() {
		v.run.grain.slider.SetValue(math.Log10(2)) // kept, no run at ∞
		v.saveSession(path)
	})
	waitFor(t, "the saved session", 30*time.Second, func() bool { _, err := os.Stat(path); return err == nil })
	onUI(func() {
		v.sweep.values.SetText("4, 1.5")
		v.sweep.label.SetSelected(sampledata.ColumnState)
		v.run.iterations.SetText("80")
		test.Tap(v.sweep.run)
	})
	waitFor(t, "the sweep", 120*time.Second, func() bool { return !v.sweep.running() && len(v.sweep.results) == 2 })
	var results []sweepResult
	onUI(func() { results = append(results, v.sweep.results...) })

	out := t.TempDir()
	var stdout, stderr bytes.Buffer
	args := []string{"sweep", "--session", path, "--values", "4,1.5", "--iterations", "80", "--label", sampledata.ColumnState, "--out", out, "--quiet"}
	if code := cli.Run(args, &stdout, &stderr); code != 0 {
		t.Fatalf("sweep: %s", stderr.String())
	}
	sameSweep(t, results, out, "2")
}

// sameSweep checks that the sweep command's output in out holds the Sweep
// tab's results: a row of scores.csv per map with the tail tail and the same
// scores, and each map's layout, bit for bit.
func sameSweep(t *testing.T, results []sweepResult, out, tail string) {
	t.Helper()
	scores, err := os.ReadFile(filepath.Join(out, "scores.csv"))
	if err != nil {
		t.Fatal(err)
	}
	rows := strings.Split(strings.TrimSpace(string(scores)), "\n")[1:]
	if len(rows) != len(results) {
		t.Fatalf("the command wrote %d maps' scores, the tab shows %d", len(rows), len(results))
	}
	for k, r := range results {
		f := strings.Split(rows[k], ",")
		num := func(s string) float64 {
			x, err := strconv.ParseFloat(s, 64)
			if err != nil {
				t.Fatalf("scores.csv row %q: %v", rows[k], err)
			}
			return x
		}
		want := []float64{r.scores.KNN, r.scores.Trust, r.scores.Labels, r.scores.DCor}
		got := []float64{num(f[2]), num(f[3]), num(f[4]), num(f[5])}
		if f[1] != tail {
			t.Errorf("map %d: tail %s, the tab's maps are at %s", k, f[1], tail)
		}
		for i := range want {
			if got[i] != want[i] || math.IsNaN(want[i]) {
				t.Errorf("map %d (attraction %s): the command's scores %v, the tab's %v", k, f[0], got, want)
				break
			}
		}
		layout, err := os.ReadFile(filepath.Join(out, "attraction-"+f[0]+".csv"))
		if err != nil {
			t.Fatal(err)
		}
		lines := strings.Split(strings.TrimSpace(string(layout)), "\n")[1:]
		if len(lines) != len(r.Layout)/2 {
			t.Fatalf("map %d: %d rows for %d cells", k, len(lines), len(r.Layout)/2)
		}
		for i, line := range lines {
			c := strings.Split(line, ",")
			x, _ := strconv.ParseFloat(c[1], 32)
			y, _ := strconv.ParseFloat(c[2], 32)
			if float32(x) != r.Layout[2*i] || float32(y) != r.Layout[2*i+1] {
				t.Fatalf("map %d, cell %d: the command's (%v, %v), the tab's (%v, %v)", k, i, x, y, r.Layout[2*i], r.Layout[2*i+1])
			}
		}
	}
}

// TestStatusLineMatchesTheScoreCommand saves the session of the first map
// and scores it with the score command: the status line's kept neighbours,
// trustworthiness and dCor are the command's numbers, rounded as the line
// rounds them.
func TestStatusLineMatchesTheScoreCommand(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	path := filepath.Join(t.TempDir(), "first"+session.Extension)
	var line string
	onUI(func() {
		line = v.st.scores.text
		v.saveSession(path)
	})
	waitFor(t, "the saved session", 30*time.Second, func() bool { _, err := os.Stat(path); return err == nil })
	var stdout, stderr bytes.Buffer
	if code := cli.Run([]string{"score", "--session", path}, &stdout, &stderr); code != 0 {
		t.Fatalf("score: %s", stderr.String())
	}
	got := map[string]float64{}
	for _, l := range strings.Split(strings.TrimSpace(stdout.String()), "\n") {
		name, value, _ := strings.Cut(l, " ")
		got[name], _ = strconv.ParseFloat(value, 64)
	}
	want := fmt.Sprintf("kept neighbours %.3f · trustworthiness %.3f · dCor %.2f", got["knn_preservation"], got["trustworthiness"], got["distance_correlation"])
	if !strings.Contains(line, want) {
		t.Fatalf("the status line says %q; score gives %q", line, want)
	}
}

// TestMarkersTabMatchesTheMarkersCommand ranks markers in the Markers tab
// and saves the table, then runs the markers command on the same cells: a
// day against another day, the command reading the atlas's files; a group
// made in the window against all other cells, the command reading the saved
// session. Both tables are the same bytes.
func TestMarkersTabMatchesTheMarkersCommand(t *testing.T) {
	ch := chooserAnswering()
	u := newTestUI(t, ch)
	v := openFixture(t, u)
	tmp := t.TempDir()
	saveTab := func(name string) []byte {
		t.Helper()
		path := filepath.Join(tmp, name)
		ch.answer(path)
		onUI(func() { test.Tap(v.markers.saveBtn) })
		return waitForFile(t, path)
	}
	rank := func(source, which, against string) {
		t.Helper()
		onUI(func() {
			v.reveal(tabMarkers)
			v.markers.source.SetSelected(source)
			v.markers.which.SetSelected(which)
			v.markers.against.SetSelected(against)
			test.Tap(v.markers.run)
		})
		waitFor(t, "the markers", 60*time.Second, func() bool {
			return !v.markers.ranking && v.markers.compared == comparison{source, which, against}
		})
	}
	command := func(args ...string) []byte {
		t.Helper()
		out := filepath.Join(tmp, fmt.Sprintf("command-%d.csv", len(args)))
		var stdout, stderr bytes.Buffer
		if code := cli.Run(append(append([]string{"markers"}, args...), "--out", out, "--quiet"), &stdout, &stderr); code != 0 {
			t.Fatalf("markers %q: %s", args, stderr.String())
		}
		b, err := os.ReadFile(out)
		if err != nil {
			t.Fatal(err)
		}
		return b
	}

	// A day against another day, from the atlas's files.
	rank(sampledata.ColumnDay, "day 2", "day 4")
	onUI(func() {
		if c := v.markers.compared; c.against != "day 4" {
			t.Fatalf("the tab compared %q", c.label())
		}
	})
	tab := saveTab("tab-days.csv")
	dir := t.TempDir()
	var stdout, stderr bytes.Buffer
	o := fixtureOptions
	if code := cli.Run([]string{"example", "--out", dir, "--cells", strconv.Itoa(o.Cells), "--genes", strconv.Itoa(o.Genes),
		"--seed", strconv.FormatInt(o.Seed, 10), "--quiet"}, &stdout, &stderr); code != 0 {
		t.Fatalf("example: %s", stderr.String())
	}
	s := fixtureSettings()
	cmd := command("--in", dir, "--matrix-rows", "cells", "--threads", strconv.Itoa(s.Threads),
		"--by", sampledata.ColumnDay, "--group", "day 2", "--against", "day 4")
	if !bytes.Equal(tab, cmd) {
		t.Errorf("day 2 against day 4: the tab saved %d bytes, the command wrote %d bytes that differ", len(tab), len(cmd))
	}

	// A group made in the window against all other cells, from its session.
	onUI(func() {
		selectFirst(v, 80)
		test.Tap(v.mapP.makeGroup)
	})
	path := filepath.Join(tmp, "grouped"+session.Extension)
	onUI(func() { v.saveSession(path) })
	waitFor(t, "the saved session", 30*time.Second, func() bool { _, err := os.Stat(path); return err == nil })
	rank(groupsSource, "group 1", restChoice)
	onUI(func() {
		if c := v.markers.compared; c.against != restChoice {
			t.Fatalf("the tab compared %q", c.label())
		}
	})
	tab = saveTab("tab-group.csv")
	if cmd := command("--session", path, "--group", "group 1"); !bytes.Equal(tab, cmd) {
		t.Errorf("group 1 against all other cells: the tab saved %d bytes, the command wrote %d bytes that differ", len(tab), len(cmd))
	}
}
