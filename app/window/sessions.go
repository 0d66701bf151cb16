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
	layout, _ := v.engine.Latest()
	origin := restore.Origin{Path: v.src.path, Inputs: v.inputs}
	if v.src.example {
		opts := v.exampleOpts
		origin = restore.Origin{Example: &opts}
	}
	s := restore.Capture(restore.Map{Prepared: v.prep, Origin: origin, Initial: v.engine.Initial(), Layout: layout,
		Attraction: v.dial.Value, History: v.engine.History()})
	for _, g := range v.groups {
		s.Groups = append(s.Groups, session.Group{Name: g.Name, Colour: session.Colour{R: g.Colour.R, G: g.Colour.G, B: g.Colour.B},
			Members: session.Members(g.Cells)})
	}
	if v.painted != nil {
		s.Paint = session.Paint{Source: []string{"plain", "column", "gene", "groups"}[v.painted.Source], Name: v.painted.Name, Hidden: v.hidden}
	}
	view := v.mapView.View()
	s.View = session.View{CenterX: view.CenterX, CenterY: view.CenterY, Scale: view.Scale, Width: view.Width, Height: view.Height,
		Pinned: v.mapView.Pinned()}
	s.PointSize, s.Opacity = v.mapView.PointStyle()
	return s
}

// hashInputs hashes the files an atlas was read from, in the background.
func (v *atlasView) hashInputs() {
	sources := v.data.Sources
	go func() {
		ins, err := restore.Hash(sources)
		if err != nil {
			return
		}
		fyne.Do(func() { v.inputs = ins })
	}()
}

func (v *atlasView) askSaveSession() {
	name := strings.TrimSuffix(v.src.name(), filepath.Ext(v.src.name()))
	if v.src.example {
		name = "example"
	}
	go func() {
		path, err := v.u.chooser.SaveFile("Save the session", name+session.Extension, "Lodestone session", strings.TrimPrefix(session.Extension, "."))
		fyne.Do(func() {
			switch {
			case err == errChoiceCancelled:
			case err != nil:
				v.u.showError("Could not open the file dialog", err)
			default:
				if !strings.EqualFold(filepath.Ext(path), session.Extension) {
					path += session.Extension
				}
				v.saveSession(path, true)
			}
		})
	}()
}

// saveSession writes the session in the background; when tell is set the
// outcome is shown to the user.
func (v *atlasView) saveSession(path string, tell bool) {
	if !v.ready {
		if tell {
			v.u.showError("Not yet", fmt.Errorf("the session can be saved once the atlas has been prepared"))
		}
		return
	}
	s := v.toSession()
	go func() {
		err := session.Write(path, s)
		fyne.Do(func() {
			if err != nil {
				if tell {
					v.u.showError("Could not save the session", err)
				}
				return
			}
			if tell {
				v.note("saved " + path)
				v.u.remember(path)
			}
		})
	}()
}

// note shows a short message in the status line.
func (v *atlasView) note(s string) { v.stage.SetText(s) }

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
	u.win.SetTitle("Lodestone — " + filepath.Base(path))
	u.win.SetContent(v.content())
	v.restore(s)
	v.startTicker()

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
			v.note("stored map only: the inputs changed")
		}
	}, u.win)
}

// restore applies a session's layout, history, dial, groups, paint and view.
func (v *atlasView) restore(s *session.Session) {
	v.engine.SetLayout(s.Layout, restore.Steps(s))
	v.dial.SetValue(float64(s.Attraction))
	if n := len(s.History); n > 0 {
		v.perp = s.History[n-1].Setting
	}
	v.perplexity.SetText(strconv.FormatFloat(v.perp, 'g', 4, 64))
	n := len(s.CellIDs)
	v.groups = nil
	for _, g := range s.Groups {
		mask := g.Mask(n)
		v.groups = append(v.groups, &paint.Group{Name: g.Name, Colour: color.NRGBA{R: g.Colour.R, G: g.Colour.G, B: g.Colour.B, A: 0xff},
			Cells: mask, Count: len(g.Members)})
	}
	v.groupsList.Refresh()
	if s.PointSize > 0 {
		v.mapView.SetPointStyle(s.PointSize, s.Opacity)
	}
	v.showFrame()
	switch s.Paint.Source {
	case "column":
		v.paintSel.SetSelected(s.Paint.Name)
		if c := v.column(s.Paint.Name); c != nil && c.Kind == atlas.Categorical && len(s.Paint.Hidden) == len(c.Levels)+1 {
			v.hidden = s.Paint.Hidden
			v.repaint()
		}
	case "groups":
		v.paintSel.SetSelected(groupsChoice)
	case "gene":
		v.pendingGene = s.Paint.Name
	default:
		v.paintSel.SetSelected(plainChoice)
	}
	if s.View.Pinned && s.View.Scale > 0 {
		v.mapView.SetView(raster.View{CenterX: s.View.CenterX, CenterY: s.View.CenterY, Scale: s.View.Scale,
			Width: s.View.Width, Height: s.View.Height})
	}
}

// prepareBehind prepares the atlas of a session in the background and
// attaches it to the view when done.
func (v *atlasView) prepareBehind(s *session.Session) {
	v.note("preparing the atlas behind the stored map…")
	ctx, cancel := context.WithCancel(context.Background())
	go func() {
		<-v.closed
		cancel()
	}()
	relay := newProgressRelay(func(stage string, done, total int64) {
		if v.ready {
			return
		}
		v.note(fmt.Sprintf("preparing the atlas behind the stored map: %s %.0f%%", stageLabel(stage), 100*float64(done)/math.Max(1, float64(total))))
	})
	go func() {
		p, d, err := restore.Prepare(ctx, s, relay.report)
		var opt *live.TSNE
		setting := 0.0
		if err == nil {
			opt, setting, err = restore.NewReplayer(p).Current(ctx, restore.Steps(s))
		}
		fyne.Do(func() {
			if ctx.Err() != nil {
				return
			}
			if err != nil {
				v.note("stored map only")
				v.u.showError("Could not prepare the atlas behind the session", err)
				return
			}
			v.data = d
			v.attach(p, opt, setting)
			v.note("ready")
		})
	}()
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

// attach makes a view opened from a session fully usable once its atlas is
// prepared.
func (v *atlasView) attach(p *pipeline.Prepared, opt *live.TSNE, setting float64) {
	p.Annotations = v.prep.Annotations
	v.prep = p
	v.tsne = opt
	v.perp = setting
	v.engine.SetOptimizer(opt, setting)
	v.ready = true
	v.enableControls()
	v.refreshAtlasPanel()
	if v.pendingGene != "" {
		if g := v.findGene(v.pendingGene); g >= 0 {
			v.geneBox.SetText(v.pendingGene)
			v.paintByGene(g)
		}
		v.pendingGene = ""
	}
	v.scoreFidelity()
}

// recompute replays the history of the map from the prepared atlas and
// compares the result with the map on screen.
func (v *atlasView) recompute() {
	if !v.ready {
		v.u.showError("Not yet", fmt.Errorf("the atlas behind the map is still being prepared"))
		return
	}
	shown, _ := v.engine.Latest()
	history := v.engine.History()
	initial := v.engine.Initial()
	v.engine.Stop()
	p := v.prep
	v.note("recomputing the map from its history…")
	go func() {
		start := time.Now()
		layout, err := restore.NewReplayer(p).Replay(context.Background(), initial, history)
		fyne.Do(func() {
			if err != nil {
				v.u.showError("Could not recompute the map", err)
				return
			}
			diff := maxAbsDiff(shown, layout)
			msg := fmt.Sprintf("The map was recomputed from the inputs' preparation and its %d runs in %.1f s. ", len(history), time.Since(start).Seconds())
			if diff == 0 {
				msg += "It is identical, bit for bit, to the map that was shown."
			} else {
				msg += fmt.Sprintf("It differs from the map that was shown by at most %.3g (in map units); "+
					"the seed, the thread count or the platform differ from those that made it.", diff)
			}
			v.engine.SetLayout(layout, history)
			v.showFrame()
			dialog.ShowCustom("Recomputed", "Close", newWrapLabel(msg), v.u.win)
		})
	}()
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
	if !v.ready {
		return
	}
	s := v.toSession()
	if wait {
		if err := session.Write(autosavePath(), s); err != nil {
			fyne.LogError("autosave", err)
		}
		return
	}
	go func() {
		if err := session.Write(autosavePath(), s); err != nil {
			fyne.LogError("autosave", err)
		}
	}()
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
