package cli

import (
	"fmt"
	"io"

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
	fs := newFlags("score", "--in PATH [--meta FILE] --layout layout.csv [--label COLUMN] [--mixing COLUMN] [--k 15] [flags]", stderr)
	var in inputFlags
	var pf prepFlags
	in.register(fs)
	pf.register(fs)
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
	if layoutPath == "" {
		return usagef("--layout is required")
	}
	if err := fo.check(); err != nil {
		return err
	}
	ctx, stop := interruptible()
	defer stop()
	b := newBar(stderr, *quiet)
	p, err := features(ctx, &in, &pf, b)
	b.finish()
	if err != nil {
		return err
	}
	if *fo.k >= p.Cells() {
		return usagef("--k %d: %d cells passed quality control; each has at most %d neighbours", *fo.k, p.Cells(), p.Cells()-1)
	}
	layout, err := readLayout(ctx, layoutPath, p.CellIDs)
	if err != nil {
		return err
	}
	var labels []int32
	if *label != "" {
		c := column(p.Annotations, *label)
		if c == nil || c.Kind != atlas.Categorical {
			return usagef("--label %q: no categorical annotation column of that name", *label)
		}
		labels = c.Codes
	}
	scores, err := quality.Fidelity(ctx, p.Features, layout, fo.options(pf.seed, pf.threads, labels))
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
		err := pipeline.Graph(ctx, p, stageReporter(b))
		b.finish()
		if err != nil {
			return err
		}
		kl, err := embed.Divergence(ctx, p.P, layout, *tail, pf.threads)
		if err != nil {
			return err
		}
		fmt.Fprintf(stdout, "kl_divergence %.6f\n", kl)
	}
	if in := p.Settings.Integrate; *mixing == "" && in.On() {
		*mixing = in.Columns[0]
	}
	if *mixing != "" {
		m, err := pipeline.Mixing(ctx, p, layout, *mixing, *label, fo.mixingOptions(pf.seed, pf.threads))
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

// options returns the options of quality.Fidelity: the sample drawn with the
// atlas's seed, as the window draws it.
func (f fidelityOpts) options(seed int64, threads int, labels []int32) quality.FidelityOptions {
	return quality.FidelityOptions{Sample: *f.sample, Seed: seed, K: *f.k, Threads: threads, Labels: labels}
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
