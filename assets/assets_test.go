package assets

import (
	"bytes"
	"image/png"
	"testing"
)

func TestIconPNG(t *testing.T) {
	cfg, err := png.DecodeConfig(bytes.NewReader(IconPNG))
	if err != nil {
		t.Fatalf("IconPNG is not a PNG image: %v", err)
	}
	if cfg.Width != 256 || cfg.Height != 256 {
		t.Errorf("IconPNG is %d × %d, want 256 × 256", cfg.Width, cfg.Height)
	}
	img, err := png.Decode(bytes.NewReader(IconPNG))
	if err != nil {
		t.Fatal(err)
	}
	// The tile has rounded corners: the image's corner is transparent and
	// its centre opaque.
	if _, _, _, a := img.At(0, 0).RGBA(); a != 0 {
		t.Errorf("corner alpha %d, want 0", a)
	}
	if _, _, _, a := img.At(128, 128).RGBA(); a != 0xffff {
		t.Errorf("centre alpha %d, want opaque", a)
	}
}
