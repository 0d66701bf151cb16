package window

import (
	"context"
	"fmt"
	"math"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/widget"

	"lodestone/compute/atlas"
	"lodestone/compute/integrate"
	"lodestone/compute/pipeline"
	"lodestone/compute/quality"
)

// integrationNote says in a few words what integration does and does not
// do; the Atlas tab shows it under the samples' controls.
const integrationNote = "Integrating corrects the principal components (Harmony) so that cells of one state " +
	"from different samples become neighbours: the map, the neighbours, clusters and fidelity then use the " +
	"corrected components. Marker genes and gene paint stay on the measured expression. It cannot tell a " +
	"technical shift from a real difference between samples: a state found in one sample only may be drawn " +
	"into the others' — check a finding with and without it."

// samplesPanel is the Atlas tab's part about samples: the column that names
// them (the status line then scores how mixed they are), the column that
// names cell types (how well types stay apart), and the integration of the
// samples by Harmony with its strength θ. Integrating prepares the atlas
// again with the new settings in the background; meanwhile, and when it
// fails, the map on screen stays usable.
type samplesPanel struct {
	st    *atlasState
	jobs  *viewJobs
	errs  errorShower
	reset func(p *pipeline.Prepared) // shows a new preparation and starts a fresh run

	samples *widget.Select
	types   *widget.Select
	theta   *widget.Entry
	button  *widget.Button
	state   *widget.Label
	mixing  *widget.Label // the mixing scores of the map on screen
	box     fyne.CanvasObject
	busy    bool
}

func newSamplesPanel(st *atlasState, jobs *viewJobs, errs errorShower, reset func(p *pipeline.Prepared)) *samplesPanel {
	s := &samplesPanel{st: st, jobs: jobs, errs: errs, reset: reset}
	s.samples = widget.NewSelect(nil, func(string) { s.chose() })
	s.types = widget.NewSelect(nil, func(string) { s.chose() })
	s.theta = widget.NewEntry()
	s.theta.SetText(strconv.FormatFloat(integrate.DefaultTheta, 'g', -1, 64))
	s.button = widget.NewButton("Integrate the samples", s.toggle)
	s.state = widget.NewLabel("")
	s.state.Wrapping = fyne.TextWrapWord
	s.mixing = widget.NewLabel("")
	s.mixing.Wrapping = fyne.TextWrapWord
	note := widget.NewLabel(integrationNote)
	note.Wrapping = fyne.TextWrapWord
	note.Importance = widget.LowImportance
	form := container.New(layout.NewFormLayout(),
		widget.NewLabel("samples are in column"), s.samples,
		widget.NewLabel("cell types in column"), s.types,
		widget.NewLabel("strength θ"), s.theta)
	s.box = container.NewVBox(widget.NewLabelWithStyle("Samples", fyne.TextAlignLeading, fyne.TextStyle{Bold: true}),
		form, s.button, s.state, s.mixing, note)
	if in := st.prep.Settings.Integrate; in.On() {
		st.samples = in.Columns[0]
		if len(in.Theta) > 0 {
			s.theta.SetText(strconv.FormatFloat(in.Theta[0], 'g', -1, 64))
		}
	}
	s.fill()
	st.on(topicAtlas, s.fill)
	st.on(topicColumns, s.fill)
	st.on(topicScores, s.showMixing)
	st.on(topicRun, s.showMixing)
	return s
}

// showMixing shows the mixing scores of the map on screen, marked as the
// previous map's while a run moves it.
func (s *samplesPanel) showMixing() {
	text := ""
	switch m := s.st.scores.mixing; {
	case s.st.samples == "":
	case m == nil:
		text = "Mixing: scored when the map stands still."
	case s.st.scoresCurrent():
		text = mixingDetail(*m)
	default:
		text = "Previous map's: " + mixingDetail(*m)
	}
	if s.mixing.Text != text {
		s.mixing.SetText(text)
	}
}

// content returns the panel's widgets.
func (s *samplesPanel) content() fyne.CanvasObject { return s.box }

// fill lists the categorical columns in the pickers and shows the state:
// for the samples, the atlas's own columns (integration prepares the atlas
// again from them); for the types, also the columns made since (Leiden
// clusters).
func (s *samplesPanel) fill() {
	categorical := func(cols []atlas.Column) []string {
		opts := []string{noLabel}
		for _, c := range cols {
			if c.Kind == atlas.Categorical {
				opts = append(opts, c.Name)
			}
		}
		return opts
	}
	pick := func(w *widget.Select, opts []string, name string) {
		w.Options = opts
		if name == "" {
			name = noLabel
		}
		w.Selected = name
		w.Refresh()
	}
	var own []atlas.Column
	if s.st.data != nil {
		own = s.st.data.Annotations
	}
	pick(s.samples, categorical(own), s.st.samples)
	pick(s.types, categorical(s.st.prep.Annotations), s.st.types)
	s.show()
}

// chose records the pickers' columns in the state.
func (s *samplesPanel) chose() {
	name := func(w *widget.Select) string {
		if w.Selected == noLabel {
			return ""
		}
		return w.Selected
	}
	s.st.setSamples(name(s.samples), name(s.types))
	s.show()
}

// integrated returns the batch columns the map on screen was integrated
// by (nil when none).
func (s *samplesPanel) integrated() []string { return s.st.prep.Settings.Integrate.Columns }

// show sets the button and the line that says what the map's components
// are.
func (s *samplesPanel) show() {
	in := s.integrated()
	switch {
	case len(in) > 0 && (s.st.samples == "" || s.st.samples == in[0]):
		s.button.SetText("Undo the integration")
	default:
		s.button.SetText("Integrate the samples")
	}
	if s.busy || !s.st.ready || (len(in) == 0 && s.st.samples == "") {
		s.button.Disable()
	} else {
		s.button.Enable()
	}
	if s.busy {
		return
	}
	s.state.SetText(integrationState(s.st.prep))
}

// integrationState says in words whether and how the components are
// integrated.
func integrationState(p *pipeline.Prepared) string {
	in := p.Settings.Integrate
	if !in.On() {
		return "The components are not integrated."
	}
	text := fmt.Sprintf("The components are integrated by %s (θ %s).", strings.Join(in.Columns, " and "), joinNumbers(in.Theta))
	if r := p.Integrated; r != nil {
		settled := "settled"
		if !r.Converged {
			settled = "not settled"
		}
		text = fmt.Sprintf("%s Harmony: %d clusters, %d rounds, %s.", text, r.Clusters, r.Rounds, settled)
	}
	return text
}

func joinNumbers(v []float64) string {
	parts := make([]string, len(v))
	for i, x := range v {
		parts[i] = strconv.FormatFloat(x, 'g', -1, 64)
	}
	return strings.Join(parts, ", ")
}

// toggle integrates the samples by the chosen column, or undoes the
// integration, by preparing the atlas again with the new settings.
func (s *samplesPanel) toggle() {
	if !s.st.ready || s.busy {
		return
	}
	settings := s.st.prep.Settings
	undo := s.button.Text == "Undo the integration"
	if undo {
		settings.Integrate = pipeline.Integration{}
	} else {
		theta, err := strconv.ParseFloat(strings.TrimSpace(s.theta.Text), 64)
		if err != nil || !(theta > 0) || theta > 100 || math.IsInf(theta, 0) {
			s.errs.showError("Strength θ", fmt.Errorf("give a number above 0, at most 100 (now %q)", s.theta.Text))
			return
		}
		settings.Integrate = pipeline.Integration{Columns: []string{s.st.samples}, Theta: []float64{theta}}
		// A column that cannot name samples is refused at once, naming the
		// problem; the map stays as it is.
		if err := pipeline.CheckIntegration(s.st.data, settings.Integrate); err != nil {
			s.errs.showError("Cannot integrate the samples", err)
			return
		}
	}
	s.busy = true
	s.show()
	what := "integrating the samples"
	if undo {
		what = "undoing the integration"
	}
	s.state.SetText(what + "…")
	relay := newProgressRelay(func(stage string, done, total int64) {
		if s.busy && !s.jobs.closed() {
			s.state.SetText(fmt.Sprintf("%s: %s %.0f%%", what, stageLabel(stage), 100*float64(done)/math.Max(1, float64(total))))
		}
	})
	d := s.st.data
	s.jobs.run(func(ctx context.Context) {
		p, err := pipeline.Prepare(ctx, d, settings, relay.report)
		s.jobs.do(func() {
			s.busy = false
			if err != nil {
				s.show()
				s.errs.showError("Could not integrate the samples", err)
				return
			}
			s.reset(p)
			s.show()
			s.st.tell(integrationState(p))
		})
	})
}

// mixingOptions are the options the window scores the samples' mixing
// with: quality's defaults (2,000 cells, perplexity 30) and the atlas's
// seed and thread count, as `lodestone score` uses them.
func mixingOptions(p *pipeline.Prepared) quality.MixingOptions {
	return quality.MixingOptions{Seed: p.Settings.Seed, Threads: p.Settings.Threads}
}

// mixingText is the status line's short form of the mixing scores: the
// map's, the one the user looks at.
func mixingText(m pipeline.MixingScores) string {
	text := fmt.Sprintf("samples mixed %.2f", m.Map.Batch)
	if m.Types != "" {
		text += fmt.Sprintf(" · types %.2f", m.Map.Types)
	}
	return text
}

// mixingDetail is the Atlas tab's full form of the mixing scores.
func mixingDetail(m pipeline.MixingScores) string {
	text := fmt.Sprintf("Samples (%s) mixed: %.2f in the map, %.2f in the components", m.Column, m.Map.Batch, m.Space.Batch)
	if m.Types != "" {
		text += fmt.Sprintf("; types (%s) mixed: %.2f in the map, %.2f in the components", m.Types, m.Map.Types, m.Space.Types)
	}
	return text + fmt.Sprintf(" (0: apart, 1: as mixed as chance; %d cells, perplexity %g).", m.Map.Cells, m.Map.Perplexity)
}
