package cli

import (
	"fmt"
	"io"
	"strconv"

	"lodestone/compute/atlas"
	"lodestone/compute/neighbors"
	"lodestone/compute/pipeline"
	"lodestone/compute/quality"
	"lodestone/internal/atomicfile"
)

func init() {
	register("score", "print the fidelity scores of a map (kNN preservation, trustworthiness, label accuracy)", runScore)
	register("cluster", "find Leiden clusters on the neighbour graph and write them as CSV", runCluster)
}

func runScore(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("score", "--in PATH [--meta FILE] --layout layout.csv [--label COLUMN] [--k 15] [flags]", stderr)
	var in inputFlags
	var pf prepFlags
	in.register(fs)
	pf.register(fs)
	layoutPath := fs.String("layout", "", "the map to score: CSV with header id,x,y")
	label := fs.String("label", "", "a categorical annotation column: also score how well the map's neighbours predict it")
	k := fs.Int("k", 15, "neighbours compared")
	sampleSize := fs.Int("sample", 5000, "cells the scores are computed on (a seeded random sample)")
	quiet := fs.Bool("quiet", true, "print no progress")
	if err := fs.parse(args); err != nil {
		return err
	}
	if *layoutPath == "" {
		return usagef("--layout is required")
	}
	if *k < 1 || *k > neighbors.MaxK || *sampleSize < 2 {
		return usagef("--k must be 1 … %d and --sample at least 2", neighbors.MaxK)
	}
	ctx, stop := interruptible()
	defer stop()
	b := newBar(stderr, *quiet)
	s, err := pf.settings()
	if err != nil {
		return err
	}
	d, err := in.load(ctx, b)
	if err != nil {
		return err
	}
	p, err := pipeline.Features(ctx, d, s, stageReporter(b))
	b.finish()
	if err != nil {
		return err
	}
	layout, err := readLayout(ctx, *layoutPath, p.CellIDs)
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
	sample := quality.Sample(p.Cells(), *sampleSize, pf.seed)
	kept, err := quality.KNNPreservation(ctx, p.Features, layout, *k, sample, pf.threads)
	if err != nil {
		return err
	}
	trust, err := quality.Trustworthiness(p.Features, layout, *k, sample)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "knn_preservation %.6f\n", kept)
	fmt.Fprintf(stdout, "trustworthiness %.6f\n", trust)
	if labels != nil {
		acc, err := quality.LabelAccuracy(layout, labels, *k, sample)
		if err != nil {
			return err
		}
		fmt.Fprintf(stdout, "label_accuracy %.6f\n", acc)
	}
	return nil
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

func runCluster(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("cluster", "--in PATH [--resolution 1] [--k 15] --out clusters.csv [flags]", stderr)
	var in inputFlags
	var pf prepFlags
	in.register(fs)
	pf.register(fs)
	out := fs.String("out", "", "CSV file to write, with header id,cluster")
	resolution := fs.Float64("resolution", 1, "resolution γ of the modularity: larger values give more, smaller clusters")
	k := fs.Int("k", 15, "neighbours of each cell in the graph that is clustered")
	quiet := fs.Bool("quiet", false, "print no progress")
	if err := fs.parse(args); err != nil {
		return err
	}
	if *out == "" {
		return usagef("--out is required")
	}
	if *resolution <= 0 || *k < 1 || *k > neighbors.MaxK {
		return usagef("--resolution must be positive and --k 1 … %d", neighbors.MaxK)
	}
	ctx, stop := interruptible()
	defer stop()
	b := newBar(stderr, *quiet)
	defer b.finish()
	s, err := pf.settings()
	if err != nil {
		return err
	}
	d, err := in.load(ctx, b)
	if err != nil {
		return err
	}
	p, err := pipeline.Features(ctx, d, s, stageReporter(b))
	if err != nil {
		return err
	}
	labels, q, err := pipeline.Clusters(ctx, p, *k, *resolution, func(done, total int64) { b.report("clusters", done, total) })
	if err != nil {
		return err
	}
	b.finish()
	if err := atomicfile.Write(*out, func(w io.Writer) error {
		if _, err := io.WriteString(w, "id,cluster\n"); err != nil {
			return err
		}
		for i, id := range p.CellIDs {
			line := appendCSVField(nil, id)
			line = append(line, ',')
			line = strconv.AppendInt(line, int64(labels[i])+1, 10)
			line = append(line, '\n')
			if _, err := w.Write(line); err != nil {
				return err
			}
		}
		return nil
	}); err != nil {
		return err
	}
	n := 0
	for _, l := range labels {
		n = max(n, int(l)+1)
	}
	fmt.Fprintf(stdout, "%d clusters, modularity %.4f, written to %s\n", n, q, *out)
	return nil
}
