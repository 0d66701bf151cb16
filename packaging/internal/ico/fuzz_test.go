package ico

import (
	"bytes"
	"errors"
	"image"
	"testing"
)

// FuzzDecode checks that Decode returns either images of 1 to 256 pixels a
// side or a *FormatError (or an error of image/png inside one), and never
// panics.
func FuzzDecode(f *testing.F) {
	for _, imgs := range [][]image.Image{
		{testImage(2, 2, 1)},
		{testImage(16, 16, 2), testImage(256, 256, 3)},
	} {
		var buf bytes.Buffer
		if err := Encode(&buf, imgs); err != nil {
			f.Fatal(err)
		}
		f.Add(buf.Bytes())
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		imgs, err := Decode(bytes.NewReader(data))
		if err != nil {
			var fe *FormatError
			if !errors.As(err, &fe) {
				t.Fatalf("error %v (%T) is not a *FormatError", err, err)
			}
			return
		}
		for i, img := range imgs {
			if s := img.Bounds().Size(); s.X < 1 || s.Y < 1 || s.X > 256 && s.Y > 256 {
				t.Errorf("image %d is %v", i, s)
			}
		}
	})
}
