package cli

import (
	"fmt"
	"io"
	"strconv"

	"lodestone/compute/pipeline"
)

func init() {
	register("cluster", "find Leiden clusters on the neighbour graph and write them as CSV", runCluster)
}

func runCluster(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("cluster", "--in PATH [--resolution 1] [--k 15] --out clusters.csv [flags]", stderr)
	var in inputFlags
	var pf prepFlags
	in.register(fs)
	pf.register(fs)
	var out string
	fs.outputPath(&out, "out", "CSV file to write, with header id,cluster")
	resolution := fs.Float64("resolution", 1, "resolution γ of the modularity: larger values give more, smaller clusters")
	k := fs.Int("k", 15, "neighbours of each cell in the graph that is clustered")
	quiet := fs.Bool("quiet", false, "print no progress")
	if err := fs.parse(args); err != nil {
		return err
	}
	if out == "" {
		return usagef("--out is required")
	}
	pf.neighbors = *k
	ctx, stop := interruptible()
	defer stop()
	b := newBar(stderr, *quiet)
	defer b.finish()
	p, err := features(ctx, &in, &pf, b)
	if err != nil {
		return err
	}
	if *k >= p.Cells() {
		return usagef("--k %d: %d cells passed quality control; each has at most %d neighbours", *k, p.Cells(), p.Cells()-1)
	}
	labels, q, err := pipeline.Clusters(ctx, p, *k, *resolution, func(done, total int64) { b.report("clusters", done, total) })
	if err != nil {
		return err
	}
	b.finish()
	if err := writeOutput(b, "out", out, func(w io.Writer) error {
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
	fmt.Fprintf(stdout, "%d clusters, modularity %.4f, written to %s\n", n, q, out)
	return nil
}
