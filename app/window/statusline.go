package window

import (
	"context"
	"fmt"
	"math"
	"strings"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/live"
	lcanvas "lodestone/canvas"
	"lodestone/compute/pipeline"
	"lodestone/compute/quality"
)

// noteLasts is how long a note stays in the status line.
const noteLasts = 12 * time.Second

// statusLine is the line below the map: what the optimiser does, its
// progress, iteration and KL divergence, the map's scores, and the newest
// note (a file saved, a group made). It only shows the atlas state.
type statusLine struct {
	st   *atlasState
	jobs *viewJobs

	stage    *widget.Label
	progress *widget.ProgressBar
	elapsed  *widget.Label
	runInfo  *widget.Label
	scores   *widget.Label
	note     *widget.Label
	box      fyne.CanvasObject
	noteGen  int
}

func newStatusLine(st *atlasState, jobs *viewJobs) *statusLine {
	s := &statusLine{st: st, jobs: jobs}
	s.stage = widget.NewLabel("")
	s.progress = widget.NewProgressBar()
	s.progress.TextFormatter = func() string { return "" }
	s.elapsed = widget.NewLabel("")
	s.runInfo = widget.NewLabel("")
	s.scores = widget.NewLabel("")
	s.note = widget.NewLabel("")
	s.note.Truncation = fyne.TextTruncateEllipsis
	s.note.Importance = widget.LowImportance
	run := container.NewHBox(s.stage, container.NewGridWrap(fyne.NewSize(160, 20), s.progress), s.elapsed,
		widget.NewSeparator(), s.runInfo, widget.NewSeparator(), s.scores, widget.NewSeparator())
	s.box = container.NewBorder(nil, nil, run, nil, s.note)
	st.on(topicRun, s.showRun)
	st.on(topicRun, s.showScores)
	st.on(topicScores, s.showScores)
	st.on(topicNote, s.showNote)
	s.showRun()
	s.showScores()
	return s
}

// content returns the line's widgets.
func (s *statusLine) content() fyne.CanvasObject { return s.box }

// runStage says in words what the optimiser does.
func runStage(ready bool, r live.Status) string {
	switch {
	case r.Err != nil:
		return "the optimiser stopped: " + r.Err.Error()
	case !ready:
		return "stored map"
	case r.Running && math.IsInf(r.Attraction, 1):
		return "moving to the spectral layout"
	case r.Running:
		return "optimising at attraction " + lcanvas.FormatAttraction(r.Attraction)
	case r.Runs == 0:
		return "ready"
	case r.Settled:
		return "settled"
	}
	return "stopped"
}

func (s *statusLine) showRun() {
	r := s.st.run
	setText(s.stage, runStage(s.st.ready, r))
	if r.Iterations > 0 {
		if v := float64(r.Iteration) / float64(r.Iterations); v != s.progress.Value {
			s.progress.SetValue(v)
		}
	}
	setText(s.elapsed, fmt.Sprintf("%.1f s", r.Elapsed.Seconds()))
	kl := "—"
	if !math.IsNaN(r.KL) {
		kl = fmt.Sprintf("%.3f", r.KL)
	}
	setText(s.runInfo, fmt.Sprintf("iteration %d/%d · KL %s", r.Iteration, r.Iterations, kl))
}

// setText changes a label's text when it differs: each change lays the
// window out and paints it again.
func setText(l *widget.Label, text string) {
	if l.Text != text {
		l.SetText(text)
	}
}

// showScores shows the scores of the map on screen; while the map moves
// away from the map they score, they are marked as the previous map's.
func (s *statusLine) showScores() {
	sc := s.st.scores
	text, importance := scoresText(sc, s.st.scoresCurrent(), s.st.scoring)
	if s.scores.Text != text || s.scores.Importance != importance {
		s.scores.Text, s.scores.Importance = text, importance
		s.scores.Refresh()
	}
}

// scoresText writes the scores for the status line: current scores plainly
// (with the samples' mixing in the map when it was scored), scores of an
// earlier map marked as such and dimmed (without the mixing, to keep the
// line short while a run's progress shares it).
func scoresText(sc mapScores, current, scoring bool) (string, widget.Importance) {
	switch {
	case current && sc.err != nil:
		return "fidelity: " + sc.err.Error(), widget.WarningImportance
	case current && sc.mixing != nil:
		return "fidelity: " + sc.text + " · " + mixingText(*sc.mixing), widget.MediumImportance
	case current:
		return "fidelity: " + sc.text, widget.MediumImportance
	case sc.layout != nil && sc.err == nil:
		return "previous map's fidelity: " + sc.text, widget.LowImportance
	case scoring:
		return "fidelity: scoring…", widget.LowImportance
	}
	return "fidelity: after the run", widget.LowImportance
}

// showNote shows the newest note for a while.
func (s *statusLine) showNote() {
	s.note.SetText(s.st.note)
	s.noteGen++
	gen := s.noteGen
	time.AfterFunc(noteLasts, func() {
		s.jobs.do(func() {
			if s.noteGen == gen {
				s.note.SetText("")
			}
		})
	})
}

// fidelityOptions are the options the window scores maps with
// (live.FidelityOptions: the defaults of quality.Fidelity, the atlas's seed
// and thread count), which `lodestone score` and `lodestone sweep` use too,
// so that their numbers are the window's.
func fidelityOptions(p *pipeline.Prepared, labels []int32) quality.FidelityOptions {
	return live.FidelityOptions(p.Settings, labels)
}

// scoreKind is one score of the map on screen for the status line: a
// function of the prepared atlas and the layout that writes its value.
type scoreKind func(ctx context.Context, p *pipeline.Prepared, layout []float32) (string, error)

// fidelityScore writes the share of kept neighbours, the trustworthiness
// and the distance correlation between the data's and the map's distances.
func fidelityScore(ctx context.Context, p *pipeline.Prepared, layout []float32) (string, error) {
	f, err := quality.Fidelity(ctx, p.Features, layout, fidelityOptions(p, nil))
	if err != nil {
		return "", err
	}
	return fmt.Sprintf("kept neighbours %.3f · trustworthiness %.3f · dCor %.2f", f.KNN, f.Trust, f.DCor), nil
}

// mapScorer scores the map on screen in the background whenever it stops
// moving: after a run, when a sweep's map is adopted, when the atlas behind
// a stored map is ready. A newer map cancels the scoring of an older one.
// A new score for the status line is a new scoreKind in kinds.
type mapScorer struct {
	st    *atlasState
	jobs  *viewJobs
	kinds []scoreKind

	pending []float32 // the layout being scored
	cancel  context.CancelFunc
}

func newMapScorer(st *atlasState, jobs *viewJobs) *mapScorer {
	m := &mapScorer{st: st, jobs: jobs, kinds: []scoreKind{fidelityScore}}
	st.on(topicRun, m.update)
	st.on(topicAtlas, m.update)
	st.on(topicSamples, m.rescore)
	return m
}

// rescore scores the map on screen again (the scores asked for changed).
func (m *mapScorer) rescore() {
	if m.pending != nil {
		m.cancel()
		m.pending, m.cancel = nil, nil
	}
	m.st.setScores(mapScores{})
	m.update()
}

// update starts scoring the map on screen when it stands still and has no
// scores yet, and stops scoring a map that is no longer on screen.
func (m *mapScorer) update() {
	layout := m.st.layout
	if m.pending != nil && !sameLayout(m.pending, layout) {
		m.cancel()
		m.pending, m.cancel = nil, nil
		m.st.setScoring(false)
	}
	if !m.st.ready || m.st.run.Running || len(layout) == 0 || m.pending != nil ||
		sameLayout(layout, m.st.scores.layout) {
		return
	}
	ctx, cancel := m.jobs.child()
	m.pending, m.cancel = layout, cancel
	m.st.setScoring(true)
	p := m.st.prep
	kinds := m.kinds
	samples, types := m.st.samples, m.st.types
	m.jobs.goCtx(ctx, func(ctx context.Context) {
		defer cancel()
		parts := make([]string, 0, len(kinds)+1)
		var err error
		for _, k := range kinds {
			var s string
			if s, err = k(ctx, p, layout); err != nil {
				break
			}
			parts = append(parts, s)
		}
		// The samples' mixing, when a column names them: briefly in the
		// status line while the map is current, in full in the Atlas tab.
		var mixing *pipeline.MixingScores
		if err == nil && samples != "" {
			var mx pipeline.MixingScores
			if mx, err = pipeline.Mixing(ctx, p, layout, samples, types, mixingOptions(p)); err == nil {
				mixing = &mx
			}
		}
		if ctx.Err() != nil {
			return
		}
		m.jobs.do(func() {
			if !sameLayout(m.pending, layout) {
				return // superseded
			}
			m.pending, m.cancel = nil, nil
			m.st.scoring = false
			m.st.setScores(mapScores{layout: layout, text: strings.Join(parts, " · "), err: err, mixing: mixing})
		})
	})
}
