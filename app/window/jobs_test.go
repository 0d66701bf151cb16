package window

import (
	"path/filepath"
	"runtime"
	"runtime/pprof"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2/test"

	"lodestone/app/live"
	"lodestone/app/session"
	"lodestone/sampledata"
)

// viewMark is what an atlas view shows, to compare before and after its
// jobs ended.
type viewMark struct {
	layout   []float32
	runs     int
	running  bool
	scores   mapScores
	ready    bool
	note     string
	markers  int
	sweeps   int
	info     string
	columns  int
	perplex  string
	painted  string
	groupsOn int
	errors   int // errors shown in dialogs
}

func markView(v *atlasView) viewMark {
	return viewMark{layout: v.st.layout, runs: v.st.run.Runs, running: v.st.run.Running, scores: v.st.scores,
		ready: v.st.ready, note: v.status.note.Text, markers: len(v.markers.results), sweeps: len(v.sweep.grid.Objects),
		info: v.sweep.info.Text + "|" + v.markers.info.Text, columns: len(v.st.prep.Annotations),
		perplex: v.run.perplexity.Text, painted: v.st.paint.Name, groupsOn: len(v.st.groups), errors: len(v.u.errorsShown)}
}

func (a viewMark) same(b viewMark) bool {
	return sameLayout(a.layout, b.layout) && a.runs == b.runs && a.running == b.running &&
		sameLayout(a.scores.layout, b.scores.layout) && a.scores.text == b.scores.text && a.ready == b.ready &&
		a.note == b.note && a.markers == b.markers && a.sweeps == b.sweeps && a.info == b.info &&
		a.columns == b.columns && a.perplex == b.perplex && a.painted == b.painted && a.groupsOn == b.groupsOn && a.errors == b.errors
}

// TestClosingTheViewEndsEveryJob starts each kind of background job of an
// atlas view and closes the view while it runs: afterwards no goroutine is
// left (the count returns to what it was before the view opened), and the
// closed view shows what it showed when it closed. Run it with -race: the
// jobs, the optimiser and the UI goroutine cross here.
func TestClosingTheViewEndsEveryJob(t *testing.T) {
	stored := savedSession(t)
	jobs := []struct {
		name  string
		start func(t *testing.T, u *ui, v *atlasView, ch *fakeChooser)
	}{
		{"a turn of the dial", func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
			onUI(func() { v.run.turnTo(20) })
		}},
		{"a sweep", func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
			onUI(func() { v.sweep.values.SetText("1, 2, 4, inf"); test.Tap(v.sweep.run) })
		}},
		{"ranking markers", func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
			onUI(func() { v.markers.source.SetSelected(sampledata.ColumnState); test.Tap(v.markers.run) })
		}},
		{"scoring a map", func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
			onUI(func() {
				r := v.run.snapshot()
				v.run.show(live.Compact(r.layout), r.history, r.attraction)
				if v.scorer.pending == nil {
					t.Error("the new map is not being scored")
				}
			})
		}},
		{"Leiden clusters", func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
			onUI(func() { v.paint.clusterCells(1) })
		}},
		{"new affinities", func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
			onUI(func() { v.run.perplexity.SetText("12"); v.run.applyPerplexity() })
		}},
		{"painting by a gene", func(_ *testing.T, _ *ui, v *atlasView, _ *fakeChooser) {
			onUI(func() { v.paint.paintByGene(5) })
		}},
		{"exporting a figure", func(t *testing.T, _ *ui, v *atlasView, ch *fakeChooser) {
			ch.answer(filepath.Join(t.TempDir(), "figure.png"))
			onUI(func() { v.export.saveFigureAs(figureChoices{format: "png", preset: "column1", dpi: 150, key: true}) })
		}},
		{"saving the session", func(t *testing.T, _ *ui, v *atlasView, ch *fakeChooser) {
			ch.answer(filepath.Join(t.TempDir(), "s"+".lodestone"))
			onUI(v.askSaveSession)
		}},
		{"preparing the atlas behind a session", func(t *testing.T, u *ui, _ *atlasView, _ *fakeChooser) {
			s, err := session.Read(stored)
			if err != nil {
				t.Fatal(err)
			}
			onUI(func() { u.showSession(stored, s) })
		}},
	}
	for _, job := range jobs {
		t.Run(job.name, func(t *testing.T) {
			ch := chooserAnswering()
			u := newTestUI(t, ch)
			time.Sleep(50 * time.Millisecond)
			before := runtime.NumGoroutine()
			v := openFixture(t, u)
			job.start(t, u, v, ch)
			var mark viewMark
			onUI(func() {
				v = u.atlas // the session's view, when the job opened one
				mark = markView(v)
				u.closeAtlas()
			})
			v.jobs.wait()
			v.run.engine.Wait()
			time.Sleep(100 * time.Millisecond) // deliveries queued before the end
			onUI(func() {
				if now := markView(v); !now.same(mark) {
					t.Errorf("the closed view changed:\nat close %+v\nnow      %+v", mark, now)
				}
			})
			deadline := time.Now().Add(5 * time.Second)
			for runtime.NumGoroutine() > before && time.Now().Before(deadline) {
				time.Sleep(20 * time.Millisecond)
			}
			if after := runtime.NumGoroutine(); after > before {
				var b strings.Builder
				pprof.Lookup("goroutine").WriteTo(&b, 1)
				t.Errorf("%d goroutines before the view opened, %d after it closed:\n%s", before, after, b.String())
			}
		})
	}
}

// TestClosingTheWindowStopsALoading closes the window while the example
// atlas loads: the loading stops, no atlas view opens afterwards, and no
// goroutine is left.
func TestClosingTheWindowStopsALoading(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	time.Sleep(50 * time.Millisecond)
	before := runtime.NumGoroutine()
	onUI(func() {
		u.openExample()
		if u.loadCancel == nil {
			t.Fatal("the example atlas is not loading")
		}
		u.closeView()
	})
	waitFor(t, "the loading to stop", 30*time.Second, func() bool { return u.loadCancel == nil })
	time.Sleep(100 * time.Millisecond)
	onUI(func() {
		if u.atlas != nil {
			t.Error("an atlas view opened after the window closed")
		}
	})
	deadline := time.Now().Add(5 * time.Second)
	for runtime.NumGoroutine() > before && time.Now().Before(deadline) {
		time.Sleep(20 * time.Millisecond)
	}
	if after := runtime.NumGoroutine(); after > before {
		t.Errorf("%d goroutines before the loading, %d after the window closed", before, after)
	}
}
