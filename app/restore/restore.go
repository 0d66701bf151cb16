// Package restore joins session files (package session, the format) to the
// computation: Capture builds the session of a map from its prepared atlas,
// its initial layout and the history of runs that led to it, and Prepare,
// Replayer and Recompute bring a session back: they read its inputs, rerun
// the preparation with its settings and replay its history.
//
// The window and the headless commands make and restore sessions only
// through this package, so a session made by either reopens and recomputes
// in the other.
package restore

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"

	"lodestone/app/live"
	"lodestone/app/session"
	"lodestone/compute/atlas"
	"lodestone/compute/ingest"
	"lodestone/compute/neighbors"
	"lodestone/compute/pipeline"
	"lodestone/compute/sparse"
	"lodestone/sampledata"
)

// Origin says where an atlas came from.
type Origin struct {
	// Path is the file or folder the atlas was opened from; Capture stores
	// it as an absolute path.
	Path string
	// Inputs are the files read from Path with their sizes and hashes (see
	// Hash); nil when they are not known (yet).
	Inputs []session.Input
	// Example, when not nil, says that the atlas is the bundled example
	// generated with these options (their Cells, Genes and Seed are
	// stored); Path and Inputs are then not used.
	Example *sampledata.Options
	// Open holds what was given to the reader beyond Path: the label
	// files, their header lines, the orientation and the annotation table
	// (its other fields are not used).
	Open ingest.Options
}

// Map is what a session records of a map, beside what only the window has
// (groups, paint, view).
type Map struct {
	// Prepared gives the settings, the cell IDs and the annotation columns.
	Prepared *pipeline.Prepared
	Origin   Origin
	// Initial is the layout the history starts from and fresh runs start
	// from: Prepared.Init, or the layout a run was continued from.
	Initial []float32
	// Layout is the map; Attraction the dial's value and Tail the tail
	// control's (0 means 1).
	Layout     []float32
	Attraction float64
	Tail       float64
	// History holds the runs that lead from Initial to Layout.
	History []live.Step
}

// Capture returns the session of m, painted plain, with no groups and a
// view that fits the map; the window adds its groups, paint and view. The
// session shares m's slices.
func Capture(m Map) *session.Session {
	p := m.Prepared
	s := &session.Session{
		Program:    "lodestone " + session.ProgramVersion,
		Settings:   Settings(p.Settings),
		CellIDs:    p.CellIDs,
		Columns:    Columns(p.Annotations),
		Layout:     m.Layout,
		Initial:    m.Initial,
		Attraction: session.Attraction(m.Attraction),
		Tail:       m.Tail,
		History:    History(m.History),
		Paint:      session.Paint{Source: "plain"},
	}
	if e := m.Origin.Example; e != nil {
		s.Example = &session.Example{Cells: e.Cells, Genes: e.Genes, Seed: e.Seed}
		return s
	}
	s.OpenedPath = m.Origin.Path
	if abs, err := filepath.Abs(s.OpenedPath); err == nil { // fails only without a working directory
		s.OpenedPath = abs
	}
	s.Inputs = m.Origin.Inputs
	s.Reading = reading(chosen(m.Origin.Open, p.Files))
	return s
}

// chosen returns o with the files the reader found itself (f) filled in
// where o names none: a session names every file it was read from, so that
// files written beside the atlas later (a layout, a sweep's tables) cannot
// make the folder ambiguous when the session is opened again.
func chosen(o ingest.Options, f atlas.Files) ingest.Options {
	if o.Cells == "" {
		o.Cells = f.Cells
	}
	if o.Genes == "" {
		o.Genes = f.Genes
	}
	if o.Annotations == "" {
		o.Annotations = f.Annotations
	}
	if o.MatrixRows == ingest.RowsAuto {
		o.MatrixRows = f.MatrixRows
	}
	return o
}

// header names a label file's header option as a session stores it.
var header = map[ingest.Header]string{ingest.HeaderAuto: "", ingest.HeaderNone: "none", ingest.HeaderFirst: "first"}

// reading returns what a session stores of the reader's options, nil when
// nothing was given.
func reading(o ingest.Options) *session.Reading {
	abs := func(p string) string {
		if a, err := filepath.Abs(p); err == nil && p != "" {
			return a
		}
		return p
	}
	r := session.Reading{CellLabels: abs(o.Cells), GeneLabels: abs(o.Genes), CellsHeader: header[o.CellsHeader],
		GenesHeader: header[o.GenesHeader], MatrixRows: o.MatrixRows, Annotations: abs(o.Annotations)}
	if r == (session.Reading{}) {
		return nil
	}
	return &r
}

// openOptions returns the reader's options a session stores.
func openOptions(r *session.Reading) ingest.Options {
	if r == nil {
		return ingest.Options{}
	}
	o := ingest.Options{Cells: r.CellLabels, Genes: r.GeneLabels, MatrixRows: r.MatrixRows, Annotations: r.Annotations}
	for h, name := range header {
		if name == r.CellsHeader {
			o.CellsHeader = h
		}
		if name == r.GenesHeader {
			o.GenesHeader = h
		}
	}
	return o
}

// Hash returns the sizes and SHA-256 hashes of the files an atlas was read
// from (pipeline.Prepared.Sources), in their order.
func Hash(sources []string) ([]session.Input, error) {
	out := make([]session.Input, 0, len(sources))
	for _, p := range sources {
		in, err := session.HashFile(p)
		if err != nil {
			return nil, err
		}
		out = append(out, in)
	}
	return out, nil
}

// Errors of restoring a session that are about its inputs, not the
// computation: Features, Prepare and Recompute wrap ErrInputs around the
// error of reading the inputs (ErrNoInputs when the session names none) or
// of matching their cells to the session's.
var (
	ErrInputs   = errors.New("the session's inputs cannot be read or do not match it")
	ErrNoInputs = errors.New("the session names no input to recompute from")
)

// Load reads the atlas a session was made from: the example, regenerated
// with its options, or the path it was opened from. report, when not nil,
// receives the reading's progress under the stage name "read".
func Load(ctx context.Context, s *session.Session, report func(stage string, done, total int64)) (*atlas.Dataset, error) {
	if report == nil {
		report = func(string, int64, int64) {}
	}
	if s.Example != nil {
		opt := sampledata.DefaultOptions()
		opt.Cells, opt.Genes, opt.Seed = s.Example.Cells, s.Example.Genes, s.Example.Seed
		opt.Progress = func(done, total int64) { report("read", done, total) }
		d, _, err := sampledata.Generate(ctx, opt)
		return d, err
	}
	if s.OpenedPath == "" {
		return nil, ErrNoInputs
	}
	o := openOptions(s.Reading)
	o.Progress = func(done, total int64) { report("read", done, total) }
	return ingest.Open(ctx, s.OpenedPath, o)
}

// Features reads the inputs of s and reruns the preparation with its
// settings up to the features and the expression (pipeline.Features); the
// cells it keeps must be the session's cells, in order. Errors of the inputs
// wrap ErrInputs; unknown stored settings wrap session.ErrCorrupt.
func Features(ctx context.Context, s *session.Session, report func(stage string, done, total int64)) (*pipeline.Prepared, *atlas.Dataset, error) {
	return prepare(ctx, s, report, pipeline.Features)
}

// Prepare reads the inputs of s and reruns the whole preparation with its
// settings (pipeline.Prepare); the cells it keeps must be the session's
// cells, in order.
func Prepare(ctx context.Context, s *session.Session, report func(stage string, done, total int64)) (*pipeline.Prepared, *atlas.Dataset, error) {
	return prepare(ctx, s, report, pipeline.Prepare)
}

func prepare(ctx context.Context, s *session.Session, report func(stage string, done, total int64),
	run func(context.Context, *atlas.Dataset, pipeline.Settings, func(string, int64, int64)) (*pipeline.Prepared, error)) (*pipeline.Prepared, *atlas.Dataset, error) {
	set, err := Pipeline(s.Settings)
	if err != nil {
		return nil, nil, err
	}
	d, err := Load(ctx, s, report)
	if err != nil {
		if ctx.Err() != nil {
			return nil, nil, err
		}
		return nil, nil, fmt.Errorf("%w: %w", ErrInputs, err)
	}
	p, err := run(ctx, d, set, report)
	if err != nil {
		return nil, nil, err
	}
	if err := sameCells(p.CellIDs, s.CellIDs); err != nil {
		return nil, nil, fmt.Errorf("%w: %w", ErrInputs, err)
	}
	return p, d, nil
}

func sameCells(now, stored []string) error {
	if len(now) != len(stored) {
		return fmt.Errorf("the inputs now give %d cells, the session has %d", len(now), len(stored))
	}
	for i, id := range now {
		if id != stored[i] {
			return fmt.Errorf("cell %d is %q in the inputs but %q in the session", i+1, id, stored[i])
		}
	}
	return nil
}

// Replayer builds the optimiser for each setting (perplexity) of a history,
// growing the neighbour graph as the window did, so that a replay uses the
// same affinities as the runs it repeats.
type Replayer struct {
	p      *pipeline.Prepared
	g      *neighbors.Graph
	cached map[float64]*live.TSNE
}

// NewReplayer returns a Replayer over p (not modified).
func NewReplayer(p *pipeline.Prepared) *Replayer {
	return &Replayer{p: p, g: p.Graph, cached: map[float64]*live.TSNE{}}
}

// Optimizer returns the optimiser for a perplexity.
func (r *Replayer) Optimizer(ctx context.Context, perp float64) (*live.TSNE, error) {
	if t, ok := r.cached[perp]; ok {
		return t, nil
	}
	var P *sparse.CSR
	if perp == r.p.Settings.Perplexity && r.g == r.p.Graph {
		P = r.p.P
	} else {
		q := *r.p
		q.Graph = r.g
		g, newP, _, err := pipeline.Reaffine(ctx, &q, perp)
		if err != nil {
			return nil, err
		}
		r.g, P = g, newP
	}
	t := &live.TSNE{P: P, Seed: r.p.Settings.Seed, Threads: r.p.Settings.Threads}
	r.cached[perp] = t
	return t, nil
}

// Current returns the optimiser in force at the end of history and its
// setting: that of the last step's perplexity, or of the prepared one when
// the history is empty. The optimisers of the settings before it are built
// first, in the history's order, so that the graph grows as it did.
func (r *Replayer) Current(ctx context.Context, history []live.Step) (*live.TSNE, float64, error) {
	setting := r.p.Settings.Perplexity
	opt, err := r.Optimizer(ctx, setting)
	for _, st := range history {
		if err == nil && st.Setting != setting {
			setting = st.Setting
			opt, err = r.Optimizer(ctx, setting)
		}
	}
	if err != nil {
		return nil, 0, err
	}
	return opt, setting, nil
}

// Replay repeats history from initial with the optimisers of r (see
// live.Replay) and returns the layout it leads to.
func (r *Replayer) Replay(ctx context.Context, initial []float32, history []live.Step) ([]float32, error) {
	return live.Replay(ctx, initial, history, func(setting float64) (live.Optimizer, error) {
		t, err := r.Optimizer(ctx, setting)
		if err != nil {
			return nil, err
		}
		return t, nil
	})
}

// Recompute reruns the preparation of s and replays its history from its
// stored initial layout; it returns the prepared atlas and the layout,
// which for the same seed, thread count and platform equals the stored one
// bit for bit.
func Recompute(ctx context.Context, s *session.Session, report func(stage string, done, total int64)) (*pipeline.Prepared, []float32, error) {
	p, _, err := Prepare(ctx, s, report)
	if err != nil {
		return nil, nil, err
	}
	layout, err := NewReplayer(p).Replay(ctx, s.Initial, Steps(s))
	if err != nil {
		return nil, nil, err
	}
	return p, layout, nil
}
