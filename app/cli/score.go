package cli

import (
	"fmt"
	"io"

	"lodestone/app/live"
	"lodestone/app/session"
	"lodestone/compute/atlas"
	"lodestone/compute/embed"
	"lodestone/compute/neighbors"
	"lodestone/compute/pipeline"
	"lodestone/compute/quality"
)

func init() {
	register("score", "print the fidelity scores of a map (kNN preservation, trustworthiness, label accuracy, distance correlation; with --tail its KL divergence)", runScore)
}

func runScore(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("score", "(--in PATH [flags] --layout layout.csv | --session FILE [--layout layout.csv]) [--label COLUMN] [--mixing COLUMN] [--k 15] [--sample 2000]", stderr)
	var af atlasFlags
	af.register(fs, "a session (.lodestone): its inputs and settings are used instead of --in and the preparation flags, and its map unless --layout is given")
	var layoutPath string
	fs.inputPath(&layoutPath, "layout", "the map to score: CSV with header id,x,y")
	label := fs.String("label", "", "a categorical annotation column: also score how well the map's neighbours predict it")
	fo := fidelityFlags(fs)
	tail := fs.Float64("tail", 1, "also print the map's KL divergence for the kernel of this tail α (1: t-SNE), which needs the affinities (the neighbour search runs)")
	mixing := fs.String("mixing", "", "a categorical column naming samples: also score how mixed they are in the map and in the components (default: the first --integrate column)")
	quiet := fs.Bool("quiet", true, "print no progress")
	if err := fs.parse(args); err != nil {
		return err
	}
	if layoutPath == "" && af.session == "" {
		return usagef("--layout is required (or --session)")
	}
	if err := fo.check(); err != nil {
		return err
	}
	ctx, stop := interruptible()
	defer stop()
	b := newBar(stderr, *quiet)
	a, err := af.load(ctx, fs, b, false, func(cols []atlas.Column, _ *session.Session) error {
		_, err := labelCodes(cols, *label)
		return err
	})
	b.finish()
	if err != nil {
		return err
	}
	if err := fo.fit(a.Cells()); err != nil {
		return err
	}
	var layout []float32
	if layoutPath != "" {
		if layout, err = readLayout(ctx, layoutPath, a.CellIDs); err != nil {
			return err
		}
	} else {
		layout = a.Session.Layout
	}
	labels, err := labelCodes(a.Columns, *label)
	if err != nil {
		return err
	}
	scores, err := quality.Fidelity(ctx, a.Features, layout, fo.options(a.Settings, labels))
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "knn_preservation %.6f\n", scores.KNN)
	fmt.Fprintf(stdout, "trustworthiness %.6f\n", scores.Trust)
	if labels != nil {
		fmt.Fprintf(stdout, "label_accuracy %.6f\n", scores.Labels)
	}
	fmt.Fprintf(stdout, "distance_correlation %.6f\n", scores.DCor)
	if fs.isSet("tail") {
		b := newBar(stderr, *quiet)
		err := pipeline.Graph(ctx, a.Prepared, stageReporter(b))
		b.finish()
		if err != nil {
			return err
		}
		kl, err := embed.Divergence(ctx, a.P, layout, *tail, a.Settings.Threads)
		if err != nil {
			return err
		}
		fmt.Fprintf(stdout, "kl_divergence %.6f\n", kl)
	}
	if in := a.Settings.Integrate; *mixing == "" && in.On() {
		*mixing = in.Columns[0]
	}
	if *mixing != "" {
		m, err := pipeline.Mixing(ctx, a.Prepared, layout, *mixing, *label, fo.mixingOptions(a.Settings.Seed, a.Settings.Threads))
		if err != nil {
			return err
		}
		printMixing(stdout, m)
	}
	return nil
}

// printMixing prints the mixing scores as score does: the samples' mixing
// (0 apart, 1 as mixed as chance) in the map and in the components, and the
// types' when a type column was given.
func printMixing(w io.Writer, m pipeline.MixingScores) {
	fmt.Fprintf(w, "sample_mixing_map %.6f\n", m.Map.Batch)
	fmt.Fprintf(w, "sample_mixing_components %.6f\n", m.Space.Batch)
	if m.Types != "" {
		fmt.Fprintf(w, "type_mixing_map %.6f\n", m.Map.Types)
		fmt.Fprintf(w, "type_mixing_components %.6f\n", m.Space.Types)
	}
}

// fidelityOpts holds the flags that set how maps are scored, shared by the
// commands that score (score, sweep).
type fidelityOpts struct {
	k, sample *int
}

// fidelityFlags registers --k and --sample with the defaults of
// quality.Fidelity (the window's).
func fidelityFlags(fs *flags) fidelityOpts {
	return fidelityOpts{
		k:      fs.Int("k", quality.DefaultFidelityK, "neighbours compared by the fidelity scores"),
		sample: fs.Int("sample", quality.DefaultFidelitySample, "cells the fidelity scores are computed on (a random sample drawn with --seed)"),
	}
}

func (f fidelityOpts) check() error {
	if *f.k < 1 || *f.k > neighbors.MaxK || *f.sample < 2*(*f.k)+1 {
		return usagef("--k must be 1 … %d and --sample more than twice --k", neighbors.MaxK)
	}
	return nil
}

// fit refuses a --k that the n cells that passed quality control cannot
// meet.
func (f fidelityOpts) fit(n int) error {
	if *f.k >= n {
		return usagef("--k %d: %d cells passed quality control; each has at most %d neighbours", *f.k, n, n-1)
	}
	return nil
}

// options returns the options of quality.Fidelity: those the window scores
// with for the atlas prepared with settings s (live.FidelityOptions), with
// the sample size and neighbourhood of the flags.
func (f fidelityOpts) options(s pipeline.Settings, labels []int32) quality.FidelityOptions {
	o := live.FidelityOptions(s, labels)
	o.Sample, o.K = *f.sample, *f.k
	return o
}

// mixingOptions returns the options of the mixing scores: the same sample
// as the fidelity scores, neighbourhoods of the default perplexity.
func (f fidelityOpts) mixingOptions(seed int64, threads int) quality.MixingOptions {
	return quality.MixingOptions{Sample: *f.sample, Seed: seed, Threads: threads}
}

func column(cols []atlas.Column, name string) *atlas.Column {
	for i := range cols {
		if cols[i].Name == name {
			return &cols[i]
		}
	}
	return nil
}

// stageReporter forwards pipeline progress to the bar under people's names
// for the stages.
func stageReporter(b *bar) func(stage string, done, total int64) {
	labels := map[string]string{}
	for _, st := range pipeline.Stages {
		labels[st.Name] = st.Label
	}
	return func(stage string, done, total int64) {
		if l, ok := labels[stage]; ok {
			stage = l
		}
		b.report(stage, done, total)
	}
}
