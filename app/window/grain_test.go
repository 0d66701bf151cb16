package window

import (
	"math"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2/test"

	"lodestone/app/live"
	"lodestone/app/restore"
	"lodestone/compute/embed"
)

// TestGrainSlider checks the grain control's scale: logarithmic from
// grainMin to grainMax, two significant digits, 1 (t-SNE) in the middle with
// a snap around it, inside the optimiser's range of tails.
func TestGrainSlider(t *testing.T) {
	if grainMin < embed.MinTail || grainMax > embed.MaxTail {
		t.Fatalf("grain range %g … %g outside the optimiser's %g … %g", float64(grainMin), float64(grainMax), float64(embed.MinTail), float64(embed.MaxTail))
	}
	for v, want := range map[float64]float64{0: 1, 0.02: 1, -0.02: 1, math.Log10(0.5): 0.5, math.Log10(3): 3,
		-0.699: 0.2, 1: 10, -5: grainMin, 5: grainMax, math.Log10(0.333): 0.33} {
		if got := tailOfSlider(v); got != want {
			t.Errorf("slider %v: tail %v, want %v", v, got, want)
		}
	}
	if grainText(1) != "1 · t-SNE" || grainText(0.5) != "0.5" {
		t.Errorf("texts %q, %q", grainText(1), grainText(0.5))
	}
}

// TestGrainControl drives the grain beside the dial: letting go of it
// re-forms the map from where it stands with the new tail (the history
// records it); at ∞ it runs nothing and says why; the status line's
// fidelity shows dCor; a sweep of the grain makes a map per tail with dCor
// in its caption, and adopting one moves the control; a session keeps the
// control and the history's tails.
func TestGrainControl(t *testing.T) {
	u := newTestUI(t, chooserAnswering())
	v := openFixture(t, u)
	onUI(func() {
		if !strings.Contains(v.status.scores.Text, "dCor") {
			t.Errorf("status line %q shows no dCor", v.status.scores.Text)
		}
		v.run.iterations.SetText("60")
		v.run.grain.slider.SetValue(math.Log10(0.5)) // fires OnChangeEnded, as letting go does
	})
	waitForRun(t, v, 2)
	onUI(func() {
		h := v.run.engine.History()
		if len(h) != 2 || h[1].Kind != live.Warm || h[1].Tail != 0.5 || h[1].Attraction != 1 {
			t.Fatalf("history after grain 0.5: %+v", h)
		}
		if v.run.grain.value.Text != "0.5" || v.run.snapshot().tail != 0.5 {
			t.Errorf("control shows %q, snapshot tail %v", v.run.grain.value.Text, v.run.snapshot().tail)
		}
		v.run.turnTo(math.Inf(1))
	})
	waitForRun(t, v, 3)
	onUI(func() {
		v.run.grain.slider.SetValue(math.Log10(2))
		if _, st := v.run.engine.Latest(); st.Runs != 3 || v.run.engine.Tail() != 2 {
			t.Errorf("at ∞ the grain started a run (%d runs) or was not kept (tail %v)", st.Runs, v.run.engine.Tail())
		}
		if !strings.Contains(v.st.note, "does not depend") {
			t.Errorf("note %q", v.st.note)
		}
		v.run.turnTo(4)
	})
	waitForRun(t, v, 4)
	onUI(func() {
		if h := v.run.engine.History(); h[len(h)-1].Tail != 2 || h[len(h)-1].Attraction != 4 {
			t.Fatalf("the turn to 4 after grain 2 at ∞: %+v", h[len(h)-1])
		}
		// Sweep the grain at attraction 4.
		s := v.sweep
		s.control.SetSelected(sweepGrain)
		if s.values.Text != defaultSweepValues[sweepGrain] {
			t.Errorf("sweep values %q for the grain", s.values.Text)
		}
		s.values.SetText("0.5, 3")
		test.Tap(s.run)
	})
	waitFor(t, "the sweep", 60*time.Second, func() bool { return !v.sweep.running() })
	onUI(func() {
		s := v.sweep
		if len(s.results) != 2 || s.results[0].Tail != 0.5 || s.results[1].Tail != 3 || s.results[1].Attraction != 4 {
			t.Fatalf("sweep results %d, info %q", len(s.results), s.info.Text)
		}
		if c := sweepCaption(s.results[0]); !strings.Contains(c, "grain 0.5") || !strings.Contains(c, "dCor") {
			t.Errorf("caption %q", c)
		}
		test.Tap(s.grid.Objects[0].(*thumbCard))
		if v.run.grain.tail != 0.5 || v.run.engine.Tail() != 0.5 {
			t.Errorf("adopting the grain-0.5 map left the control at %v", v.run.grain.tail)
		}
		// A session keeps the control and the tails of the history.
		ses := v.toSession()
		if ses.Tail != 0.5 || ses.History[len(ses.History)-1].Tail != 0.5 {
			t.Fatalf("session tail %v, last step %+v", ses.Tail, ses.History[len(ses.History)-1])
		}
		ses.Tail = 3 // as if moved at ∞ before saving
		v.restore(ses)
		if v.run.grain.tail != 3 || v.run.engine.Tail() != 3 || live.TailOf(restore.Steps(ses)) != 0.5 {
			t.Errorf("restored control %v, engine %v", v.run.grain.tail, v.run.engine.Tail())
		}
		// Sweeping the grain at ∞ is refused.
		v.run.dial.SetValue(math.Inf(1))
		test.Tap(s.run)
	})
	dialogSays(t, u, "spectral layout")
}
