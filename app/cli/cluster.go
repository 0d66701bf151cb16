package cli

import (
	"fmt"
	"io"
	"strconv"

	"lodestone/compute/neighbors"
	"lodestone/compute/pipeline"
	"lodestone/internal/atomicfile"
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
