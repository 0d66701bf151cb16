package window

import (
	"errors"
	"math"
	"slices"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/widget"

	"lodestone/app/live"
	"lodestone/app/paint"
	"lodestone/compute/atlas"
	"lodestone/compute/markers"
)

// The window-free logic of the rooms, tested without a window.

func TestParseDialValues(t *testing.T) {
	got, err := parseDialValues(" 1, 4 ,30,inf, ∞")
	if err != nil || !slices.Equal(got[:3], []float64{1, 4, 30}) || !math.IsInf(got[3], 1) || !math.IsInf(got[4], 1) {
		t.Fatalf("got %v, %v", got, err)
	}
	for _, bad := range []string{"", "0.1", "101", "1, x", "1,2,3,4,5,6,7,8,9,10,11,12,13"} {
		if _, err := parseDialValues(bad); err == nil {
			t.Errorf("%q was accepted", bad)
		}
	}
}

func TestIsolate(t *testing.T) {
	// Isolating entry 1 of 4 hides the others; isolating it again shows all.
	h := isolate(nil, 1, 4)
	if !slices.Equal(h, []bool{true, false, true, true}) {
		t.Fatalf("isolate: %v", h)
	}
	if h = isolate(h, 1, 4); !slices.Equal(h, []bool{false, false, false, false}) {
		t.Fatalf("isolate again: %v", h)
	}
	// With another entry shown too, isolating shows entry 2 alone.
	if h = isolate([]bool{true, false, false, true}, 2, 4); !slices.Equal(h, []bool{true, true, false, true}) {
		t.Fatalf("isolate among two: %v", h)
	}
}

func TestSortingMarkers(t *testing.T) {
	res := []markers.Result{
		{Gene: 0, Z: 5, LogFoldChange: 2, Q: 1e-5, FractionIn: 0.9},
		{Gene: 1, Z: 7, LogFoldChange: -1, Q: 1e-8, FractionIn: 0.1},
		{Gene: 2, Z: 9, LogFoldChange: 3, Q: 1e-9, FractionIn: 0.8},
		{Gene: 3, Z: 1, LogFoldChange: 0.5, Q: math.NaN(), FractionIn: 0.5},
	}
	// (The top markers of the plot are paint.ExpressionPlot's, tested there.)
	genes := func() []int {
		var g []int
		for _, r := range res {
			g = append(g, r.Gene)
		}
		return g
	}
	sortResults(res, 2, false, []string{"d", "c", "b", "a"})
	if got := genes(); !slices.Equal(got, []int{2, 1, 0, 3}) {
		t.Errorf("by q, NaN last: %v", got)
	}
	sortResults(res, 0, false, []string{"Delta", "charlie", "Bravo", "alpha"})
	if got := genes(); !slices.Equal(got, []int{3, 2, 1, 0}) {
		t.Errorf("by symbol, ignoring case: %v", got)
	}
	sortResults(res, 3, true, nil)
	if got := genes(); !slices.Equal(got, []int{0, 2, 3, 1}) {
		t.Errorf("by share in, descending: %v", got)
	}
}

func TestLevelMask(t *testing.T) {
	c := &atlas.Column{Name: "day", Kind: atlas.Categorical, Levels: []string{"a", "b"}, Codes: []int32{0, 1, -1, 1}}
	if got := levelMask(c, "b"); !slices.Equal(got, []bool{false, true, false, true}) {
		t.Errorf("b: %v", got)
	}
	if got := levelMask(c, "z"); got != nil {
		t.Errorf("a level that is not there: %v", got)
	}
}

func TestScoresText(t *testing.T) {
	sc := mapScores{layout: []float32{0, 0}, text: "kept neighbours 0.50 · trustworthiness 0.900"}
	cases := []struct {
		sc               mapScores
		current, scoring bool
		text             string
		importance       widget.Importance
	}{
		{sc, true, false, "fidelity: kept neighbours 0.50 · trustworthiness 0.900", widget.MediumImportance},
		{sc, false, false, "previous map's fidelity: kept neighbours 0.50 · trustworthiness 0.900", widget.LowImportance},
		{sc, false, true, "previous map's fidelity: kept neighbours 0.50 · trustworthiness 0.900", widget.LowImportance},
		{mapScores{}, false, true, "fidelity: scoring…", widget.LowImportance},
		{mapScores{}, false, false, "fidelity: after the run", widget.LowImportance},
		{mapScores{layout: sc.layout, err: errors.New("too few cells")}, true, false, "fidelity: too few cells", widget.WarningImportance},
	}
	for _, c := range cases {
		text, imp := scoresText(c.sc, c.current, c.scoring)
		if text != c.text || imp != c.importance {
			t.Errorf("scoresText(%+v, %v, %v) = %q, %v; want %q, %v", c.sc, c.current, c.scoring, text, imp, c.text, c.importance)
		}
	}
}

func TestStateScoresCurrent(t *testing.T) {
	a, b := []float32{1, 2}, []float32{1, 2}
	s := &atlasState{layout: a, scores: mapScores{layout: a}}
	if !s.scoresCurrent() {
		t.Error("scores of the map on screen are not current")
	}
	s.run.Running = true
	if s.scoresCurrent() {
		t.Error("scores are current while a run moves the map")
	}
	s.run.Running = false
	s.layout = b // equal values, another map
	if s.scoresCurrent() {
		t.Error("scores of an earlier map are current")
	}
}

func TestStateNotifiesSubscribers(t *testing.T) {
	s := &atlasState{}
	var got []string
	s.on(topicGroups, func() { got = append(got, "first") })
	s.on(topicGroups, func() { got = append(got, "second") })
	s.on(topicPaint, func() { got = append(got, "paint") })
	g := &paint.Group{Name: "g", Cells: []bool{true, false}, Count: 1}
	s.setGroups([]*paint.Group{g})
	if !slices.Equal(got, []string{"first", "second"}) {
		t.Errorf("notified %v", got)
	}
	if s.groupWithCells([]bool{true, false}) != g || s.groupWithCells([]bool{true, true}) != nil {
		t.Error("groupWithCells does not compare the cells")
	}
	// A frame that is the same slice changes only the run's status.
	got = nil
	s.on(topicFrame, func() { got = append(got, "frame") })
	s.on(topicRun, func() { got = append(got, "run") })
	l := []float32{0, 1}
	s.setLayout(l, live.Status{})
	s.setLayout(l, live.Status{Iteration: 3})
	if !slices.Equal(got, []string{"frame", "run", "run"}) {
		t.Errorf("notified %v", got)
	}
}

func TestRunStage(t *testing.T) {
	cases := []struct {
		ready bool
		st    live.Status
		want  string
	}{
		{false, live.Status{}, "stored map"},
		{true, live.Status{}, "ready"},
		{true, live.Status{Running: true, Attraction: 4}, "optimising at attraction 4.0"},
		{true, live.Status{Running: true, Attraction: math.Inf(1)}, "moving to the spectral layout"},
		{true, live.Status{Runs: 2, Settled: true}, "settled"},
		{true, live.Status{Runs: 2}, "stopped"},
		{true, live.Status{Runs: 2, Err: errors.New("no memory")}, "the optimiser stopped: no memory"},
	}
	for _, c := range cases {
		if got := runStage(c.ready, c.st); got != c.want {
			t.Errorf("runStage(%v, %+v) = %q, want %q", c.ready, c.st, got, c.want)
		}
	}
}

func TestCountAndShortcutText(t *testing.T) {
	for n, want := range map[int]string{0: "0", 999: "999", 1000: "1,000", 5530: "5,530", 1234567: "1,234,567"} {
		if got := count(n); got != want {
			t.Errorf("count(%d) = %q", n, got)
		}
	}
	if got := shortcutText(shortcut(fyne.KeyL, true)); got != "Ctrl+Shift+L" && got != "⌘Shift+L" {
		t.Errorf("shortcut text %q", got)
	}
	if got := shortcutText(&fyne.ShortcutUndo{}); got != "Ctrl+Z" && got != "⌘Z" {
		t.Errorf("undo's text %q", got)
	}
}

func TestPaintLabel(t *testing.T) {
	col := &atlas.Column{Name: "day", Kind: atlas.Categorical, Levels: []string{"a", "b"}, Codes: []int32{1, -1}}
	if f := paintLabel(paint.ForColumn(col, nil), nil, col); f(0) != "b" || f(1) != "" {
		t.Errorf("column labels %q, %q", f(0), f(1))
	}
	gene := paint.GenePaint("G", []float64{0.25, 3})
	if f := paintLabel(gene, []float64{0.25, 3}, nil); f(0) != "0.25" || f(1) != "3" {
		t.Errorf("gene labels %q, %q", f(0), f(1))
	}
	groups := paint.GroupsPaint([]*paint.Group{{Name: "g1", Cells: []bool{true, false}}}, 2)
	if f := paintLabel(groups, nil, nil); f(0) != "g1" || f(1) != "" {
		t.Errorf("group labels %q, %q", f(0), f(1))
	}
}

func TestClusterColumn(t *testing.T) {
	c := clusterColumn([]int32{0, 2, 1, 2}, 0.5)
	if c.Name != "clusters (resolution 0.5)" || !slices.Equal(c.Levels, []string{"cluster 1", "cluster 2", "cluster 3"}) {
		t.Errorf("%q %q", c.Name, c.Levels)
	}
}
