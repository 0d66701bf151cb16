package window

import (
	"slices"

	"lodestone/app/live"
	"lodestone/app/paint"
	"lodestone/compute/atlas"
	"lodestone/compute/pipeline"
)

// topic names a kind of change of the atlas state. A panel subscribes to
// the topics it shows and is called after each change of one.
type topic int

const (
	topicAtlas     topic = iota // the prepared atlas was attached: the dial, genes and markers work
	topicColumns                // an annotation column was added or replaced
	topicPaint                  // the map's paint changed
	topicGroups                 // a group was made, renamed, recoloured or deleted
	topicSelection              // the selected cells changed
	topicFrame                  // a new layout is on screen
	topicRun                    // the run's status changed (started, advanced, stopped)
	topicScores                 // the scores of the map on screen changed
	topicNote                   // a short message for the status line
	topicSamples                // the columns that name samples and cell types changed
	topicCount
)

// atlasState is what the panels of an atlas view share: the atlas, the map
// on screen and its run, paint, groups, selection and scores. Each panel
// owns the rest of its own state and reaches the others only through this
// state or through a narrow dependency given to it when it is built.
//
// The state is touched on the UI goroutine only. A setter changes one part
// and then calls the functions subscribed to its topic, in the order they
// subscribed.
type atlasState struct {
	src   source
	data  *atlas.Dataset
	prep  *pipeline.Prepared // partial (no graph, affinities or expression) until ready
	ready bool               // the atlas is prepared: the dial, genes and scores work

	layout []float32   // the map on screen; never modified
	run    live.Status // the status of the run that moves it

	paint      *paint.Paint
	geneValues []float64 // values of the gene that paints the map, when one does

	groups    []*paint.Group
	selection []bool // the selected cells; never modified (a change replaces it)
	selected  int    // how many are selected

	scores  mapScores
	scoring bool // the map on screen is being scored
	note    string

	samples string // the column that names the samples ("" none): their mixing is scored
	types   string // the column that names cell types ("" none): their mixing is scored

	subs [topicCount][]func()
}

// mapScores are the scores of one map: what the status line shows beside
// the run.
type mapScores struct {
	layout []float32 // the map scored (nil: none yet)
	text   string    // the scores as the status line writes them
	err    error     // why scoring failed
	// mixing holds the samples' (and types') mixing in the map and in the
	// components when a column names the samples; nil otherwise.
	mixing *pipeline.MixingScores
}

// newAtlasState returns the state of an atlas; p may be partial (a session's
// stored map before its atlas is prepared).
func newAtlasState(src source, d *atlas.Dataset, p *pipeline.Prepared) *atlasState {
	return &atlasState{src: src, data: d, prep: p, ready: p.P != nil, layout: p.Init}
}

// on subscribes f to changes of topic t.
func (s *atlasState) on(t topic, f func()) { s.subs[t] = append(s.subs[t], f) }

// emit tells the subscribers of t that it changed.
func (s *atlasState) emit(t topic) {
	for _, f := range s.subs[t] {
		f()
	}
}

// cells returns the number of cells on the map.
func (s *atlasState) cells() int { return s.prep.Cells() }

// attach replaces a partial preparation by the full one.
func (s *atlasState) attach(d *atlas.Dataset, p *pipeline.Prepared) {
	p.Annotations = s.prep.Annotations // columns added since (clusters) stay
	s.data, s.prep, s.ready = d, p, true
	s.emit(topicAtlas)
}

// column returns the annotation column of that name, or nil.
func (s *atlasState) column(name string) *atlas.Column {
	for k := range s.prep.Annotations {
		if s.prep.Annotations[k].Name == name {
			return &s.prep.Annotations[k]
		}
	}
	return nil
}

// putColumn adds an annotation column, or replaces the one of its name.
func (s *atlasState) putColumn(col atlas.Column) {
	if c := s.column(col.Name); c != nil {
		*c = col
	} else {
		s.prep.Annotations = append(s.prep.Annotations, col)
	}
	s.emit(topicColumns)
}

// setLayout shows a new layout with the run's status.
func (s *atlasState) setLayout(layout []float32, run live.Status) {
	changed := !sameLayout(layout, s.layout)
	s.layout = layout
	s.run = run
	if changed {
		s.emit(topicFrame)
	}
	s.emit(topicRun)
}

// setPaint shows p; values are the gene's values when p paints by a gene.
func (s *atlasState) setPaint(p *paint.Paint, values []float64) {
	s.paint, s.geneValues = p, values
	s.emit(topicPaint)
}

// setGroups replaces the groups.
func (s *atlasState) setGroups(groups []*paint.Group) {
	s.groups = groups
	s.emit(topicGroups)
}

// groupWithCells returns the group whose cells are exactly cells, or nil.
func (s *atlasState) groupWithCells(cells []bool) *paint.Group {
	for _, g := range s.groups {
		if slices.Equal(g.Cells, cells) {
			return g
		}
	}
	return nil
}

// setSelection records the selected cells (the map widget owns them).
func (s *atlasState) setSelection(sel []bool, n int) {
	s.selection, s.selected = sel, n
	s.emit(topicSelection)
}

// setScores records the scores of a map.
func (s *atlasState) setScores(sc mapScores) {
	s.scores = sc
	s.emit(topicScores)
}

// setScoring records whether the map on screen is being scored.
func (s *atlasState) setScoring(on bool) {
	s.scoring = on
	s.emit(topicScores)
}

// scoresCurrent reports whether the scores belong to the map on screen,
// which no run moves.
func (s *atlasState) scoresCurrent() bool {
	return s.scores.layout != nil && sameLayout(s.scores.layout, s.layout) && !s.run.Running
}

// setSamples records the columns that name the samples and the cell types
// ("" for none).
func (s *atlasState) setSamples(samples, types string) {
	if samples == s.samples && types == s.types {
		return
	}
	s.samples, s.types = samples, types
	s.emit(topicSamples)
}

// tell shows a short message in the status line.
func (s *atlasState) tell(msg string) {
	s.note = msg
	s.emit(topicNote)
}

// sameLayout reports whether a and b are the same slice (layouts are never
// modified, so the same slice is the same map).
func sameLayout(a, b []float32) bool {
	return len(a) == len(b) && (len(a) == 0 || &a[0] == &b[0])
}
