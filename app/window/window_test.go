package window

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2"

	"lodestone/app/cli"
	"lodestone/app/live"
	"lodestone/app/session"
)

// TestBadFileShowsErrorAndKeepsTheWindow opens a broken Matrix Market
// file: an error dialog names the file and the line, and the start view
// stays usable.
func TestBadFileShowsErrorAndKeepsTheWindow(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "broken.mtx")
	os.WriteFile(bad, []byte("%%MatrixMarket matrix coordinate integer general\n3 4 2\n1 1 5\n9 1 2\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "cells.txt"), []byte("c1\nc2\nc3\nc4\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "genes.txt"), []byte("g1\tA\ng2\tB\ng3\tC\n"), 0o644)
	u := newTestUI(t, chooserAnswering(bad))
	var start fyne.CanvasObject
	onUI(func() {
		start = u.win.Content()
		u.askOpenFile()
	})
	waitFor(t, "the error dialog", 20*time.Second, func() bool { return topDialog(u) != nil })
	onUI(func() {
		if u.win.Content() != start {
			t.Error("the start view was replaced after a failed open")
		}
		text := overlayText(topDialog(u))
		if !strings.Contains(text, "broken.mtx") || !strings.Contains(text, ":4") {
			t.Errorf("error dialog says %q; want the file and line 4", text)
		}
		if u.atlas != nil {
			t.Error("an atlas view exists after a failed open")
		}
	})
}

// TestOpenFolderTurnSaveAndReopen opens a small example folder through the
// chooser, waits for the first map, turns the dial (the status line's
// scores of the new map are those of `lodestone score`), saves a session,
// and reopens it: the stored map comes back as it was.
func TestOpenFolderTurnSaveAndReopen(t *testing.T) {
	if testing.Short() {
		t.Skip("prepares and embeds an atlas of 1,000 cells")
	}
	dir := t.TempDir()
	var out, errs bytes.Buffer
	if code := cli.Run([]string{"example", "--out", dir, "--cells", "1000", "--genes", "1500", "--quiet"}, &out, &errs); code != 0 {
		t.Fatalf("example: %s", errs.String())
	}
	path := filepath.Join(t.TempDir(), "saved"+session.Extension)
	ch := chooserAnswering(dir)
	u := newTestUI(t, ch)
	onUI(u.askOpenFolder)
	waitFor(t, "the atlas view", 120*time.Second, func() bool { return u.atlas != nil })
	var v *atlasView
	onUI(func() { v = u.atlas })
	waitForRun(t, v, 1)
	onUI(func() {
		if n := v.st.cells(); n < 900 {
			t.Errorf("%d cells on the map of 1,000", n)
		}
		if it := v.st.run.Iteration; it != live.FreshIterations {
			t.Errorf("the first run ended after %d iterations, want %d", it, live.FreshIterations)
		}
		v.run.dial.TypedKey(&fyne.KeyEvent{Name: fyne.KeyRight})
	})
	waitForRun(t, v, 2)
	scoresAsTheCommandLine(t, v, dir)
	ch.answer(path)
	onUI(v.askSaveSession)
	waitFor(t, "the saved session", 30*time.Second, func() bool { return strings.HasPrefix(v.st.note, "saved ") })
	s, err := session.Read(path)
	if err != nil {
		t.Fatal(err)
	}
	shown, _ := v.run.engine.Latest()
	if len(s.History) != 2 || s.History[1].Kind != "warm" || len(s.Layout) != len(shown) || s.Layout[0] != shown[0] {
		t.Fatalf("saved history %+v", s.History)
	}
	var w *atlasView
	onUI(func() {
		u.showSession(path, s)
		w = u.atlas
	})
	if w == v {
		t.Fatal("the session did not open a new view")
	}
	onUI(func() {
		l, _ := w.run.engine.Latest()
		if len(l) != len(shown) || l[len(l)-1] != shown[len(shown)-1] {
			t.Error("the reopened map differs from the saved one")
		}
		if w.run.dial.Value != v.run.dial.Value {
			t.Errorf("dial %v, saved %v", w.run.dial.Value, v.run.dial.Value)
		}
	})
	waitFor(t, "the atlas behind the session", 120*time.Second, func() bool { return w.st.ready })
}

// scoresAsTheCommandLine waits for the scores of the map on screen and
// checks that `lodestone score` gives the status line's numbers for the
// same atlas and layout (the same sample, seed and neighbourhood).
func scoresAsTheCommandLine(t *testing.T, v *atlasView, atlasDir string) {
	t.Helper()
	waitFor(t, "the map's scores", 60*time.Second, func() bool { return v.st.scoresCurrent() })
	layoutPath := filepath.Join(t.TempDir(), "layout.csv")
	var shown string
	onUI(func() {
		shown = v.status.scores.Text
		var b strings.Builder
		b.WriteString("id,x,y\n")
		for i, id := range v.st.prep.CellIDs {
			x, y := v.st.layout[2*i], v.st.layout[2*i+1]
			fmt.Fprintf(&b, "%s,%s,%s\n", id, strconv.FormatFloat(float64(x), 'g', -1, 32), strconv.FormatFloat(float64(y), 'g', -1, 32))
		}
		if err := os.WriteFile(layoutPath, []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	})
	var out, errs bytes.Buffer
	if code := cli.Run([]string{"score", "--in", atlasDir, "--layout", layoutPath}, &out, &errs); code != 0 {
		t.Fatalf("score: %s", errs.String())
	}
	got := map[string]float64{}
	for _, line := range strings.Split(strings.TrimSpace(out.String()), "\n") {
		var name string
		var x float64
		if _, err := fmt.Sscanf(line, "%s %g", &name, &x); err != nil {
			t.Fatalf("score printed %q: %v", line, err)
		}
		got[name] = x
	}
	want := fmt.Sprintf("fidelity: kept neighbours %.2f · trustworthiness %.3f · dCor %.2f",
		got["knn_preservation"], got["trustworthiness"], got["distance_correlation"])
	if shown != want {
		t.Errorf("the status line shows %q; lodestone score gives %q", shown, want)
	}
}
