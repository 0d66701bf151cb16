package cli

import (
	"bufio"
	"bytes"
	"compress/gzip"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"time"

	"lodestone/app/live"
	"lodestone/app/paint"
	"lodestone/compute/ingest"
	"lodestone/compute/markers"
	"lodestone/compute/pipeline"
	"lodestone/internal/memstat"
	"lodestone/sampledata"
)

// The counts section times the whole run from a counts file on disk, as
// `lodestone embed --in DIR` makes it: reading, each preparation stage, the
// neighbours, the affinities and the embedding, then painting by a gene and
// ranking markers. The example atlas is written once into a folder per size
// (reused when present); each atlas is analysed in a process of its own, so
// that the peak resident set reported is that of the analysis alone.

// benchGenes returns the genes of the counts atlas of n cells: 20,000 up to
// 200,000 cells and 30,000 above (the sizes the targets name), unless given.
func benchGenes(n, given int) int {
	switch {
	case given > 0:
		return given
	case n <= 200_000:
		return 20_000
	}
	return 30_000
}

// atlasDir returns the folder of the counts atlas of the given size and
// seed.
func atlasDir(data string, cells, genes int, seed int64, gz bool) string {
	dir := filepath.Join(data, fmt.Sprintf("example-%dx%d-s%d", cells, genes, seed))
	if gz {
		dir += "-gz"
	}
	return dir
}

// atlasFiles are the files of a written atlas; the counts file is
// counts.mtx or counts.mtx.gz.
var atlasFiles = []string{"cells.tsv", "genes.tsv", "annotations.tsv"}

// atlasReady reports whether dir holds a complete atlas.
func atlasReady(dir string, gz bool) bool {
	names := append([]string{countsName(gz)}, atlasFiles...)
	for _, n := range names {
		if fi, err := os.Stat(filepath.Join(dir, n)); err != nil || !fi.Mode().IsRegular() {
			return false
		}
	}
	return true
}

func countsName(gz bool) string {
	if gz {
		return "counts.mtx.gz"
	}
	return "counts.mtx"
}

// ensureAtlas writes the example atlas of the given size, drawn with the
// given seed, into its folder unless it is there already, and returns the
// folder. A compressed atlas is
// made from the plain one. The files are written into a folder beside the
// final one, renamed when complete, so an interrupted run leaves no atlas
// that looks complete.
func ensureAtlas(ctx context.Context, data string, cells, genes int, seed int64, gz bool, note func(string)) (string, error) {
	dir := atlasDir(data, cells, genes, seed, gz)
	if atlasReady(dir, gz) {
		note(fmt.Sprintf("reusing %s", dir))
		return dir, nil
	}
	if err := os.MkdirAll(data, 0o755); err != nil {
		return "", err
	}
	part := dir + ".partial"
	if err := os.RemoveAll(part); err != nil {
		return "", err
	}
	if err := os.MkdirAll(part, 0o755); err != nil {
		return "", err
	}
	start := time.Now()
	if gz {
		plain, err := ensureAtlas(ctx, data, cells, genes, seed, false, note)
		if err != nil {
			return "", err
		}
		note(fmt.Sprintf("compressing %s into %s", filepath.Join(plain, "counts.mtx"), dir))
		if err := gzipFile(ctx, filepath.Join(part, "counts.mtx.gz"), filepath.Join(plain, "counts.mtx")); err != nil {
			return "", err
		}
		for _, n := range atlasFiles {
			if err := copyFile(filepath.Join(part, n), filepath.Join(plain, n)); err != nil {
				return "", err
			}
		}
	} else {
		note(fmt.Sprintf("writing the example atlas of %d cells × %d genes into %s", cells, genes, dir))
		opt := sampledata.DefaultOptions()
		opt.Cells, opt.Genes, opt.Seed = cells, genes, seed
		if err := writeAtlas(ctx, part, opt); err != nil {
			return "", err
		}
	}
	if err := os.Rename(part, dir); err != nil {
		return "", err
	}
	note(fmt.Sprintf("written in %.0f s", time.Since(start).Seconds()))
	return dir, nil
}

// writeAtlas writes the example atlas of opt into dir as it is generated,
// batch by batch (sampledata.Stream), so that an atlas of any size is written
// in little memory: counts.mtx (the size line is written with room for the
// entry count and completed at the end), cells.tsv, genes.tsv and
// annotations.tsv.
func writeAtlas(ctx context.Context, dir string, opt sampledata.Options) error {
	f, err := os.Create(filepath.Join(dir, "counts.mtx"))
	if err != nil {
		return err
	}
	defer f.Close()
	w := bufio.NewWriterSize(f, 4<<20)
	const banner = "%%MatrixMarket matrix coordinate integer general\n"
	sizeLine := func(n int64) string { return fmt.Sprintf("%d %d %20d\n", opt.Cells, opt.Genes, n) }
	w.WriteString(banner + sizeLine(0))
	var nnz int64
	buf := make([]byte, 0, 64)
	d, _, err := sampledata.Stream(ctx, opt, func(r sampledata.Rows) error {
		for i := 0; i+1 < len(r.RowPtr); i++ {
			for k := r.RowPtr[i]; k < r.RowPtr[i+1]; k++ {
				buf = ingest.AppendEntry(buf[:0], r.First+i, int(r.Cols[k]), r.Vals[k])
				w.Write(buf)
			}
		}
		nnz += r.RowPtr[len(r.RowPtr)-1]
		return nil
	})
	if err != nil {
		return err
	}
	if err := w.Flush(); err != nil {
		return err
	}
	if _, err := f.WriteAt([]byte(sizeLine(nnz)), int64(len(banner))); err != nil {
		return err
	}
	if err := f.Close(); err != nil {
		return err
	}
	files := []struct {
		name  string
		write func(io.Writer) error
	}{
		{"cells.tsv", func(w io.Writer) error { return ingest.WriteLabels(w, d.CellIDs, nil) }},
		{"genes.tsv", func(w io.Writer) error { return ingest.WriteLabels(w, d.GeneIDs, d.GeneSymbols) }},
		{"annotations.tsv", func(w io.Writer) error { return ingest.WriteAnnotations(w, d.CellIDs, d.Annotations) }},
	}
	for _, fl := range files {
		out, err := os.Create(filepath.Join(dir, fl.name))
		if err != nil {
			return err
		}
		bw := bufio.NewWriter(out)
		err = fl.write(bw)
		if err == nil {
			err = bw.Flush()
		}
		if e := out.Close(); err == nil {
			err = e
		}
		if err != nil {
			return err
		}
	}
	return nil
}

// gzipBlock is the amount of text compressed into one gzip member.
const gzipBlock = 32 << 20

// gzipFile compresses src into dst as a series of gzip members (RFC 1952,
// 2.2), one per 32 MiB of text, compressed on all processors and written in
// order.
func gzipFile(ctx context.Context, dst, src string) error {
	in, err := os.Open(src)
	if err != nil {
		return err
	}
	defer in.Close()
	out, err := os.Create(dst)
	if err != nil {
		return err
	}
	defer out.Close()
	type job struct {
		text []byte
		done chan []byte
	}
	threads := max(1, min(8, runtime.GOMAXPROCS(0)))
	jobs := make(chan job, threads)
	order := make(chan job, threads)
	var wg sync.WaitGroup
	for range threads {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := range jobs {
				var b bytes.Buffer
				zw := gzip.NewWriter(&b)
				zw.Write(j.text)
				zw.Close()
				j.done <- b.Bytes()
			}
		}()
	}
	var werr error
	writer := make(chan struct{})
	go func() {
		defer close(writer)
		for j := range order {
			b := <-j.done
			if werr == nil {
				_, werr = out.Write(b)
			}
		}
	}()
	var rerr error
	for rerr == nil && ctx.Err() == nil {
		text := make([]byte, gzipBlock)
		n, err := io.ReadFull(in, text)
		if n > 0 {
			j := job{text: text[:n], done: make(chan []byte, 1)}
			order <- j
			jobs <- j
		}
		if err == io.EOF || err == io.ErrUnexpectedEOF {
			break
		}
		rerr = err
	}
	close(jobs)
	close(order)
	wg.Wait()
	<-writer
	if rerr != nil {
		return rerr
	}
	if werr != nil {
		return werr
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	return out.Close()
}

func copyFile(dst, src string) error {
	in, err := os.Open(src)
	if err != nil {
		return err
	}
	defer in.Close()
	out, err := os.Create(dst)
	if err != nil {
		return err
	}
	if _, err := io.Copy(out, in); err != nil {
		out.Close()
		return err
	}
	return out.Close()
}

// benchCounts runs the counts section: for each size, the atlas is made
// ready and analysed by a child process (`bench --run DIR`), whose report
// is printed as a table.
func benchCounts(ctx context.Context, w io.Writer, sizes []int, data string, genes int, gz bool, iterations, threads int, seed int64) error {
	exe, err := os.Executable()
	if err != nil {
		return err
	}
	fmt.Fprintf(w, "counts: the example atlas as Matrix Market files in %s, each analysed by a process of its own\n", data)
	fmt.Fprintf(w, "(lodestone embed's stages with the default settings and %d iterations; then painting by a gene and markers)\n", iterations)
	for _, n := range sizes {
		g := benchGenes(n, genes)
		dir, err := ensureAtlas(ctx, data, n, g, seed, gz, func(s string) { fmt.Fprintf(w, "  %s\n", s) })
		if err != nil {
			return err
		}
		args := []string{"bench", "--run", dir, "--iterations", strconv.Itoa(iterations), "--threads", strconv.Itoa(threads), "--seed", strconv.FormatInt(seed, 10)}
		cmd := exec.CommandContext(ctx, exe, args...)
		var out bytes.Buffer
		cmd.Stdout = &out
		cmd.Stderr = os.Stderr
		runErr := cmd.Run()
		printCountsReport(w, n, g, dir, out.String())
		if runErr != nil {
			return fmt.Errorf("bench: the analysis of %s failed: %w", dir, runErr)
		}
	}
	fmt.Fprintln(w)
	return nil
}

// printCountsReport prints the lines of a child's report as a table.
func printCountsReport(w io.Writer, cells, genes int, dir, report string) {
	fmt.Fprintf(w, "\n%d cells × %d genes (%s)\n", cells, genes, dir)
	fmt.Fprintf(w, "  %-52s %10s %12s %12s\n", "stage", "time", "resident", "peak")
	for _, line := range strings.Split(strings.TrimSpace(report), "\n") {
		f := strings.Split(line, "\t")
		switch {
		case len(f) == 5 && f[0] == "stage":
			secs, _ := strconv.ParseFloat(f[2], 64)
			rss, _ := strconv.ParseInt(f[3], 10, 64)
			peak, _ := strconv.ParseInt(f[4], 10, 64)
			fmt.Fprintf(w, "  %-52s %10s %12s %12s\n", f[1], formatSeconds(secs), memstat.Format(rss), memstat.Format(peak))
		case len(f) == 2 && f[0] == "note":
			fmt.Fprintf(w, "  %s\n", f[1])
		case line != "":
			fmt.Fprintf(w, "  %s\n", line)
		}
	}
}

func formatSeconds(s float64) string {
	if s < 1 {
		return fmt.Sprintf("%.0f ms", 1000*s)
	}
	return fmt.Sprintf("%.1f s", s)
}

// benchCountsRun analyses the atlas in dir in this process and writes one
// tab-separated line per stage to w: "stage", its name, seconds, resident
// set at its end and peak resident set so far (bytes); "note" lines say
// what was measured.
func benchCountsRun(ctx context.Context, w io.Writer, dir string, iterations, threads int, seed int64) error {
	start := time.Now()
	last := start
	var mu sync.Mutex
	mark := func(name string) {
		m := memstat.Read()
		now := time.Now()
		fmt.Fprintf(w, "stage\t%s\t%.3f\t%d\t%d\n", name, now.Sub(last).Seconds(), m.Resident, m.Peak)
		last = now
	}
	labels := map[string]string{}
	for _, s := range pipeline.Stages {
		labels[s.Name] = s.Label
	}
	current := ""
	report := func(stage string, done, total int64) {
		mu.Lock()
		defer mu.Unlock()
		if stage != current {
			if current != "" {
				mark(labels[current])
			}
			current = stage
		}
	}
	d, err := ingest.Open(ctx, dir, ingest.Options{})
	if err != nil {
		return err
	}
	if d.Counts == nil {
		return errors.New("bench: the atlas holds no counts")
	}
	fi, _ := os.Stat(filepath.Join(dir, countsName(strings.HasSuffix(dir, "-gz"))))
	size := int64(0)
	if fi != nil {
		size = fi.Size()
	}
	fmt.Fprintf(w, "note\t%d counts, %s on disk, held in %s (%.1f bytes a count)\n", d.Counts.NNZ(),
		memstat.Format(size), memstat.Format(d.Counts.Bytes()), float64(d.Counts.Bytes())/float64(max(1, d.Counts.NNZ())))
	mark("reading the files")
	s := pipeline.Default()
	s.Threads, s.Seed = threads, seed
	p, err := pipeline.Features(ctx, d, s, report)
	if err != nil {
		return err
	}
	if err := pipeline.Graph(ctx, p, report); err != nil {
		return err
	}
	mu.Lock()
	mark(labels[current])
	current = ""
	mu.Unlock()
	opt := &live.TSNE{P: p.P, Seed: seed, Threads: threads}
	if _, err := opt.Run(ctx, p.Init, live.RunOptions{Attraction: 1, Iterations: iterations, Early: true}, nil); err != nil {
		return err
	}
	mark(fmt.Sprintf("embedding, %d iterations", iterations))
	m := memstat.Read()
	fmt.Fprintf(w, "stage\t%s\t%.3f\t%d\t%d\n", "whole run (read → embedding)", time.Since(start).Seconds(), m.Resident, m.Peak)

	// Painting by a gene: the gene stored in the most cells (the slowest
	// to read) and a gene of median reach, five times each.
	if p.Expression == nil {
		return nil
	}
	n, g := p.Expression.Dims()
	counts := make([]int, g)
	var cols []int32
	for i := 0; i < n; i += max(1, n/2000) {
		cols, _ = p.Expression.RowCounts(i, cols, nil)
		for _, j := range cols {
			counts[j]++
		}
	}
	order := make([]int, g)
	for j := range order {
		order[j] = j
	}
	sort.SliceStable(order, func(a, b int) bool { return counts[order[a]] > counts[order[b]] })
	for _, c := range []struct {
		what string
		gene int
	}{{"most expressed", order[0]}, {"median", order[g/2]}} {
		times := make([]float64, 5)
		for k := range times {
			t0 := time.Now()
			paint.GenePaint("bench", paint.GeneValues(p.Expression, c.gene))
			times[k] = time.Since(t0).Seconds()
		}
		slices.Sort(times)
		last = time.Now()
		m := memstat.Read()
		fmt.Fprintf(w, "stage\t%s\t%.4f\t%d\t%d\n", "painting by a gene ("+c.what+", median of 5)", times[2], m.Resident, m.Peak)
	}

	// Markers of every tenth cell against the rest, over all genes.
	in := make([]bool, n)
	group := 0
	for i := 0; i < n; i += 10 {
		in[i] = true
		group++
	}
	last = time.Now()
	e, err := markers.NewExpression(ctx, p.Expression)
	if err != nil {
		return err
	}
	mark("markers: preparing the expression")
	if _, err := e.Rank(ctx, in, nil, markers.Options{Threads: threads}); err != nil {
		return err
	}
	mark(fmt.Sprintf("markers: %d cells against %d, %d genes", group, n-group, g))
	return nil
}
