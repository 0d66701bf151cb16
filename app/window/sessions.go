package window

import (
	"context"
	"fmt"
	"image/color"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/dialog"

	"lodestone/app/live"
	"lodestone/app/paint"
	"lodestone/app/restore"
	"lodestone/app/session"
	"lodestone/canvas/raster"
	"lodestone/compute/atlas"
	"lodestone/compute/pipeline"
	"lodestone/sampledata"
)

// isSession reports whether path names a session file.
func isSession(path string) bool {
	return strings.EqualFold(filepath.Ext(path), session.Extension)
}

// toSession captures the view's state.
func (v *atlasView) toSession() *session.Session {
	run := v.run.snapshot()
	origin := restore.Origin{Path: v.st.src.path, Inputs: v.inputs}
	if v.st.src.example {
		opts := v.exampleOpts
		origin = restore.Origin{Example: &opts}
	}
	s := restore.Capture(restore.Map{Prepared: v.st.prep, Origin: origin, Initial: run.initial, Layout: run.layout,
		Attraction: run.attraction, Tail: run.tail, History: run.history})
	for _, g := range v.st.groups {
		s.Groups = append(s.Groups, session.Group{Name: g.Name, Colour: session.Colour{R: g.Colour.R, G: g.Colour.G, B: g.Colour.B},
			Members: session.Members(g.Cells)})
	}
	if pt := v.st.paint; pt != nil {
		s.Paint = session.Paint{Source: []string{"plain", "column", "gene", "groups"}[pt.Source], Name: pt.Name, Hidden: v.paint.hidden}
	}
	m := v.mapP.mapView
	view := m.View()
	s.View = session.View{CenterX: view.CenterX, CenterY: view.CenterY, Scale: view.Scale, Width: view.Width, Height: view.Height,
		Pinned: m.Pinned()}
	s.PointSize, s.Opacity = m.PointStyle()
	return s
}

// hashInputs hashes the files an atlas was read from, in the background.
func (v *atlasView) hashInputs() {
	sources := v.st.data.Sources
	v.jobs.run(func(context.Context) {
		ins, err := restore.Hash(sources)
		if err != nil {
			return
		}
		v.jobs.do(func() { v.inputs = ins })
	})
}

// askSaveSession asks where to save the session, then saves it.
func (v *atlasView) askSaveSession() {
	if !v.st.ready {
		v.u.showError("Not yet", fmt.Errorf("the session can be saved once the atlas has been prepared"))
		return
	}
	v.files.ask("Save the session", stem(v.st.src)+session.Extension, func(path string) { v.saveSession(path) })
}

// saveSession writes the session in the background and tells the outcome.
func (v *atlasView) saveSession(path string) {
	s := v.toSession()
	v.st.tell("saving " + filepath.Base(path) + "…")
	v.jobs.run(func(context.Context) {
		err := session.Write(path, s)
		v.jobs.do(func() {
			if err != nil {
				v.u.showError("Could not save the session", err)
				return
			}
			v.st.tell("saved " + path)
			v.u.remember(path)
		})
	})
}

// openSession reads a session file and shows its map at once; the atlas is
// prepared again in the background so that the dial, genes and markers
// work.
func (u *ui) openSession(path string) {
	go func() {
		s, err := session.Read(path)
		fyne.Do(func() {
			if err != nil {
				u.showError("Could not open the session", err)
				return
			}
			u.remember(path)
			u.showSession(path, s)
		})
	}()
}

// showSession shows a session's stored map and, unless its inputs changed
// (then the user chooses), prepares the atlas behind it.
func (u *ui) showSession(path string, s *session.Session) {
	src := source{path: s.OpenedPath, example: s.Example != nil}
	set, err := restore.Pipeline(s.Settings)
	if err != nil {
		u.showError("Could not open the session", err)
		return
	}
	partial := &pipeline.Prepared{Settings: set, CellIDs: s.CellIDs, Annotations: restore.Annotations(s), Init: s.Initial}
	d := &atlas.Dataset{Name: filepath.Base(path), CellIDs: s.CellIDs}
	if u.atlas != nil {
		u.atlas.close()
	}
	v := newAtlasView(u, src, d, partial)
	v.sessionPath = path
	if s.Example != nil {
		v.exampleOpts = sampledata.Options{Cells: s.Example.Cells, Genes: s.Example.Genes, Seed: s.Example.Seed}
	}
	v.inputs = s.Inputs
	u.atlas = v
	u.atlasChanged()
	u.win.SetTitle("Lodestone — " + filepath.Base(path))
	u.win.SetContent(v.content())
	v.restore(s)
	v.open()

	changed := session.Changed(s)
	if len(changed) == 0 {
		v.prepareBehind(s)
		return
	}
	msg := fmt.Sprintf("The inputs of this session changed since it was saved:\n\n%s\n\n"+
		"The stored map is shown as it was. Prepare the atlas from the inputs as they are now "+
		"(the dial and genes then work, but the map may not match them), or keep only the stored map?",
		strings.Join(changed, "\n"))
	dialog.ShowCustomConfirm("The inputs changed", "Prepare from the inputs", "Keep the stored map", newWrapLabel(msg), func(prepare bool) {
		if prepare {
			v.prepareBehind(s)
		} else {
			v.st.tell("stored map only: the inputs changed")
		}
	}, u.win)
}

// restore applies a session's layout, history, dial, groups, paint and view.
func (v *atlasView) restore(s *session.Session) {
	v.run.show(s.Layout, restore.Steps(s), float64(s.Attraction))
	if s.Tail != 0 {
		v.run.setTail(s.Tail) // the control may differ from the last run's (moved at ∞)
	}
	n := len(s.CellIDs)
	var groups []*paint.Group
	for _, g := range s.Groups {
		groups = append(groups, &paint.Group{Name: g.Name, Colour: color.NRGBA{R: g.Colour.R, G: g.Colour.G, B: g.Colour.B, A: 0xff},
			Cells: g.Mask(n), Count: len(g.Members)})
	}
	v.st.setGroups(groups)
	m := v.mapP.mapView
	if s.PointSize > 0 {
		m.SetPointStyle(s.PointSize, s.Opacity)
		v.mapP.styled = true
		v.mapP.dot.SetValue(s.PointSize)
		v.mapP.ink.SetValue(s.Opacity)
	}
	v.paint.restore(s.Paint.Source, s.Paint.Name, s.Paint.Hidden)
	if s.View.Pinned && s.View.Scale > 0 {
		m.SetView(raster.View{CenterX: s.View.CenterX, CenterY: s.View.CenterY, Scale: s.View.Scale,
			Width: s.View.Width, Height: s.View.Height})
	}
}

// prepareBehind prepares the atlas of a session in the background and
// attaches it to the view when done.
func (v *atlasView) prepareBehind(s *session.Session) {
	v.st.tell("preparing the atlas behind the stored map…")
	relay := newProgressRelay(func(stage string, done, total int64) {
		if !v.st.ready && !v.jobs.closed() {
			v.st.tell(fmt.Sprintf("preparing the atlas behind the stored map: %s %.0f%%", stageLabel(stage), 100*float64(done)/math.Max(1, float64(total))))
		}
	})
	v.jobs.run(func(ctx context.Context) {
		p, d, err := restore.Prepare(ctx, s, relay.report)
		var opt *live.TSNE
		setting := 0.0
		if err == nil {
			opt, setting, err = restore.NewReplayer(p).Current(ctx, restore.Steps(s))
		}
		v.jobs.do(func() {
			if err != nil {
				v.st.tell("stored map only")
				v.u.showError("Could not prepare the atlas behind the session", err)
				return
			}
			v.st.attach(d, p)
			v.run.attach(opt, setting)
			v.st.tell("ready")
		})
	})
}

func stageLabel(stage string) string {
	for _, st := range pipeline.Stages {
		if st.Name == stage {
			return st.Label
		}
	}
	if stage == "read" {
		return "reading"
	}
	return stage
}

// recompute replays the history of the map from the prepared atlas and
// compares the result with the map on screen.
func (v *atlasView) recompute() {
	if !v.st.ready {
		v.u.showError("Not yet", fmt.Errorf("the atlas behind the map is still being prepared"))
		return
	}
	v.run.engine.Stop()
	run := v.run.snapshot()
	p := v.st.prep
	v.st.tell("recomputing the map from its history…")
	v.jobs.run(func(ctx context.Context) {
		start := time.Now()
		layout, err := restore.NewReplayer(p).Replay(ctx, run.initial, run.history)
		v.jobs.do(func() {
			if err != nil {
				v.u.showError("Could not recompute the map", err)
				return
			}
			msg := recomputeMessage(len(run.history), time.Since(start), maxAbsDiff(run.layout, layout))
			v.run.show(layout, run.history, run.attraction)
			v.st.tell("recomputed the map")
			dialog.ShowCustom("Recomputed", "Close", newWrapLabel(msg), v.u.win)
		})
	})
}

// recomputeMessage says how a recomputed map compares with the one shown.
func recomputeMessage(runs int, took time.Duration, diff float64) string {
	msg := fmt.Sprintf("The map was recomputed from the inputs' preparation and its %d runs in %.1f s. ", runs, took.Seconds())
	if diff == 0 {
		return msg + "It is identical, bit for bit, to the map that was shown."
	}
	return msg + fmt.Sprintf("It differs from the map that was shown by at most %.3g (in map units); "+
		"the seed, the thread count or the platform differ from those that made it.", diff)
}

func maxAbsDiff(a, b []float32) float64 {
	if len(a) != len(b) {
		return math.Inf(1)
	}
	m := 0.0
	for i := range a {
		m = math.Max(m, math.Abs(float64(a[i])-float64(b[i])))
	}
	return m
}

// The autosave keeps the open map in the user's configuration folder every
// few minutes and on quit. A marker file says a window is running; if it is
// still there at the next start, the last run did not end cleanly and the
// start view offers to recover the autosaved map.
const autosaveEvery = 2 * time.Minute

func autosaveDir() string {
	dir, err := os.UserConfigDir()
	if err != nil {
		dir = os.TempDir()
	}
	return filepath.Join(dir, "lodestone")
}

func autosavePath() string  { return filepath.Join(autosaveDir(), "autosave"+session.Extension) }
func runningMarker() string { return filepath.Join(autosaveDir(), "running") }

// markRunning notes that a window is open and reports whether the last one
// ended without removing its mark while leaving an autosave.
func markRunning() (crashed bool) {
	os.MkdirAll(autosaveDir(), 0o755)
	if _, err := os.Stat(runningMarker()); err == nil {
		if _, err := os.Stat(autosavePath()); err == nil {
			crashed = true
		}
	}
	os.WriteFile(runningMarker(), []byte(strconv.Itoa(os.Getpid())), 0o644)
	return crashed
}

func clearRunning() { os.Remove(runningMarker()) }

// autosave writes the open map to the autosave file (synchronously when
// wait is set, as on quit).
func (v *atlasView) autosave(wait bool) {
	if !v.st.ready {
		return
	}
	s := v.toSession()
	if wait {
		if err := session.Write(autosavePath(), s); err != nil {
			fyne.LogError("autosave", err)
		}
		return
	}
	v.jobs.run(func(context.Context) {
		if err := session.Write(autosavePath(), s); err != nil {
			fyne.LogError("autosave", err)
		}
	})
}

// offerRecovery asks whether to reopen the map autosaved before a crash.
func (u *ui) offerRecovery() {
	path := autosavePath()
	dialog.ShowConfirm("Recover the last map?",
		"Lodestone did not close normally last time. Reopen the map it saved automatically?",
		func(ok bool) {
			if ok {
				u.openSession(path)
			}
		}, u.win)
}
