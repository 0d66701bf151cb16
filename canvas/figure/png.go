package figure

import (
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"image"
	"image/png"
	"io"
	"math"
)

// WritePNG draws f at size s and writes it to w as a PNG file (ISO/IEC
// 15948). When s.DPI > 0 the file carries it in a pHYs chunk placed right
// after IHDR, in pixels per metre on both axes:
//
//	ppm = round(DPI / 0.0254)
//
// so 300 dpi is 11811 pixels per metre. WritePNG returns an *InputError for
// bad input (see Figure) and the writer's error, with context, when writing
// fails.
func WritePNG(w io.Writer, f *Figure, s Size) error {
	sc, err := f.scene(s)
	if err != nil {
		return err
	}
	img, err := sc.render()
	if err != nil {
		return err
	}
	if err := encodePNG(w, img, s.DPI); err != nil {
		return fmt.Errorf("figure: writing PNG: %w", err)
	}
	return nil
}

// render draws the scene into a new image.
func (sc *scene) render() (*image.RGBA, error) {
	ts, err := newTypesetter()
	if err != nil {
		return nil, err
	}
	img := image.NewRGBA(image.Rect(0, 0, sc.width, sc.height))
	bg := premultiplied(sc.background)
	for i := 0; i < len(img.Pix); i += 4 {
		copy(img.Pix[i:i+4], bg[:])
	}
	if sc.points != nil {
		if err := sc.points.draw(img.SubImage(sc.points.area).(*image.RGBA), sc.background); err != nil {
			return nil, err
		}
	}
	c := &pngCanvas{img: img, ts: ts}
	for _, it := range sc.items {
		it.drawPNG(c)
	}
	return img, nil
}

// premultiplied returns the premultiplied RGBA bytes of c.
func premultiplied(c interface{ RGBA() (r, g, b, a uint32) }) [4]uint8 {
	r, g, b, a := c.RGBA()
	return [4]uint8{uint8(r >> 8), uint8(g >> 8), uint8(b >> 8), uint8(a >> 8)}
}

// pngEncoder compresses with zlib's fastest level: figures are written once
// and the larger file is a small price for a quicker export.
var pngEncoder = png.Encoder{CompressionLevel: png.BestSpeed}

// encodePNG writes img as PNG, with a pHYs chunk when dpi > 0.
func encodePNG(w io.Writer, img image.Image, dpi float64) error {
	if dpi > 0 {
		pw := &physWriter{w: w, ppm: uint32(math.Round(dpi / 0.0254))}
		if err := pngEncoder.Encode(pw, img); err != nil {
			return err
		}
		if !pw.done {
			return errPNGHeader
		}
		return nil
	}
	return pngEncoder.Encode(w, img)
}

// pngHeadLen is the length of the PNG signature and the IHDR chunk: 8 bytes
// of signature, then a chunk of 4 (length) + 4 (type) + 13 (data) + 4 (CRC).
const pngHeadLen = 8 + 4 + 4 + 13 + 4

var errPNGHeader = errors.New("PNG encoder output does not start with IHDR")

// physWriter passes a PNG stream through, inserting a pHYs chunk after
// IHDR.
type physWriter struct {
	w    io.Writer
	ppm  uint32
	head []byte // the first pngHeadLen bytes, until they are complete
	done bool
}

func (p *physWriter) Write(b []byte) (int, error) {
	if p.done {
		return p.w.Write(b)
	}
	take := min(len(b), pngHeadLen-len(p.head))
	p.head = append(p.head, b[:take]...)
	if len(p.head) < pngHeadLen {
		return len(b), nil
	}
	if string(p.head[12:16]) != "IHDR" || binary.BigEndian.Uint32(p.head[8:12]) != 13 {
		return 0, errPNGHeader
	}
	if _, err := p.w.Write(p.head); err != nil {
		return 0, err
	}
	if _, err := p.w.Write(physChunk(p.ppm)); err != nil {
		return 0, err
	}
	p.done = true
	n, err := p.w.Write(b[take:])
	return take + n, err
}

// physChunk returns a pHYs chunk of ppm pixels per metre on both axes.
func physChunk(ppm uint32) []byte {
	c := make([]byte, 0, 4+4+9+4)
	c = binary.BigEndian.AppendUint32(c, 9)
	c = append(c, "pHYs"...)
	c = binary.BigEndian.AppendUint32(c, ppm)
	c = binary.BigEndian.AppendUint32(c, ppm)
	c = append(c, 1) // unit: the metre
	return binary.BigEndian.AppendUint32(c, crc32.ChecksumIEEE(c[4:]))
}
