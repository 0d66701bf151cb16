package main

import (
	"bytes"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"os"
	"path/filepath"
	"testing"

	"lodestone/packaging/internal/ico"
)

const assetsDir = "../../../assets"

func decodePNG(t *testing.T, name string, data []byte) image.Image {
	t.Helper()
	img, err := png.Decode(bytes.NewReader(data))
	if err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	return img
}

// maxDiff returns the largest difference between two images in any
// channel of their straight-alpha pixels, and where it is.
func maxDiff(a, b image.Image) (int, image.Point, error) {
	if a.Bounds().Size() != b.Bounds().Size() {
		return 0, image.Point{}, fmt.Errorf("size %v, want %v", a.Bounds().Size(), b.Bounds().Size())
	}
	worst, at := 0, image.Point{}
	for y := range a.Bounds().Dy() {
		for x := range a.Bounds().Dx() {
			p := color.NRGBAModel.Convert(a.At(a.Bounds().Min.X+x, a.Bounds().Min.Y+y)).(color.NRGBA)
			q := color.NRGBAModel.Convert(b.At(b.Bounds().Min.X+x, b.Bounds().Min.Y+y)).(color.NRGBA)
			for _, d := range []int{int(p.R) - int(q.R), int(p.G) - int(q.G), int(p.B) - int(q.B), int(p.A) - int(q.A)} {
				if d < 0 {
					d = -d
				}
				if d > worst {
					worst, at = d, image.Pt(x, y)
				}
			}
		}
	}
	return worst, at, nil
}

// TestCommittedIconsAreCurrent regenerates the icons from assets/icon.svg
// and compares them with the committed files: run "go generate ./assets"
// after changing the SVG. Pixels must agree exactly in colour and alpha,
// except where rounding of the rasteriser's float32 arithmetic, which is
// assembly on amd64 and Go elsewhere, may move a level: at most 1 level,
// and only at pixels that are neither transparent nor opaque.
func TestCommittedIconsAreCurrent(t *testing.T) {
	src, err := os.ReadFile(filepath.Join(assetsDir, "icon.svg"))
	if err != nil {
		t.Fatal(err)
	}
	fresh, err := generate(bytes.NewReader(src))
	if err != nil {
		t.Fatal(err)
	}
	for _, size := range pngSizes {
		name := pngName(size)
		committed, err := os.ReadFile(filepath.Join(assetsDir, name))
		if err != nil {
			t.Fatalf("%v (run go generate ./assets)", err)
		}
		a, b := decodePNG(t, name, committed), decodePNG(t, name, fresh[name])
		if a.Bounds().Dx() != size || a.Bounds().Dy() != size {
			t.Errorf("%s is %v, want %d × %d", name, a.Bounds().Size(), size, size)
		}
		d, at, err := maxDiff(a, b)
		if err != nil {
			t.Errorf("%s: %v", name, err)
			continue
		}
		if alpha := color.NRGBAModel.Convert(b.At(at.X, at.Y)).(color.NRGBA).A; d > 1 || d == 1 && (alpha == 0 || alpha == 0xff) {
			t.Errorf("%s differs from a fresh rendering by %d levels at %v (alpha %d): run go generate ./assets", name, d, at, alpha)
		}
	}
	// The committed icon file holds the committed PNG images, exactly.
	f, err := os.Open(filepath.Join(assetsDir, icoName))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	imgs, err := ico.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	if len(imgs) != len(icoSizes) {
		t.Fatalf("%s holds %d images, want %d", icoName, len(imgs), len(icoSizes))
	}
	for i, size := range icoSizes {
		data, err := os.ReadFile(filepath.Join(assetsDir, pngName(size)))
		if err != nil {
			t.Fatal(err)
		}
		d, at, err := maxDiff(imgs[i], decodePNG(t, pngName(size), data))
		if err != nil || d != 0 {
			t.Errorf("%s image %d differs from %s (%v, %d levels at %v)", icoName, i, pngName(size), err, d, at)
		}
	}
}

func TestGenerateRejectsBadSource(t *testing.T) {
	_, err := generate(bytes.NewReader([]byte(`<svg viewBox="0 0 1 1"><rect width="1" height="1"/></svg>`)))
	if err == nil {
		t.Error("an SVG with <rect> (outside the subset) was accepted")
	}
}
