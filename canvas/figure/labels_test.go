package figure

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// bruteMedoid returns the point of members minimising the sum of distances
// to the points of sample (exact slow computation, O(n·m)), ties to the
// first.
func bruteMedoid(layout []float32, members, sample []int) int {
	best, arg := math.Inf(1), -1
	for _, i := range members {
		var s float64
		for _, j := range sample {
			s += math.Hypot(float64(layout[2*i]-layout[2*j]), float64(layout[2*i+1]-layout[2*j+1]))
		}
		if s < best {
			best, arg = s, i
		}
	}
	return arg
}

// Medoids against a brute-force computation: exact medoids for categories
// of at most MedoidSample points (all pairs), the sampled definition for
// larger ones, and for those the sampled centre's sum of distances to all
// the category's points is within 1 % of the exact medoid's.
func TestMedoidsBruteForce(t *testing.T) {
	sizes := []int{1, 2, 17, MedoidSample, MedoidSample + 1, 3000}
	var layout []float32
	var codes []int32
	rng := rand.New(rand.NewPCG(9, 9))
	for c, n := range sizes {
		for i := 0; i < n; i++ {
			// A curved, skewed category: a noisy arc.
			a := 2 * rng.Float64() * rng.Float64()
			layout = append(layout, float32(float64(c)*20+5*math.Cos(a)+0.4*rng.NormFloat64()), float32(5*math.Sin(a)+0.4*rng.NormFloat64()))
			codes = append(codes, int32(c))
		}
	}
	// Shuffle the points so that categories interleave; add a point
	// without a category and one at NaN.
	perm := rng.Perm(len(codes))
	l2, c2 := make([]float32, len(layout)), make([]int32, len(codes))
	for i, p := range perm {
		l2[2*i], l2[2*i+1], c2[i] = layout[2*p], layout[2*p+1], codes[p]
	}
	layout, codes = append(l2, 0, 0, float32(math.NaN()), 0), append(c2, -1, 2)
	k := len(sizes) + 1 // the last category is empty
	got, err := Medoids(context.Background(), layout, codes, k)
	if err != nil {
		t.Fatal(err)
	}
	if got[k-1] != -1 {
		t.Errorf("empty category: got %d, want −1", got[k-1])
	}
	for c, n := range sizes {
		var members []int
		for i, code := range codes {
			if int(code) == c && !math.IsNaN(float64(layout[2*i])) {
				members = append(members, i)
			}
		}
		if len(members) != n {
			t.Fatalf("category %d has %d members, want %d", c, len(members), n)
		}
		sample := members
		if n > MedoidSample {
			sample = nil
			for s := 0; s < MedoidSample; s++ {
				sample = append(sample, members[(2*s+1)*n/(2*MedoidSample)])
			}
		}
		if want := bruteMedoid(layout, members, sample); got[c] != want {
			t.Errorf("category %d (%d points): got %d, brute force %d", c, n, got[c], want)
		}
		if n > MedoidSample {
			exact := bruteMedoid(layout, members, members)
			sum := func(i int) float64 {
				var s float64
				for _, j := range members {
					s += math.Hypot(float64(layout[2*i]-layout[2*j]), float64(layout[2*i+1]-layout[2*j+1]))
				}
				return s
			}
			if a, b := sum(got[c]), sum(exact); a > 1.01*b {
				t.Errorf("category %d: sampled centre's total distance %.1f, exact medoid's %.1f", c, a, b)
			}
		}
	}
}

// Medoids refuses bad input and stops when cancelled.
func TestMedoidsErrors(t *testing.T) {
	ctx := context.Background()
	if _, err := Medoids(ctx, []float32{1, 2, 3}, []int32{0}, 1); !errors.Is(err, ErrOddLength) {
		t.Errorf("odd layout: %v", err)
	}
	if _, err := Medoids(ctx, []float32{1, 2}, []int32{0, 0}, 1); !errors.Is(err, ErrLength) {
		t.Errorf("codes length: %v", err)
	}
	if _, err := Medoids(ctx, []float32{1, 2, 3, 4}, []int32{0, 2}, 2); !errors.Is(err, ErrIndex) {
		t.Errorf("code out of range: %v", err)
	}
	layout, codes, _ := clusters(5000, 3, 1, 3)
	cctx, cancel := context.WithCancel(ctx)
	cancel()
	if _, err := Medoids(cctx, layout, codes, 3); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled: %v", err)
	}
}

// checkLabels checks that no two label boxes overlap and that each lies
// within reach of its anchor.
func checkLabels(t *testing.T, placed []placedLabel, want int) {
	t.Helper()
	if len(placed) != want {
		t.Fatalf("%d labels placed, want %d", len(placed), want)
	}
	for i, a := range placed {
		for _, b := range placed[:i] {
			if ov := a.b.overlap(b.b); ov > 0 {
				t.Errorf("labels %q %v and %q %v overlap by %.2f px²", a.text, a.b, b.text, b.b, ov)
			}
		}
		cx, cy := (a.b.x0+a.b.x1)/2, (a.b.y0+a.b.y1)/2
		if d := math.Hypot((cx-a.ax)/a.b.w(), (cy-a.ay)/a.b.h()); d > labelReach+1e-9 {
			t.Errorf("label %q has moved %.2f box sizes from its anchor, more than %.0f", a.text, d, labelReach)
		}
	}
}

// Labels placed at the categories' medoids: their boxes do not overlap, and
// each stays near its medoid; the first, placed before any other, is
// centred on it. A crowd of labels sharing one anchor spreads out without
// overlaps.
func TestLabelsDoNotOverlap(t *testing.T) {
	const k = 12
	f := testFigure(12000, k)
	layout, codes, _ := clusters(12000, k, 1.5, 1)
	med, err := Medoids(context.Background(), layout, codes, k)
	if err != nil {
		t.Fatal(err)
	}
	for c, i := range med {
		f.Labels = append(f.Labels, Label{Text: "category " + strconv.Itoa(c), X: float64(layout[2*i]), Y: float64(layout[2*i+1])})
	}
	s := Size{WidthPx: 1000, HeightPx: 700}
	sc, err := f.scene(s)
	if err != nil {
		t.Fatal(err)
	}
	ts, _ := newTypesetter()
	placed := layoutLabels(ts, f.Labels, sc.points, s.textPx())
	checkLabels(t, placed, k)
	if b := placed[0].b; (b.x0+b.x1)/2 != placed[0].ax || (b.y0+b.y1)/2 != placed[0].ay {
		t.Errorf("first label %v not centred on its anchor (%.1f, %.1f)", b, placed[0].ax, placed[0].ay)
	}
	for c, p := range placed {
		ax, ay := sc.points.view.ToPixel(f.Labels[c].X, f.Labels[c].Y)
		ax, ay = ax+float64(sc.points.area.Min.X), ay+float64(sc.points.area.Min.Y)
		if p.ax != ax || p.ay != ay {
			t.Errorf("label %d anchored at (%.1f, %.1f), its medoid is drawn at (%.1f, %.1f)", c, p.ax, p.ay, ax, ay)
		}
	}

	crowd := make([]Label, 9)
	for i := range crowd {
		crowd[i] = Label{Text: "crowded label " + strconv.Itoa(i), X: 10, Y: 0}
	}
	checkLabels(t, layoutLabels(ts, crowd, sc.points, s.textPx()), len(crowd))
}

// A label whose anchor lies outside the map is left out; one near the edge
// is pushed inside.
func TestLabelsStayInsideMap(t *testing.T) {
	f := testFigure(2000, 4)
	f.Labels = []Label{{Text: "outside", X: 1e6, Y: 0}, {Text: "a rather long label at the edge", X: 11.5, Y: 0}}
	s := Size{WidthPx: 600, HeightPx: 400}
	sc, err := f.scene(s)
	if err != nil {
		t.Fatal(err)
	}
	ts, _ := newTypesetter()
	placed := layoutLabels(ts, f.Labels, sc.points, s.textPx())
	if len(placed) != 1 || placed[0].text != f.Labels[1].Text {
		t.Fatalf("placed %v, want only the second label", placed)
	}
	a := sc.points.area
	if b := placed[0].b; b.x0 < float64(a.Min.X) || b.x1 > float64(a.Max.X) || b.y0 < float64(a.Min.Y) || b.y1 > float64(a.Max.Y) {
		t.Errorf("label box %v leaves the map %v", b, a)
	}
}
