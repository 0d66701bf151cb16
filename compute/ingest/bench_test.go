package ingest

import (
	"bufio"
	"compress/gzip"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"runtime/metrics"
	"strconv"
	"sync"
	"sync/atomic"
	"testing"
	"time"
)

// Benchmark atlas: 100,000 cells × 2,000 genes, about 10^7 integer counts
// (density 0.05), written as most exports do: genes × cells, entries
// grouped by cell.
const (
	benchCells   = 100000
	benchGenes   = 2000
	benchDensity = 0.05
)

var benchFiles struct {
	once                    sync.Once
	ordered, shuffled, gzip string
	err                     error
}

// benchData writes the benchmark files once into the temporary folder (kept
// between runs) and returns their paths.
func benchData(b *testing.B) (ordered, shuffled, gzipped string) {
	b.Helper()
	f := &benchFiles
	f.once.Do(func() {
		dir := filepath.Join(os.TempDir(), "lodestone-ingest-bench")
		if f.err = os.MkdirAll(dir, 0o755); f.err != nil {
			return
		}
		f.ordered = filepath.Join(dir, "ordered.mtx")
		f.shuffled = filepath.Join(dir, "shuffled.mtx")
		f.gzip = filepath.Join(dir, "ordered.mtx.gz")
		if _, err := os.Stat(f.gzip); err == nil {
			return
		}
		f.err = writeBenchFiles(f.ordered, f.shuffled, f.gzip)
	})
	if f.err != nil {
		b.Fatal(f.err)
	}
	return f.ordered, f.shuffled, f.gzip
}

func writeBenchFiles(ordered, shuffled, gzipped string) error {
	rng := rand.New(rand.NewPCG(11, 12))
	type entry struct{ gene, cell, count int32 }
	var es []entry
	for c := 0; c < benchCells; c++ {
		for g := 0; g < benchGenes; g++ {
			if rng.Float64() < benchDensity {
				// Counts roughly geometric, as UMI counts are.
				n := int32(1)
				for rng.Float64() < 0.4 {
					n++
				}
				es = append(es, entry{int32(g), int32(c), n})
			}
		}
	}
	write := func(path string, es []entry, compress bool) error {
		f, err := os.Create(path)
		if err != nil {
			return err
		}
		defer f.Close()
		var w *bufio.Writer
		var zw *gzip.Writer
		if compress {
			zw = gzip.NewWriter(f)
			w = bufio.NewWriterSize(zw, 1<<20)
		} else {
			w = bufio.NewWriterSize(f, 1<<20)
		}
		fmt.Fprintf(w, "%%%%MatrixMarket matrix coordinate integer general\n%% benchmark counts\n%d %d %d\n", benchGenes, benchCells, len(es))
		var buf []byte
		for _, e := range es {
			buf = strconv.AppendInt(buf[:0], int64(e.gene)+1, 10)
			buf = append(buf, ' ')
			buf = strconv.AppendInt(buf, int64(e.cell)+1, 10)
			buf = append(buf, ' ')
			buf = strconv.AppendInt(buf, int64(e.count), 10)
			buf = append(buf, '\n')
			w.Write(buf)
		}
		if err := w.Flush(); err != nil {
			return err
		}
		if zw != nil {
			if err := zw.Close(); err != nil {
				return err
			}
		}
		return f.Close()
	}
	if err := write(ordered, es, false); err != nil {
		return err
	}
	if err := write(gzipped, es, true); err != nil {
		return err
	}
	rng.Shuffle(len(es), func(a, b int) { es[a], es[b] = es[b], es[a] })
	return write(shuffled, es, false)
}

// peakHeap samples the heap in use every 10 ms until stopped.
type peakHeap struct {
	peak atomic.Uint64
	stop chan struct{}
	done sync.WaitGroup
}

// It reads runtime/metrics, which does not stop the world.
func startPeakHeap() *peakHeap {
	runtime.GC()
	p := &peakHeap{stop: make(chan struct{})}
	p.done.Add(1)
	go func() {
		defer p.done.Done()
		sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
		t := time.NewTicker(10 * time.Millisecond)
		defer t.Stop()
		for {
			metrics.Read(sample)
			if v := sample[0].Value.Uint64(); v > p.peak.Load() {
				p.peak.Store(v)
			}
			select {
			case <-p.stop:
				return
			case <-t.C:
			}
		}
	}()
	return p
}

func (p *peakHeap) finish() uint64 {
	close(p.stop)
	p.done.Wait()
	return p.peak.Load()
}

// benchRead reads the Matrix Market file at path as cells × genes and
// reports MB/s of uncompressed text and the peak heap over the result's
// size.
func benchRead(b *testing.B, path string, textBytes int64) {
	b.SetBytes(textBytes)
	var ratio float64
	for i := 0; i < b.N; i++ {
		f, err := os.Open(path)
		if err != nil {
			b.Fatal(err)
		}
		b.StopTimer()
		ph := startPeakHeap()
		b.StartTimer()
		m, err := ReadMatrixMarket(bg, f, path, MatrixOptions{Transpose: func(MatrixHeader) (bool, error) { return true, nil }})
		b.StopTimer()
		peak := ph.finish()
		f.Close()
		if err != nil {
			b.Fatal(err)
		}
		ratio = float64(peak) / float64(m.Bytes())
		m = nil
		runtime.GC()
		b.StartTimer()
	}
	b.ReportMetric(ratio, "peak/final")
}

func fileSize(b *testing.B, path string) int64 {
	fi, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	return fi.Size()
}

// BenchmarkReadMatrixMarket reads the 100k × 2,000 benchmark atlas:
// entries grouped by cell (no sorting needed), the same shuffled (entries
// moved to their rows and each row sorted), and the grouped file gzip
// compressed. MB/s count uncompressed text.
func BenchmarkReadMatrixMarket(b *testing.B) {
	ordered, shuffled, gzipped := benchData(b)
	text := fileSize(b, ordered)
	b.Run("plain", func(b *testing.B) { benchRead(b, ordered, text) })
	b.Run("shuffled", func(b *testing.B) { benchRead(b, shuffled, text) })
	b.Run("gzip", func(b *testing.B) { benchRead(b, gzipped, text) })
}
