package window

import (
	"bytes"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"time"

	"fyne.io/fyne/v2"

	"lodestone/app/live"
	lcanvas "lodestone/canvas"
	"lodestone/internal/atomicfile"
)

// The self-test drives the window as a user would and watches what it
// shows, from a goroutine of its own; it is no part of the code it tests.
// It opens the example atlas, waits for the first run to end, saves a
// screenshot, turns the dial to Options.SelfTestDial, waits for the rerun
// to end, saves a second screenshot, checks that the map is not blank, and
// quits with status 0 (or 1 on any failure). With Options.SelfTestTour it
// goes on to name the example's runs as its samples and integrate them,
// rank the markers of a state, open their expression plot, make a group,
// show the Atlas tab and run a short sweep, saving a screenshot of each
// (some are the README's).

// selfTestLimit is how long the self-test may take before it fails.
const selfTestLimit = 10 * time.Minute

// Self-test screenshot names, inside Options.SelfTest.
const (
	SelfTestFirst  = "first.png"
	SelfTestTurned = "turned.png"
)

// selfTest is one run of the self-test.
type selfTest struct {
	u        *ui
	dir      string
	deadline time.Time
	lastSaid time.Time
}

// errSelfTest carries a failure out of the script.
type errSelfTest struct{ err error }

func (u *ui) startSelfTest() {
	u.selfTestDone = make(chan int, 1)
	t := &selfTest{u: u, dir: u.opts.SelfTest, deadline: time.Now().Add(selfTestLimit)}
	go func() {
		code := 0
		defer func() {
			if r := recover(); r != nil {
				f, ok := r.(errSelfTest)
				if !ok {
					panic(r)
				}
				fmt.Fprintln(os.Stderr, "self-test failed:", f.err)
				code = 1
			}
			if code == 0 {
				fmt.Fprintln(os.Stderr, "self-test passed")
			}
			u.selfTestDone <- code
			fyne.Do(func() {
				u.closeView()
				u.app.Quit()
			})
		}()
		t.script()
	}()
}

// fail ends the self-test with err.
func (t *selfTest) fail(err error) { panic(errSelfTest{err}) }

// ui runs f on the UI goroutine and waits for it.
func (t *selfTest) ui(f func()) { fyne.DoAndWait(f) }

// waitFor polls cond on the UI goroutine until it holds; an error dialog on
// the start view fails the self-test, and every 15 seconds it says how the
// run goes.
func (t *selfTest) waitFor(what string, cond func() bool) {
	for {
		ok, shown := false, ""
		t.ui(func() {
			ok = cond()
			if n := len(t.u.errorsShown); !ok && n > 0 {
				shown = t.u.errorsShown[n-1]
			}
		})
		switch {
		case ok:
			return
		case shown != "":
			t.fail(fmt.Errorf("waiting for %s, the window shows an error: %s", what, shown))
		case time.Now().After(t.deadline):
			t.fail(fmt.Errorf("%s did not come within %v", what, selfTestLimit))
		}
		if time.Since(t.lastSaid) > 15*time.Second {
			t.lastSaid = time.Now()
			t.ui(func() {
				if v := t.u.atlas; v != nil {
					st := v.st.run
					fmt.Fprintf(os.Stderr, "self-test: waiting for %s: run %d at attraction %s, iteration %d/%d, running %v, %.0f s\n",
						what, st.Runs, lcanvas.FormatAttraction(st.Attraction), st.Iteration, st.Iterations, st.Running, st.Elapsed.Seconds())
				}
			})
		}
		time.Sleep(100 * time.Millisecond)
	}
}

// runEnded waits until run number runs of the view has ended.
func (t *selfTest) runEnded(v *atlasView, runs int) {
	t.waitFor(fmt.Sprintf("run %d to end", runs), func() bool { return v.st.run.Runs == runs && !v.st.run.Running })
	var st live.Status
	t.ui(func() { st = v.st.run })
	if st.Err != nil {
		t.fail(st.Err)
	}
	var frames int
	var cost time.Duration
	t.ui(func() { frames, cost = v.run.framesShown, v.run.pacer.Cost() })
	fmt.Fprintf(os.Stderr, "self-test: run %d ended after %d iterations in %.1f s (%.1f a second; KL %.3f, settled %v); %d frames shown in all, costing %.1f ms each of late\n",
		st.Runs, st.Iteration, st.Elapsed.Seconds(), float64(st.Iteration)/st.Elapsed.Seconds(), st.KL, st.Settled,
		frames, float64(cost.Microseconds())/1000)
	time.Sleep(600 * time.Millisecond) // the view glides to the final layout
}

func (t *selfTest) script() {
	if err := os.MkdirAll(t.dir, 0o755); err != nil {
		t.fail(err)
	}
	target := t.u.opts.SelfTestDial
	if target == 0 {
		target = 10
	}
	if path := t.u.opts.Path; path != "" {
		fmt.Fprintln(os.Stderr, "self-test: opening", path)
		t.ui(func() { t.u.openPath(path) })
	} else {
		fmt.Fprintln(os.Stderr, "self-test: opening the example atlas")
		t.ui(t.u.openExample)
	}
	var v *atlasView
	t.waitFor("the atlas view", func() bool { v = t.u.atlas; return v != nil })
	t.ui(func() {
		fmt.Fprintf(os.Stderr, "self-test: %d cells on the map; first run at attraction %s\n", v.st.cells(), lcanvas.FormatAttraction(v.run.dial.Value))
	})
	t.runEnded(v, 1)
	t.capture(v, SelfTestFirst)
	first := t.watchFirstFrame(v, 2)
	turned := time.Now()
	t.ui(func() { v.run.turnTo(target) })
	t.runEnded(v, 2)
	if at := first(); !at.IsZero() {
		fmt.Fprintf(os.Stderr, "self-test: the first new frame after the turn was drawn %.0f ms after it\n",
			float64(at.Sub(turned).Microseconds())/1000)
	}
	t.capture(v, SelfTestTurned)
	if !t.u.opts.SelfTestTour {
		return
	}

	// The example's two runs: apart, then integrated (the status line
	// scores their mixing in both).
	t.ui(func() {
		v.paint.paintBy("batch")
		v.reveal(tabAtlas)
		v.samples.samples.SetSelected("batch")
	})
	t.waitFor("the runs' mixing", func() bool { return v.st.scoresCurrent() && strings.Contains(v.status.scores.Text, "samples mixed") })
	t.shot("samples-apart.png")
	t.ui(func() { v.samples.button.OnTapped() })
	t.waitFor("the integrated atlas", func() bool { return v.st.prep.Integrated != nil && !v.samples.busy })
	t.runEnded(v, 3)
	t.waitFor("the integrated map's mixing", func() bool {
		return v.st.scoresCurrent() && strings.Contains(v.status.scores.Text, "samples mixed")
	})
	t.shot("samples-integrated.png")

	t.ui(func() {
		v.paint.paintBy("state")
		v.reveal(tabMarkers)
		v.markers.source.SetSelected("state")
		v.markers.run.OnTapped()
	})
	t.waitFor("the markers", func() bool { return !v.markers.ranking && len(v.markers.results) > 0 })
	t.shot("markers.png")
	t.ui(func() { v.markers.plotBtn.OnTapped() })
	t.waitFor("the expression plot", func() bool { return len(v.plots.open) > 0 })
	var plot fyne.Window
	t.ui(func() { plot = v.plots.open[0].win })
	t.shotOf(plot, "expression.png")
	t.ui(plot.Close)

	t.ui(func() {
		// A lasso around the left half of the map, made into a group.
		if x0, x1, y0, y1, ok := lcanvas.FitBox(v.st.layout); ok {
			xm := (x0 + x1) / 2
			v.mapP.mapView.ApplyLasso([]float64{x0, y0, xm, y0, xm, y1, x0, y1}, false)
		}
		v.mapP.makeGroup.OnTapped()
	})
	t.shot("groups.png")
	t.ui(func() { v.reveal(tabAtlas) })
	t.shot("atlas.png")

	t.ui(func() {
		v.reveal(tabSweep)
		v.sweep.label.SetSelected("state")
		v.sweep.values.SetText("1, 4, 30, inf")
		v.run.iterations.SetText("250")
		v.sweep.run.OnTapped()
	})
	t.waitFor("the sweep", func() bool { return !v.sweep.running() && len(v.sweep.results) > 0 })
	t.shot("sweep.png")
}

// watchFirstFrame returns a function that reports when the map first drew
// a frame of run number run with an iteration done (zero before).
func (t *selfTest) watchFirstFrame(v *atlasView, run int) func() time.Time {
	var at time.Time
	t.ui(func() {
		m := v.mapP.mapView
		drawn := m.OnDrawn
		m.OnDrawn = func(cost time.Duration) {
			if drawn != nil {
				drawn(cost)
			}
			if at.IsZero() && v.st.run.Runs == run && v.st.run.Iteration > 0 {
				at = time.Now()
			}
		}
	})
	return func() time.Time {
		var a time.Time
		t.ui(func() { a = at })
		return a
	}
}

// capture saves a screenshot of the window (name) and the map as drawn
// (map-name), and checks that the map shows points in several colours.
func (t *selfTest) capture(v *atlasView, name string) {
	t.shot(name)
	var drawn *image.RGBA
	var palette []color.NRGBA
	t.ui(func() {
		drawn = v.mapP.mapView.Snapshot()
		palette = v.st.paint.Palette
	})
	if drawn == nil {
		t.fail(fmt.Errorf("the map has not been drawn"))
	}
	mapPath := filepath.Join(t.dir, "map-"+name)
	if err := writePNG(mapPath, drawn); err != nil {
		t.fail(err)
	}
	shares, inked := PaletteShares(drawn, palette)
	seen := 0
	for _, sh := range shares {
		if sh >= 0.005 {
			seen++
		}
	}
	want := min(3, len(palette)-1)
	fmt.Fprintf(os.Stderr, "self-test: saved %s; %d paint colours each hold ≥ 0.5%% of the inked pixels, %.1f%% of the map inked\n",
		mapPath, seen, 100*inked)
	if seen < want || inked < 0.01 {
		t.fail(fmt.Errorf("the map in %s looks blank (%d paint colours seen, %.2f%% inked)", mapPath, seen, 100*inked))
	}
}

// shot waits for the window to draw what was just done and saves a
// screenshot of it.
func (t *selfTest) shot(name string) { t.shotOf(t.u.win, name) }

// shotOf saves a screenshot of a window.
func (t *selfTest) shotOf(w fyne.Window, name string) {
	time.Sleep(300 * time.Millisecond)
	var title string
	var size fyne.Size
	var scale float32
	t.ui(func() {
		title, size, scale = w.Title(), w.Canvas().Size(), w.Canvas().Scale()
	})
	img, how := screenshot(title, int(size.Width*scale+0.5), int(size.Height*scale+0.5))
	if img == nil {
		t.ui(func() { img = w.Canvas().Capture() })
		how = "canvas capture"
	}
	path := filepath.Join(t.dir, name)
	if err := writePNG(path, img); err != nil {
		t.fail(err)
	}
	fmt.Fprintf(os.Stderr, "self-test: saved %s (%s, %d × %d)\n", path, how, img.Bounds().Dx(), img.Bounds().Dy())
}

func writePNG(path string, img image.Image) error {
	return atomicfile.Write(path, func(w io.Writer) error { return png.Encode(w, img) })
}

// screenshot returns an image of the window titled title, of width × height
// pixels, from the X server with ImageMagick's import (OpenGL front buffers
// read back blank under some software renderers): the window itself when
// xwininfo finds it, else the top left corner of the screen, where a bare X
// server such as Xvfb puts it. It returns nil without an X server or
// import.
func screenshot(title string, width, height int) (image.Image, string) {
	imp, err := exec.LookPath("import")
	if os.Getenv("DISPLAY") == "" || err != nil {
		return nil, ""
	}
	if id := xWindow(title, width, height); id != "" {
		if img := importPNG(imp, "-window", id, "png:-"); img != nil {
			return img, "X window " + id
		}
	}
	if img := importPNG(imp, "-window", "root", "-crop", fmt.Sprintf("%dx%d+0+0", width, height), "+repage", "png:-"); img != nil {
		return img, "X screen, top left corner"
	}
	return nil, ""
}

func importPNG(imp string, args ...string) image.Image {
	out, err := exec.Command(imp, args...).Output()
	if err != nil {
		return nil
	}
	img, err := png.Decode(bytes.NewReader(out))
	if err != nil {
		return nil
	}
	return img
}

// xWindow returns the X id of the window named title and of the given
// size, from xwininfo's tree of windows, or "".
func xWindow(title string, width, height int) string {
	xw, err := exec.LookPath("xwininfo")
	if err != nil {
		return ""
	}
	out, err := exec.Command(xw, "-root", "-tree").Output()
	if err != nil {
		return ""
	}
	size := fmt.Sprintf(" %dx%d+", width, height)
	for _, line := range strings.Split(string(out), "\n") {
		f := strings.Fields(line)
		if len(f) > 1 && strings.Contains(line, `"`+title+`"`) && strings.Contains(line, size) && strings.HasPrefix(f[0], "0x") {
			return f[0]
		}
	}
	return ""
}

// PaletteShares classifies each pixel of img by the nearest (in RGB) of
// the palette's colours and the image's most common colour (the
// background), and returns each palette colour's share of the pixels not
// classed as background, and the share of those in the image.
func PaletteShares(img image.Image, palette []color.NRGBA) (shares []float64, inked float64) {
	b := img.Bounds()
	bg := dominant(img)
	counts := make([]int, len(palette))
	ink := 0
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bl, _ := img.At(x, y).RGBA()
			p := [3]int{int(r >> 8), int(g >> 8), int(bl >> 8)}
			best, bestD := -1, sqDist(p, bg)
			for i, c := range palette {
				if d := sqDist(p, [3]int{int(c.R), int(c.G), int(c.B)}); d < bestD {
					best, bestD = i, d
				}
			}
			if best >= 0 {
				counts[best]++
				ink++
			}
		}
	}
	shares = make([]float64, len(palette))
	for i, c := range counts {
		if ink > 0 {
			shares[i] = float64(c) / float64(ink)
		}
	}
	return shares, float64(ink) / float64(max(1, b.Dx()*b.Dy()))
}

func sqDist(a, b [3]int) int {
	d0, d1, d2 := a[0]-b[0], a[1]-b[1], a[2]-b[2]
	return d0*d0 + d1*d1 + d2*d2
}

// dominant returns the most common colour of img.
func dominant(img image.Image) [3]int {
	counts := map[[3]int]int{}
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bl, _ := img.At(x, y).RGBA()
			counts[[3]int{int(r >> 8), int(g >> 8), int(bl >> 8)}]++
		}
	}
	var best [3]int
	n := -1
	for c, k := range counts {
		if k > n || k == n && (c[0] < best[0] || c[0] == best[0] && (c[1] < best[1] || c[1] == best[1] && c[2] < best[2])) {
			best, n = c, k
		}
	}
	return best
}
