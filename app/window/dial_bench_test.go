package window

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"sync"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	fynecanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/test"

	"lodestone/app/live"
	lcanvas "lodestone/canvas"
	"lodestone/compute/affinity"
	"lodestone/compute/atlas"
	"lodestone/compute/embed"
	"lodestone/compute/neighbors"
	"lodestone/compute/pipeline"
	"lodestone/compute/sparse"
	"lodestone/compute/synth"
)

// dialBench is a finished map of a generated atlas for the dial
// benchmarks: a 50-D Gaussian mixture of 20 clusters, perplexity 30 on 90
// neighbours, 750 iterations at attraction 1.
type dialBench struct {
	x      *atlas.Dense
	labels []int32
	P      *sparse.CSR
	init   []float32
	layout []float32
}

var dialBenches sync.Map // cells → *dialBench

// setupDialBench returns the finished map of n cells. Making it takes
// minutes at 200,000 cells, so its affinities and layouts are kept in
// $TMPDIR/lodestone-dial-bench, where later runs read them.
func setupDialBench(b *testing.B, n int) *dialBench {
	b.Helper()
	if v, ok := dialBenches.Load(n); ok {
		return v.(*dialBench)
	}
	ctx := context.Background()
	x, labels := synth.GaussianMixture(n, 50, 20, 1)
	d := &dialBench{x: x, labels: labels}
	path := filepath.Join(os.TempDir(), "lodestone-dial-bench", fmt.Sprintf("%d.bin", n))
	if err := d.read(path); err != nil {
		b.Logf("making the %d-cell map (minutes; kept in %s): %v", n, path, err)
		g, err := neighbors.Find(ctx, x, neighbors.Options{K: 90, Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		if d.P, err = affinity.Perplexity(ctx, g, 30, 0); err != nil {
			b.Fatal(err)
		}
		if d.init, err = embed.InitPCA(x); err != nil {
			b.Fatal(err)
		}
		opt := &live.TSNE{P: d.P, Seed: 1}
		if d.layout, err = opt.Run(ctx, d.init, live.RunOptions{Attraction: 1, Iterations: embed.DefaultIterations, Early: true}, nil); err != nil {
			b.Fatal(err)
		}
		if err := d.write(path); err != nil {
			b.Logf("could not keep the map: %v", err)
		}
	}
	dialBenches.Store(n, d)
	return d
}

func (d *dialBench) write(path string) error {
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return err
	}
	f, err := os.Create(path + ".tmp")
	if err != nil {
		return err
	}
	P := d.P
	for _, v := range []any{int64(P.Rows), int64(P.NNZ()), P.RowPtr, P.ColIdx, P.Val, d.init, d.layout} {
		if err := binary.Write(f, binary.LittleEndian, v); err != nil {
			f.Close()
			return err
		}
	}
	if err := f.Close(); err != nil {
		return err
	}
	return os.Rename(path+".tmp", path)
}

func (d *dialBench) read(path string) error {
	f, err := os.Open(path)
	if err != nil {
		return err
	}
	defer f.Close()
	var h [2]int64
	if err := binary.Read(f, binary.LittleEndian, &h); err != nil {
		return err
	}
	n, nnz := int(h[0]), int(h[1])
	if n != d.x.Rows {
		return errors.New("kept map of another size")
	}
	P := &sparse.CSR{Rows: n, Cols: n, RowPtr: make([]int64, n+1), ColIdx: make([]int32, nnz), Val: make([]float32, nnz)}
	d.init, d.layout = make([]float32, 2*n), make([]float32, 2*n)
	for _, v := range []any{P.RowPtr, P.ColIdx, P.Val, d.init, d.layout} {
		if err := binary.Read(f, binary.LittleEndian, v); err != nil {
			return err
		}
	}
	if _, err := f.Read(make([]byte, 1)); err != io.EOF {
		return errors.New("kept map longer than expected")
	}
	d.P = P
	return nil
}

// atlas returns the atlas as the window holds it: a table of 50 features
// (used as they are), the cluster labels as an annotation column, and its
// preparation with the affinities and initial layout.
func (d *dialBench) atlas() (*atlas.Dataset, *pipeline.Prepared) {
	n := d.x.Rows
	ids := make([]string, n)
	for i := range ids {
		ids[i] = fmt.Sprintf("cell-%d", i)
	}
	levels := make([]string, 20)
	for i := range levels {
		levels[i] = fmt.Sprintf("cluster %d", i+1)
	}
	features := make([]string, d.x.Cols)
	for j := range features {
		features[j] = fmt.Sprintf("PC%d", j+1)
	}
	cols := []atlas.Column{{Name: "cluster", Levels: levels, Codes: d.labels}}
	s := pipeline.Default()
	s.Threads = 2
	return &atlas.Dataset{Name: "generated", CellIDs: ids, GeneIDs: features, GeneSymbols: features, Table: d.x, Annotations: cols},
		&pipeline.Prepared{Settings: s, CellIDs: ids, Features: d.x, P: d.P, Init: d.init, Annotations: cols}
}

// turnResult is what one turn of the dial took.
type turnResult struct {
	first      time.Duration // to the first frame of the new run (drawn, when the map draws)
	settled    time.Duration // to the end of the run (drawn, when the map draws)
	iterations int           // iterations the run did
	running    time.Duration // the run's own time
	frames     int           // frames drawn
	drawCost   time.Duration // the pacer's mean cost of a frame at the end
	prepared   time.Duration // preparing the turns while the map stood still (engine alone)
}

// BenchmarkDialTurn200k turns the dial of a finished map of 200,000 cells
// from 1 to 4.2, as a user does, and reports the time to the first new
// frame (first-ms), to the end of the run (settled-s), and the optimiser's
// iterations per second (it/s), with the window's map widget drawing every
// frame the window shows ("window": the real atlas view on Fyne's software
// test painter, which paints the whole window per frame) and without any
// drawing ("engine"). Each round turns the engine alone, then the window,
// so that both meet the same load on a shared machine; "both" reports the
// window's speed as a share of the engine's (window-speed-%, the median of
// the rounds' ratios).
func BenchmarkDialTurn200k(b *testing.B) { benchmarkDialTurn(b, 200000) }

// BenchmarkDialTurn1M is BenchmarkDialTurn200k with 1,000,000 cells (its
// map takes half an hour to make the first time, and 3 GB).
func BenchmarkDialTurn1M(b *testing.B) { benchmarkDialTurn(b, 1000000) }

func benchmarkDialTurn(b *testing.B, n int) {
	d := setupDialBench(b, n)
	history := []live.Step{{Kind: live.Fresh, Attraction: 1, Iterations: embed.DefaultIterations, Done: embed.DefaultIterations, Setting: 30}}
	b.Run("both", func(b *testing.B) {
		var engine, window []turnResult
		var share []float64
		for i := 0; i < b.N; i++ {
			e := turnEngine(b, d, history)
			w := turnWindow(b, d, history)
			engine, window = append(engine, e), append(window, w)
			share = append(share, 100*e.running.Seconds()/float64(e.iterations)*float64(w.iterations)/w.running.Seconds())
		}
		reportTurns(b, "engine-", engine)
		reportTurns(b, "window-", window)
		b.ReportMetric(median(share), "window-speed-%")
	})
}

// turnLimit is how long a benchmarked turn may take.
const turnLimit = 10 * time.Minute

// benchTurn is the turn the benchmarks make: from 1 to 4.2, at most 500
// iterations.
const (
	benchTurnTo         = 4.2
	benchTurnIterations = live.WarmIterations
)

func turnEngine(b *testing.B, d *dialBench, history []live.Step) turnResult {
	var mu sync.Mutex
	var firstAt time.Time
	done := make(chan struct{})
	var e *live.Engine
	e = live.New(&live.TSNE{P: d.P, Seed: 1, Threads: 2}, 30, d.init, func() {
		_, st := e.Latest()
		if st.Runs == 0 {
			return
		}
		mu.Lock()
		defer mu.Unlock()
		if st.Iteration > 0 && firstAt.IsZero() {
			firstAt = time.Now()
		}
		if !st.Running && done != nil {
			close(done)
			done = nil
		}
	})
	prepStart := time.Now()
	e.SetLayout(d.layout, history)
	// The user looks at the map before turning the dial: the engine
	// prepares the turns meanwhile.
	e.WaitPrepared()
	prepared := time.Since(prepStart)
	ended := done
	start := time.Now()
	e.Turn(benchTurnTo, benchTurnIterations)
	select {
	case <-ended:
	case <-time.After(turnLimit):
		b.Fatal("the turn did not end")
	}
	end := time.Now()
	e.Wait()
	_, st := e.Latest()
	mu.Lock()
	defer mu.Unlock()
	return turnResult{first: firstAt.Sub(start), settled: end.Sub(start), iterations: st.Iteration, running: st.Elapsed,
		prepared: prepared}
}

func turnWindow(b *testing.B, d *dialBench, history []live.Step) turnResult {
	a := newUIApp()
	defer a.Quit()
	var u *ui
	var v *atlasView
	data, prep := d.atlas()
	onUI(func() {
		u = newUI(a, chooserAnswering(), Options{Threads: 2})
		u.showAtlas(source{path: "generated"}, data, prep)
		v = u.atlas
		v.run.show(d.layout, history, 1)
	})
	defer func() {
		onUI(u.closeAtlas)
		v.jobs.wait()
		v.run.engine.Wait()
	}()
	// The test driver paints only when asked: draw the map whenever it has
	// a new frame, as the real driver does at its next tick. (Its software
	// painter, which paints the whole window a hundred times slower than a
	// GPU, stands in for no real screen; the window's own cost beside the
	// map is measured under Xvfb.)
	var mu sync.Mutex
	var firstAt, endAt time.Time
	frames, turned := 0, false
	onUI(func() {
		v.st.on(topicFrame, func() {
			// Queued behind the frame, as the real driver paints at its
			// next tick.
			go fyne.Do(func() {
				drawMap(v.mapP.mapView)
				if !turned {
					return
				}
				mu.Lock()
				defer mu.Unlock()
				frames++
				if v.st.run.Runs == 2 && v.st.run.Iteration > 0 && firstAt.IsZero() {
					firstAt = time.Now()
				}
				if v.st.run.Runs == 2 && !v.st.run.Running && endAt.IsZero() {
					endAt = time.Now()
				}
			})
		})
		u.win.Canvas().Capture() // lays the window out
		drawMap(v.mapP.mapView)
	})
	waitForScores(b, v)
	v.run.engine.WaitPrepared()
	var start time.Time
	onUI(func() {
		turned = true
		start = time.Now()
		v.run.turnTo(benchTurnTo)
	})
	deadline := time.Now().Add(turnLimit)
	for {
		var ended bool
		onUI(func() { ended = v.st.run.Runs == 2 && !v.st.run.Running })
		if ended {
			break
		}
		if time.Now().After(deadline) {
			b.Fatal("the turn did not end")
		}
		time.Sleep(20 * time.Millisecond)
	}
	var st live.Status
	onUI(func() { st = v.st.run })
	mu.Lock()
	defer mu.Unlock()
	if endAt.IsZero() {
		endAt = time.Now()
	}
	return turnResult{first: firstAt.Sub(start), settled: endAt.Sub(start), iterations: st.Iteration,
		running: st.Elapsed, frames: frames, drawCost: v.run.pacer.Cost()}
}

// drawMap draws the map's points as the window's painter does when their
// image is due: through the renderer's raster (the first of its objects),
// at the widget's size.
func drawMap(m *lcanvas.Map) {
	r := test.WidgetRenderer(m).Objects()[0].(*fynecanvas.Raster)
	s := m.Size()
	r.Generator(int(s.Width), int(s.Height))
}

// waitForScores waits until the map shown has its scores, so that scoring
// does not run beside the turn.
func waitForScores(b *testing.B, v *atlasView) {
	deadline := time.Now().Add(turnLimit)
	for {
		var ok bool
		onUI(func() { ok = v.st.scoresCurrent() })
		if ok {
			return
		}
		if time.Now().After(deadline) {
			b.Fatal("the map was not scored")
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// reportTurns reports the medians of the turns, each metric's unit
// prefixed with prefix.
func reportTurns(b *testing.B, prefix string, res []turnResult) {
	med := func(f func(turnResult) float64) float64 {
		v := make([]float64, len(res))
		for i, r := range res {
			v[i] = f(r)
		}
		return median(v)
	}
	b.ReportMetric(med(func(r turnResult) float64 { return float64(r.first.Microseconds()) / 1000 }), prefix+"first-ms")
	b.ReportMetric(med(func(r turnResult) float64 { return r.settled.Seconds() }), prefix+"settled-s")
	b.ReportMetric(med(func(r turnResult) float64 { return float64(r.iterations) }), prefix+"iterations")
	b.ReportMetric(med(func(r turnResult) float64 { return float64(r.iterations) / r.running.Seconds() }), prefix+"it/s")
	if res[0].prepared > 0 {
		b.ReportMetric(med(func(r turnResult) float64 { return float64(r.prepared.Microseconds()) / 1000 }), prefix+"prepare-ms")
	}
	if res[0].frames > 0 {
		b.ReportMetric(med(func(r turnResult) float64 { return float64(r.frames) / r.running.Seconds() }), prefix+"frames/s")
		b.ReportMetric(med(func(r turnResult) float64 { return float64(r.drawCost.Microseconds()) / 1000 }), prefix+"frame-ms")
	}
}

// median returns the median of v (the mean of the middle two for an even
// count); v is sorted in place.
func median(v []float64) float64 {
	slices.Sort(v)
	n := len(v)
	if n%2 == 1 {
		return v[n/2]
	}
	return (v[n/2-1] + v[n/2]) / 2
}
