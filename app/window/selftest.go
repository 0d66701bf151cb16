package window

import (
	"bytes"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"time"

	"fyne.io/fyne/v2"

	"lodestone/app/live"
	lcanvas "lodestone/canvas"
	"lodestone/internal/atomicfile"
)

// The self-test opens the example atlas, waits for the first run to end,
// saves a screenshot, turns the dial to Options.SelfTestDial, waits for the
// rerun to end, saves a second screenshot, checks that the map is not
// blank, and quits with status 0 (or 1 on any failure).

// selfTestLimit is how long the self-test may take before it fails.
const selfTestLimit = 10 * time.Minute

// Self-test screenshot names, inside Options.SelfTest.
const (
	SelfTestFirst  = "first.png"
	SelfTestTurned = "turned.png"
)

func (u *ui) startSelfTest() {
	u.selfTestDone = make(chan int, 1)
	if err := os.MkdirAll(u.opts.SelfTest, 0o755); err != nil {
		u.selfTestFail(err)
		return
	}
	fmt.Fprintln(os.Stderr, "self-test: opening the example atlas")
	time.AfterFunc(selfTestLimit, func() {
		fyne.Do(func() { u.selfTestFail(fmt.Errorf("did not finish within %v", selfTestLimit)) })
	})
	u.openExample()
}

func (u *ui) selfTestFail(err error) {
	select {
	case u.selfTestDone <- 1:
		fmt.Fprintln(os.Stderr, "self-test failed:", err)
	default:
	}
	u.app.Quit()
}

func (u *ui) selfTestPass() {
	select {
	case u.selfTestDone <- 0:
		fmt.Fprintln(os.Stderr, "self-test passed")
	default:
	}
	u.app.Quit()
}

// selfTestAtlasShown is called when the atlas view first appears; from
// then on the self-test reports the run's progress every 15 seconds.
func (u *ui) selfTestAtlasShown(v *atlasView) {
	fmt.Fprintf(os.Stderr, "self-test: %d cells on the map; first run at attraction %s\n", v.prep.Cells(), lcanvas.FormatAttraction(v.dial.Value))
	t := time.NewTicker(15 * time.Second)
	go func() {
		defer t.Stop()
		for {
			select {
			case <-v.closed:
				return
			case <-t.C:
				_, st := v.engine.Latest()
				fmt.Fprintf(os.Stderr, "self-test: run %d at attraction %s, iteration %d/%d, running %v, %.0f s\n",
					st.Runs, lcanvas.FormatAttraction(st.Attraction), st.Iteration, st.Iterations, st.Running, st.Elapsed.Seconds())
			}
		}
	}()
}

// selfTestRunEnded advances the self-test after each run.
func (u *ui) selfTestRunEnded(v *atlasView, st live.Status) {
	if st.Err != nil {
		u.selfTestFail(st.Err)
		return
	}
	target := u.opts.SelfTestDial
	if target == 0 {
		target = 10
	}
	fmt.Fprintf(os.Stderr, "self-test: run %d ended after %d iterations in %.1f s (KL %.3f, settled %v)\n",
		st.Runs, st.Iteration, st.Elapsed.Seconds(), st.KL, st.Settled)
	// Let the view finish gliding to the final layout before capturing.
	time.AfterFunc(600*time.Millisecond, func() {
		fyne.Do(func() {
			switch st.Runs {
			case 1:
				if err := u.selfTestCapture(v, SelfTestFirst); err != nil {
					u.selfTestFail(err)
					return
				}
				v.dial.SetValue(target)
				v.turn(target)
			case 2:
				if err := u.selfTestCapture(v, SelfTestTurned); err != nil {
					u.selfTestFail(err)
					return
				}
				if u.opts.SelfTestTour {
					u.selfTestTour(v)
					return
				}
				u.selfTestPass()
			}
		})
	})
}

// selfTestCapture saves a screenshot of the window (name) and the map as
// drawn (map-name), and checks that the map shows points in several
// colours.
func (u *ui) selfTestCapture(v *atlasView, name string) error {
	path := filepath.Join(u.opts.SelfTest, name)
	shot, how := u.screenshot()
	if err := writePNG(path, shot); err != nil {
		return err
	}
	drawn := v.mapView.Snapshot()
	if drawn == nil {
		return fmt.Errorf("the map has not been drawn")
	}
	mapPath := filepath.Join(u.opts.SelfTest, "map-"+name)
	if err := writePNG(mapPath, drawn); err != nil {
		return err
	}
	shares, inked := PaletteShares(drawn, v.painted.Palette)
	seen := 0
	for _, sh := range shares {
		if sh >= 0.005 {
			seen++
		}
	}
	want := min(3, len(v.painted.Palette)-1)
	fmt.Fprintf(os.Stderr, "self-test: saved %s (%s) and %s; %d paint colours each hold ≥ 0.5%% of the inked pixels, %.1f%% of the map inked\n",
		path, how, mapPath, seen, 100*inked)
	if seen < want || inked < 0.01 {
		return fmt.Errorf("the map in %s looks blank (%d paint colours seen, %.2f%% inked)", mapPath, seen, 100*inked)
	}
	return nil
}

func writePNG(path string, img image.Image) error {
	return atomicfile.Write(path, func(w io.Writer) error { return png.Encode(w, img) })
}

// screenshot returns an image of the window: from the X server with
// ImageMagick's import when both are there (OpenGL front buffers read back
// blank under some software renderers), else from the canvas.
func (u *ui) screenshot() (image.Image, string) {
	if os.Getenv("DISPLAY") != "" {
		if imp, err := exec.LookPath("import"); err == nil {
			out, err := exec.Command(imp, "-window", "root", "png:-").Output()
			if err == nil {
				if img, err := png.Decode(bytes.NewReader(out)); err == nil {
					return img, "X server screenshot"
				}
			}
		}
	}
	return u.win.Canvas().Capture(), "canvas capture"
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

// MapColours counts the distinct colours that cover at least 0.05% of the
// rectangle r of img (so that blends at the edges of points do not count),
// and the share of r that differs from its most common colour (the
// background).
func MapColours(img image.Image, r image.Rectangle) (colours int, inked float64) {
	counts := map[uint32]int{}
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			cr, cg, cb, _ := img.At(x, y).RGBA()
			counts[(cr>>8)<<16|(cg>>8)<<8|cb>>8]++
		}
	}
	total := r.Dx() * r.Dy()
	if total == 0 {
		return 0, 0
	}
	bgCount := 0
	for _, c := range counts {
		bgCount = max(bgCount, c)
	}
	floor := int(math.Max(1, 0.0005*float64(total)))
	for _, c := range counts {
		if c >= floor && c != bgCount {
			colours++
		}
	}
	return colours, float64(total-bgCount) / float64(total)
}

// selfTestTour goes on to the markers of the first state and a short
// sweep, saving a screenshot of each (for the README).
func (u *ui) selfTestTour(v *atlasView) {
	m, s := v.markers, v.sweep
	sweep := func() {
		v.tabs.SelectIndex(3)
		s.values.SetText("1, 4, 30, inf")
		v.iterations.SetText("250")
		s.onDone = func() {
			s.onDone = nil
			u.selfTestShotLater("sweep.png", u.selfTestPass)
		}
		v.toggleSweep()
	}
	v.tabs.SelectIndex(2)
	m.source.SetSelected("state")
	m.onDone = func() {
		m.onDone = nil
		u.selfTestShotLater("markers.png", sweep)
	}
	v.rankMarkers()
}

// selfTestShotLater waits for the window to draw what was just done, saves a
// screenshot and goes on with next, on the UI goroutine; a failed save fails
// the self-test.
func (u *ui) selfTestShotLater(name string, next func()) {
	time.AfterFunc(300*time.Millisecond, func() {
		fyne.Do(func() {
			if err := u.selfTestShot(name); err != nil {
				u.selfTestFail(err)
				return
			}
			next()
		})
	})
}

// selfTestShot saves a screenshot of the window only.
func (u *ui) selfTestShot(name string) error {
	path := filepath.Join(u.opts.SelfTest, name)
	shot, how := u.screenshot()
	fmt.Fprintf(os.Stderr, "self-test: saved %s (%s)\n", path, how)
	return writePNG(path, shot)
}
