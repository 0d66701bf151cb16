package window

import (
	"context"
	"math"
	"regexp"
	"slices"
	"strconv"
	"testing"
	"time"

	"fyne.io/fyne/v2/test"

	"lodestone/app/restore"
	"lodestone/compute/atlas"
	"lodestone/compute/integrate"
	"lodestone/sampledata"
)

// mixedSamples reads "samples mixed X" from the status line's scores (NaN
// when absent).
func mixedSamples(text string) float64 {
	m := regexp.MustCompile(`samples mixed ([0-9.]+)`).FindStringSubmatch(text)
	if m == nil {
		return math.NaN()
	}
	v, _ := strconv.ParseFloat(m[1], 64)
	return v
}

// TestIntegrateTheSamples names the fixture's run column in the Atlas tab,
// integrates by it and undoes it: the status line scores the runs' mixing
// (and the states'), integration prepares the atlas again and starts a
// fresh run while the groups stay, the map's runs mix more than before, and
// the session of the integrated map recomputes bit for bit.
func TestIntegrateTheSamples(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	onUI(func() {
		selectFirst(v, 40)
		v.groups.fromSelection()
		if v.samples.button.Disabled() == false {
			t.Error("the integrate button is enabled before a column is named")
		}
		v.samples.samples.SetSelected(sampledata.ColumnBatch)
		v.samples.types.SetSelected(sampledata.ColumnState)
		if v.st.samples != sampledata.ColumnBatch || v.st.types != sampledata.ColumnState || v.samples.button.Disabled() {
			t.Errorf("samples %q, types %q, button disabled %v", v.st.samples, v.st.types, v.samples.button.Disabled())
		}
	})
	var before float64
	waitFor(t, "the mixing score", 60*time.Second, func() bool {
		before = mixedSamples(v.status.scores.Text)
		return v.st.scoresCurrent() && !math.IsNaN(before)
	})
	onUI(func() {
		if !regexp.MustCompile(`samples mixed [0-9.]+ · types [0-9.]+$`).MatchString(v.status.scores.Text) {
			t.Errorf("status line %q: no type mixing", v.status.scores.Text)
		}
		// The Atlas tab gives both spaces.
		if !regexp.MustCompile(`^Samples \(batch\) mixed: [0-9.]+ in the map, [0-9.]+ in the components; types \(state\) mixed: [0-9.]+ in the map, [0-9.]+ in the components`).MatchString(v.samples.mixing.Text) {
			t.Errorf("Atlas tab: %q", v.samples.mixing.Text)
		}
		if v.samples.state.Text != "The components are not integrated." {
			t.Errorf("state %q", v.samples.state.Text)
		}
		test.Tap(v.samples.button)
	})
	waitFor(t, "the integrated atlas", 120*time.Second, func() bool { return v.st.prep.Integrated != nil && !v.samples.busy })
	waitForRun(t, v, 2)
	var after float64
	waitFor(t, "the integrated map's scores", 60*time.Second, func() bool {
		after = mixedSamples(v.status.scores.Text)
		return v.st.scoresCurrent() && !math.IsNaN(after)
	})
	onUI(func() {
		in := v.st.prep.Settings.Integrate
		if len(in.Columns) != 1 || in.Columns[0] != sampledata.ColumnBatch || in.Theta[0] != integrate.DefaultTheta {
			t.Errorf("settings %+v", in)
		}
		if h := v.run.engine.History(); len(h) != 1 || h[0].Kind != "fresh" {
			t.Errorf("history after integrating: %+v", h)
		}
		if len(v.st.groups) != 1 || v.samples.button.Text != "Undo the integration" {
			t.Errorf("%d groups, button %q", len(v.st.groups), v.samples.button.Text)
		}
		if !regexp.MustCompile(`integrated by batch \(θ 2\). Harmony: \d+ clusters, \d+ rounds, settled`).MatchString(v.samples.state.Text) {
			t.Errorf("state %q", v.samples.state.Text)
		}
	})
	t.Logf("runs mixed %.2f in the map before, %.2f after", before, after)
	if !(after > before+0.2) {
		t.Errorf("runs mixed %.2f in the map before integrating, %.2f after", before, after)
	}
	var s = v.toSession()
	onUI(func() { s = v.toSession() })
	if s.Settings.Integrate == nil || s.Settings.Integrate.Columns[0] != sampledata.ColumnBatch {
		t.Fatalf("the session stores %+v", s.Settings.Integrate)
	}
	_, layout, err := restore.Recompute(context.Background(), s, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i := range layout {
		if math.Float32bits(layout[i]) != math.Float32bits(s.Layout[i]) {
			t.Fatalf("recomputed coordinate %d: %v, shown %v", i, layout[i], s.Layout[i])
		}
	}
	// The Sweep tab scores the runs' and states' mixing in each map.
	onUI(func() { v.sweep.values.SetText("2"); v.run.iterations.SetText("50"); test.Tap(v.sweep.run) })
	waitFor(t, "the sweep", 60*time.Second, func() bool { return !v.sweep.running() })
	onUI(func() {
		if len(v.sweep.results) != 1 || v.sweep.results[0].mixing == nil {
			t.Errorf("%d sweep maps (want 1, with its mixing), info %q", len(v.sweep.results), v.sweep.info.Text)
		} else if c := sweepCaption(v.sweep.results[0]); !regexp.MustCompile(`\nsamples mixed [0-9.]+\ntypes mixed [0-9.]+$`).MatchString(c) {
			t.Errorf("sweep caption %q", c)
		}
	})
	// Undo: the components as measured again, a fresh run.
	onUI(func() { test.Tap(v.samples.button) })
	waitFor(t, "the atlas without integration", 120*time.Second, func() bool {
		return !v.st.prep.Settings.Integrate.On() && v.st.prep.Integrated == nil && !v.samples.busy
	})
	waitForRun(t, v, 3)
	onUI(func() {
		if v.samples.button.Text != "Integrate the samples" || v.samples.state.Text != "The components are not integrated." {
			t.Errorf("after undoing: button %q, state %q", v.samples.button.Text, v.samples.state.Text)
		}
	})
}

// TestSamplesThatCannotBeIntegrated names a column with a sample of 5
// cells: integrating is refused with a message naming the column and the
// problem, and the map stays as it was, usable.
func TestSamplesThatCannotBeIntegrated(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	var shown []float32
	onUI(func() {
		// The atlas gets a column "lane" (the fixture's dataset is shared:
		// a copy).
		d := *v.st.data
		n := d.Cells()
		lane := atlas.Column{Name: "lane", Kind: atlas.Categorical, Levels: []string{"a", "b"}, Codes: make([]int32, n)}
		for i := 0; i < 5; i++ {
			lane.Codes[i] = 1
		}
		d.Annotations = append(slices.Clone(d.Annotations), lane)
		v.st.data = &d
		v.samples.fill()
		v.samples.samples.SetSelected("lane")
		shown = v.st.layout
		test.Tap(v.samples.button)
	})
	dialogSays(t, u, "Cannot integrate the samples", `column "lane" has a batch with too few cells`, `"b" has 5`)
	onUI(func() {
		if !sameLayout(v.st.layout, shown) || v.st.prep.Settings.Integrate.On() || v.samples.busy {
			t.Error("a refused integration changed the map")
		}
		v.samples.theta.SetText("-1")
		v.samples.samples.SetSelected(sampledata.ColumnBatch)
		test.Tap(v.samples.button)
	})
	dialogSays(t, u, "Strength θ", "above 0")
	onUI(func() { v.run.turnTo(4) })
	waitForRun(t, v, 2)
}
