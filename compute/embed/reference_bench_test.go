package embed

import (
	"context"
	"encoding/binary"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"lodestone/compute/affinity"
	"lodestone/compute/neighbors"
	"lodestone/compute/quality"
	"lodestone/compute/synth"
	"lodestone/internal/cputime"
	"lodestone/internal/pyref"
)

// referenceTSNE runs scikit-learn's Barnes–Hut t-SNE with its defaults
// (perplexity 30, PCA initialisation, learning rate "auto", 1,000
// iterations; random_state 0) on the features in path (rows × 50
// little-endian float32) and prints the seconds fit_transform took, its KL
// divergence, and the layout.
const referenceTSNE = `
import sys, time, numpy as np
from sklearn.manifold import TSNE
x = np.fromfile(sys.argv[1], dtype='<f4').reshape(-1, int(sys.argv[2]))
t = time.time()
tsne = TSNE(n_components=2, perplexity=30.0, init="pca", learning_rate="auto", n_iter=1000, method="barnes_hut", random_state=0)
y = tsne.fit_transform(x)
print("%.6f %.6f" % (time.time() - t, tsne.kl_divergence_))
print(" ".join("%.9g" % v for v in y.ravel()))
`

// BenchmarkVersusReference times, in one run of the benchmark, the whole
// path from features to map for the 50-D mixture of 20 clusters
// (synth.GaussianMixture, seed 1) — ours: neighbours, perplexity-30
// affinities, PCA initialisation and a default run; and scikit-learn 1.2's
// Barnes–Hut t-SNE at its defaults on the same features (referenceTSNE) —
// and reports both times, their ratio (speedup), our processor time, and
// the kNN preservation (k = 15) of both maps as the window scores them
// (quality.Fidelity, 2,000 cells, seed 1). The 70k case takes several
// minutes for the reference; run one size with -bench VersusReference/10k.
func BenchmarkVersusReference(b *testing.B) {
	for _, n := range []int{10000, 70000} {
		b.Run(fmt.Sprintf("%dk", n/1000), func(b *testing.B) {
			pyref.Require(b, "numpy, sklearn")
			ctx := context.Background()
			x, _ := synth.GaussianMixture(n, 50, 20, 1)
			path := filepath.Join(b.TempDir(), "x.f32")
			buf := make([]byte, 0, 4*len(x.Data))
			for _, v := range x.Data {
				buf = binary.LittleEndian.AppendUint32(buf, math.Float32bits(v))
			}
			if err := os.WriteFile(path, buf, 0o644); err != nil {
				b.Fatal(err)
			}
			var ours, theirs time.Duration
			var layout []float32
			var kl float64
			start := cputime.Used()
			for i := 0; i < b.N; i++ {
				t0 := time.Now()
				g, err := neighbors.Find(ctx, x, neighbors.Options{K: 90, Seed: 1})
				if err != nil {
					b.Fatal(err)
				}
				P, err := affinity.Perplexity(ctx, g, 30, 0)
				if err != nil {
					b.Fatal(err)
				}
				init, err := InitPCA(x)
				if err != nil {
					b.Fatal(err)
				}
				if layout, err = Run(ctx, P, init, DefaultParams(), func(s Snapshot) { kl = s.KL }); err != nil {
					b.Fatal(err)
				}
				ours += time.Since(t0)
			}
			cpu := cputime.Used() - start
			b.StopTimer()
			out := pyref.Output(b, "numpy, sklearn", referenceTSNE, path, "50")
			lines := strings.SplitN(string(out), "\n", 2)
			head := strings.Fields(lines[0])
			secs, _ := strconv.ParseFloat(head[0], 64)
			refKL, _ := strconv.ParseFloat(head[1], 64)
			theirs = time.Duration(secs * float64(time.Second))
			var ref []float32
			for _, f := range strings.Fields(lines[1]) {
				v, err := strconv.ParseFloat(f, 32)
				if err != nil {
					b.Fatal(err)
				}
				ref = append(ref, float32(v))
			}
			o := quality.FidelityOptions{Seed: 1}
			fo, err := quality.Fidelity(ctx, x, layout, o)
			if err != nil {
				b.Fatal(err)
			}
			fr, err := quality.Fidelity(ctx, x, ref, o)
			if err != nil {
				b.Fatal(err)
			}
			per := ours.Seconds() / float64(b.N)
			b.ReportMetric(per, "ours-s")
			b.ReportMetric(cpu.Seconds()/float64(b.N), "ours-cpu-s")
			b.ReportMetric(theirs.Seconds(), "reference-s")
			b.ReportMetric(theirs.Seconds()/per, "speedup")
			b.ReportMetric(fo.KNN, "knn15")
			b.ReportMetric(fr.KNN, "reference-knn15")
			b.Logf("%d points: ours %.2f s (KL %.4f, kNN kept %.4f, trust %.4f, dCor %.3f); scikit-learn %.1f s (its KL %.4f, kNN kept %.4f, trust %.4f, dCor %.3f)",
				n, per, kl, fo.KNN, fo.Trust, fo.DCor, theirs.Seconds(), refKL, fr.KNN, fr.Trust, fr.DCor)
		})
	}
}
