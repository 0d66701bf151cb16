package ico

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// testImage returns a w × h image of random straight-alpha pixels, with
// fully transparent and fully opaque ones among them.
func testImage(w, h int, seed uint64) *image.NRGBA {
	rng := rand.New(rand.NewPCG(seed, 7))
	img := image.NewNRGBA(image.Rect(0, 0, w, h))
	for i := 0; i < len(img.Pix); i += 4 {
		a := uint8(rng.IntN(256))
		switch rng.IntN(4) {
		case 0:
			a = 0
		case 1:
			a = 0xff
		}
		img.Pix[i], img.Pix[i+1], img.Pix[i+2], img.Pix[i+3] = uint8(rng.IntN(256)), uint8(rng.IntN(256)), uint8(rng.IntN(256)), a
		if a == 0 {
			img.Pix[i], img.Pix[i+1], img.Pix[i+2] = 0, 0, 0
		}
	}
	return img
}

// equalNRGBA reports the first pixel where a and b differ.
func equalNRGBA(a image.Image, b *image.NRGBA) error {
	if a.Bounds().Size() != b.Bounds().Size() {
		return fmt.Errorf("size %v, want %v", a.Bounds().Size(), b.Bounds().Size())
	}
	for y := range b.Bounds().Dy() {
		for x := range b.Bounds().Dx() {
			got := color.NRGBAModel.Convert(a.At(a.Bounds().Min.X+x, a.Bounds().Min.Y+y)).(color.NRGBA)
			if want := b.NRGBAAt(x, y); got != want {
				return fmt.Errorf("pixel (%d,%d) is %v, want %v", x, y, got, want)
			}
		}
	}
	return nil
}

func TestEncodeLayout(t *testing.T) {
	// A 2 × 2 icon worked out by hand from Microsoft's description of the
	// format: a 6-byte ICONDIR, one 16-byte ICONDIRENTRY, a 40-byte
	// BITMAPINFOHEADER with twice the height, bottom-up BGRA rows, then
	// the AND mask (1 = transparent), each row padded to 4 bytes.
	img := image.NewNRGBA(image.Rect(0, 0, 2, 2))
	img.SetNRGBA(0, 0, color.NRGBA{0x11, 0x22, 0x33, 0xff}) // top left
	img.SetNRGBA(1, 0, color.NRGBA{0, 0, 0, 0})             // top right, transparent
	img.SetNRGBA(0, 1, color.NRGBA{0x44, 0x55, 0x66, 0x80}) // bottom left
	img.SetNRGBA(1, 1, color.NRGBA{0x77, 0x88, 0x99, 0x01}) // bottom right
	var buf bytes.Buffer
	if err := Encode(&buf, []image.Image{img}); err != nil {
		t.Fatal(err)
	}
	want := []byte{
		0, 0, 1, 0, 1, 0, // ICONDIR: reserved, type 1, one image
		2, 2, 0, 0, 1, 0, 32, 0, 64, 0, 0, 0, 22, 0, 0, 0, // 2×2, 1 plane, 32 bpp, 40+16+8 bytes at 22
		40, 0, 0, 0, 2, 0, 0, 0, 4, 0, 0, 0, 1, 0, 32, 0, // header size, width 2, height 2·2, 1 plane, 32 bpp
		0, 0, 0, 0, 24, 0, 0, 0, // BI_RGB, 16 bytes of pixels + 8 of mask
		0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, // resolution and palette: unused
		0x66, 0x55, 0x44, 0x80, 0x99, 0x88, 0x77, 0x01, // bottom row first, BGRA
		0x33, 0x22, 0x11, 0xff, 0, 0, 0, 0, // then the top row
		0, 0, 0, 0, // mask, bottom row: both visible
		0x40, 0, 0, 0, // mask, top row: the second pixel is transparent
	}
	if !bytes.Equal(buf.Bytes(), want) {
		t.Errorf("encoded\n%v\nwant\n%v", buf.Bytes(), want)
	}
}

func TestRoundTrip(t *testing.T) {
	sizes := []int{1, 16, 33, 48, 256}
	var imgs []image.Image
	for i, s := range sizes {
		imgs = append(imgs, testImage(s, s, uint64(i)))
	}
	imgs = append(imgs, testImage(20, 7, 99)) // not square
	var buf bytes.Buffer
	if err := Encode(&buf, imgs); err != nil {
		t.Fatal(err)
	}
	got, err := Decode(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(imgs) {
		t.Fatalf("decoded %d images, want %d", len(got), len(imgs))
	}
	for i := range imgs {
		if err := equalNRGBA(got[i], imgs[i].(*image.NRGBA)); err != nil {
			t.Errorf("image %d: %v", i, err)
		}
	}
}

func TestImageMagickReadsEncoded(t *testing.T) {
	// ImageMagick's ICO reader is an independent decoder: each image it
	// reads from our file must equal the image we wrote, pixel for pixel.
	convert := lookConvert(t)
	dir := t.TempDir()
	sizes := []int{16, 32, 48, 256}
	var imgs []image.Image
	for i, s := range sizes {
		imgs = append(imgs, testImage(s, s, uint64(10+i)))
	}
	path := filepath.Join(dir, "test.ico")
	var buf bytes.Buffer
	if err := Encode(&buf, imgs); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	for i := range sizes {
		out := filepath.Join(dir, fmt.Sprintf("frame%d.png", i))
		run(t, convert, fmt.Sprintf("%s[%d]", path, i), "PNG32:"+out)
		if err := equalNRGBA(readPNG(t, out), imgs[i].(*image.NRGBA)); err != nil {
			t.Errorf("ImageMagick's image %d (%d pixels): %v", i, sizes[i], err)
		}
	}
}

func TestDecodeImageMagickIcon(t *testing.T) {
	// ImageMagick as an independent encoder: Decode must read the icon it
	// writes from PNG files back to the same pixels.
	convert := lookConvert(t)
	dir := t.TempDir()
	sizes := []int{16, 24, 64, 256}
	args := []string{}
	var imgs []*image.NRGBA
	for i, s := range sizes {
		img := testImage(s, s, uint64(20+i))
		imgs = append(imgs, img)
		p := filepath.Join(dir, fmt.Sprintf("in%d.png", i))
		f, err := os.Create(p)
		if err != nil {
			t.Fatal(err)
		}
		if err := png.Encode(f, img); err != nil {
			t.Fatal(err)
		}
		f.Close()
		args = append(args, p)
	}
	out := filepath.Join(dir, "magick.ico")
	run(t, convert, append(args, out)...)
	f, err := os.Open(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	got, err := Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(imgs) {
		t.Fatalf("decoded %d images, want %d", len(got), len(imgs))
	}
	for i := range imgs {
		if err := equalNRGBA(got[i], imgs[i]); err != nil {
			t.Errorf("image %d (%d pixels): %v", i, sizes[i], err)
		}
	}
}

func TestErrors(t *testing.T) {
	var good bytes.Buffer
	if err := Encode(&good, []image.Image{testImage(4, 4, 1)}); err != nil {
		t.Fatal(err)
	}
	g := good.Bytes()
	with := func(f func(b []byte) []byte) []byte { return f(append([]byte(nil), g...)) }
	for _, tc := range []struct {
		name   string
		data   []byte
		err    error
		entry  int
		offset int64
	}{
		{"empty", nil, ErrTruncated, -1, 0},
		{"cursor", with(func(b []byte) []byte { b[2] = 2; return b }), ErrHeader, -1, 0},
		{"no images", with(func(b []byte) []byte { b[4] = 0; return b }), ErrHeader, -1, 4},
		{"short directory", g[:10], ErrTruncated, -1, 10},
		{"short image", g[:len(g)-1], ErrTruncated, 0, 6},
		{"24 bits", with(func(b []byte) []byte { b[22+14] = 24; return b }), ErrUnsupported, 0, 22},
		{"compressed", with(func(b []byte) []byte { b[22+16] = 3; return b }), ErrUnsupported, 0, 22},
		{"odd height", with(func(b []byte) []byte { b[22+8] = 7; return b }), ErrUnsupported, 0, 22},
		{"large PNG", largePNG(t), ErrUnsupported, 0, 22},
	} {
		_, err := Decode(bytes.NewReader(tc.data))
		var fe *FormatError
		if !errors.As(err, &fe) || !errors.Is(err, tc.err) || fe.Entry != tc.entry || fe.Offset != tc.offset {
			t.Errorf("%s: got %v, want %v in entry %d at byte %d", tc.name, err, tc.err, tc.entry, tc.offset)
		}
	}
	// Encode refuses what the format cannot hold.
	for _, imgs := range [][]image.Image{nil, {testImage(257, 16, 1)}, {image.NewNRGBA(image.Rect(0, 0, 0, 5))}} {
		err := Encode(&bytes.Buffer{}, imgs)
		if !errors.Is(err, ErrSize) && !errors.Is(err, ErrHeader) {
			t.Errorf("Encode(%d images): error %v, want ErrSize or ErrHeader", len(imgs), err)
		}
	}
	if err := Encode(&bytes.Buffer{}, []image.Image{testImage(300, 300, 1)}); !errors.Is(err, ErrSize) {
		t.Errorf("Encode(300 × 300): error %v, want ErrSize", err)
	}
}

// largePNG returns an icon file whose one entry is a 300 × 1 PNG image.
func largePNG(t *testing.T) []byte {
	var img bytes.Buffer
	if err := png.Encode(&img, testImage(300, 1, 5)); err != nil {
		t.Fatal(err)
	}
	head := []byte{0, 0, 1, 0, 1, 0, 0, 1, 0, 0, 1, 0, 32, 0, 0, 0, 0, 0, 22, 0, 0, 0}
	binary.LittleEndian.PutUint32(head[14:], uint32(img.Len()))
	return append(head, img.Bytes()...)
}

func lookConvert(t *testing.T) string {
	t.Helper()
	p, err := exec.LookPath("convert")
	if err != nil {
		t.Skip("ImageMagick's convert is not installed (Debian package imagemagick); skipping the comparison with an independent ICO codec")
	}
	return p
}

func run(t *testing.T, name string, args ...string) {
	t.Helper()
	if out, err := exec.Command(name, args...).CombinedOutput(); err != nil {
		t.Fatalf("%s %v: %v\n%s", name, args, err, out)
	}
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
		t.Fatal(err)
	}
	return img
}
