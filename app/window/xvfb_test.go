package window

import (
	"context"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
	"time"

	"lodestone/canvas/colour"
)

// TestSelfTestInRealWindow builds the program, starts an X server of its
// own (Xvfb) and runs the self-test in a real window on the example atlas:
// the first run, a turn of the dial to 10, and the rerun. It then checks
// the map the self-test saved: every category of the paint (the example's
// five days) must be visible, and the map must not be blank.
func TestSelfTestInRealWindow(t *testing.T) {
	if testing.Short() {
		t.Skip("the real-window self-test takes a minute or more; skipped with -short")
	}
	xvfb, err := exec.LookPath("Xvfb")
	if err != nil {
		t.Skip("Xvfb is not installed (Debian package xvfb); the real-window self-test needs it")
	}
	dir := t.TempDir()
	bin := filepath.Join(dir, "lodestone")
	build := exec.Command("go", "build", "-o", bin, "lodestone")
	if out, err := build.CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}

	display := startXvfb(t, xvfb)
	shots := filepath.Join(dir, "shots")
	ctx, cancel := context.WithTimeout(context.Background(), 12*time.Minute)
	defer cancel()
	run := exec.CommandContext(ctx, bin, "--selftest-out", shots, "--selftest-dial", "10")
	run.Env = append(os.Environ(), "DISPLAY="+display, "LANG=C.UTF-8", "GSETTINGS_BACKEND=memory",
		"XDG_CONFIG_HOME="+filepath.Join(dir, "config"))
	out, err := run.CombinedOutput()
	t.Logf("self-test output:\n%s", out)
	if err != nil {
		t.Fatalf("self-test failed: %v", err)
	}

	for _, name := range []string{"map-" + SelfTestFirst, "map-" + SelfTestTurned} {
		img := readPNG(t, filepath.Join(shots, name))
		palette := colour.Categorical(5)
		shares := nearestShares(img, palette)
		for i, s := range shares {
			if s < 0.001 {
				t.Errorf("%s: day %d's colour covers %.3f%% of the map, want ≥ 0.1%%", name, i+1, 100*s)
			}
		}
		if _, inked := mapColours(img, img.Bounds()); inked < 0.01 {
			t.Errorf("%s: only %.2f%% of the map is inked", name, 100*inked)
		}
	}
	// The window screenshot exists and is not a blank frame.
	shot := readPNG(t, filepath.Join(shots, SelfTestTurned))
	if n, _ := mapColours(shot, shot.Bounds()); n < 5 {
		t.Errorf("the window screenshot holds only %d distinct colours", n)
	}
	// It is the window, not the screen: no black bands right and below.
	b := shot.Bounds()
	if b.Dx() >= xvfbWidth || b.Dy() >= xvfbHeight {
		t.Errorf("the screenshot is %d × %d, the screen's size; want the window's", b.Dx(), b.Dy())
	}
	if black := blackShare(shot, image.Rect(b.Max.X-4, b.Min.Y, b.Max.X, b.Max.Y)); black > 0.5 {
		t.Errorf("%.0f%% of the screenshot's right edge is black", 100*black)
	}
	if black := blackShare(shot, image.Rect(b.Min.X, b.Max.Y-4, b.Max.X, b.Max.Y)); black > 0.5 {
		t.Errorf("%.0f%% of the screenshot's bottom edge is black", 100*black)
	}
}

// The size of the test's X screen, larger than the window.
const xvfbWidth, xvfbHeight = 1400, 900

// blackShare returns the share of the pixels of r in img that are black.
func blackShare(img image.Image, r image.Rectangle) float64 {
	n := 0
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			if cr, cg, cb, _ := img.At(x, y).RGBA(); cr|cg|cb == 0 {
				n++
			}
		}
	}
	return float64(n) / float64(max(1, r.Dx()*r.Dy()))
}

// startXvfb starts an X server on a free display number and returns the
// display name; it is stopped when the test ends.
func startXvfb(t *testing.T, xvfb string) string {
	t.Helper()
	for n := 90 + os.Getpid()%50; n < 200; n++ {
		if _, err := os.Stat(fmt.Sprintf("/tmp/.X11-unix/X%d", n)); err == nil {
			continue
		}
		cmd := exec.Command(xvfb, fmt.Sprintf(":%d", n), "-screen", "0", fmt.Sprintf("%dx%dx24", xvfbWidth, xvfbHeight), "-nolisten", "tcp")
		if err := cmd.Start(); err != nil {
			t.Fatalf("starting Xvfb: %v", err)
		}
		t.Cleanup(func() { cmd.Process.Kill(); cmd.Wait() })
		for i := 0; i < 100; i++ {
			if _, err := os.Stat(fmt.Sprintf("/tmp/.X11-unix/X%d", n)); err == nil {
				return fmt.Sprintf(":%d", n)
			}
			time.Sleep(50 * time.Millisecond)
		}
		t.Fatalf("Xvfb :%d did not start", n)
	}
	t.Fatal("no free X display number")
	return ""
}

func readPNG(t *testing.T, path string) image.Image {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return img
}

// nearestShares classifies every pixel by the nearest of white and the
// palette's colours (in RGB) and returns each palette colour's share of the
// image.
func nearestShares(img image.Image, palette []color.NRGBA) []float64 {
	counts := make([]int, len(palette))
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bl, _ := img.At(x, y).RGBA()
			best, bestD := -1, dist2(r>>8, g>>8, bl>>8, 255, 255, 255)
			for i, c := range palette {
				if d := dist2(r>>8, g>>8, bl>>8, uint32(c.R), uint32(c.G), uint32(c.B)); d < bestD {
					best, bestD = i, d
				}
			}
			if best >= 0 {
				counts[best]++
			}
		}
	}
	out := make([]float64, len(palette))
	for i, c := range counts {
		out[i] = float64(c) / float64(b.Dx()*b.Dy())
	}
	return out
}

func dist2(r1, g1, b1, r2, g2, b2 uint32) int {
	d := func(a, b uint32) int { return int(a) - int(b) }
	return d(r1, r2)*d(r1, r2) + d(g1, g2)*d(g1, g2) + d(b1, b2)*d(b1, b2)
}

// mapColours counts the distinct colours that cover at least 0.05% of the
// rectangle r of img (so that blends at the edges of points do not count),
// and the share of r that differs from its most common colour (the
// background).
func mapColours(img image.Image, r image.Rectangle) (colours int, inked float64) {
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
