// Package ico writes and reads Windows icon files (.ico): a directory of
// square or rectangular images of up to 256 × 256 pixels, each stored as
// a 32-bit device-independent bitmap or as a PNG file.
//
// The layout follows Microsoft's documentation of icon resources (ICONDIR
// and ICONDIRENTRY headers; BITMAPINFOHEADER images whose height counts the
// colour bitmap and the 1-bit transparency mask together).
package ico

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"io"
)

// The errors a FormatError wraps, and the error Encode returns for images
// it cannot store; test for them with errors.Is.
var (
	ErrHeader      = errors.New("not an icon file")
	ErrTruncated   = errors.New("truncated")
	ErrUnsupported = errors.New("unsupported image encoding")
	ErrSize        = errors.New("image size must be 1 to 256 pixels a side")
)

// FormatError is the error Decode returns for a file it cannot read.
// Entry is the 0-based directory entry at fault, or -1 for the file
// header; Offset is the byte offset where the problem was found.
type FormatError struct {
	Entry  int
	Offset int64
	Err    error
}

func (e *FormatError) Error() string {
	if e.Entry < 0 {
		return fmt.Sprintf("ico: header at byte %d: %v", e.Offset, e.Err)
	}
	return fmt.Sprintf("ico: image %d at byte %d: %v", e.Entry, e.Offset, e.Err)
}

func (e *FormatError) Unwrap() error { return e.Err }

const (
	dirSize   = 6  // ICONDIR: reserved, type (1 = icon), count
	entrySize = 16 // ICONDIRENTRY
	dibSize   = 40 // BITMAPINFOHEADER
	maxSide   = 256
	// pngSide is the side length from which Encode stores an image as PNG
	// rather than as a bitmap: common practice stores only the 256-pixel
	// image compressed, which every Windows version since Vista reads.
	pngSide = 256
)

// Encode writes imgs as one icon file, in the given order. Images with a
// side of 256 pixels are stored as PNG, smaller ones as 32-bit
// bitmaps with straight (not premultiplied) alpha and a transparency mask
// set where alpha is zero. Encode returns an error wrapping ErrSize for an
// image with a side outside 1 … 256, and one wrapping ErrHeader for an
// empty list or more than 65535 images.
func Encode(w io.Writer, imgs []image.Image) error {
	if len(imgs) == 0 || len(imgs) > 0xffff {
		return fmt.Errorf("ico: %w: %d images, want 1 to 65535", ErrHeader, len(imgs))
	}
	blobs := make([][]byte, len(imgs))
	for i, img := range imgs {
		b := img.Bounds()
		if b.Dx() < 1 || b.Dy() < 1 || b.Dx() > maxSide || b.Dy() > maxSide {
			return fmt.Errorf("ico: image %d: %w, got %d × %d", i, ErrSize, b.Dx(), b.Dy())
		}
		if b.Dx() >= pngSide || b.Dy() >= pngSide {
			var buf bytes.Buffer
			if err := png.Encode(&buf, img); err != nil {
				return fmt.Errorf("ico: image %d: %w", i, err)
			}
			blobs[i] = buf.Bytes()
		} else {
			blobs[i] = bitmap(img)
		}
	}
	head := make([]byte, dirSize+entrySize*len(imgs))
	le := binary.LittleEndian
	le.PutUint16(head[2:], 1)
	le.PutUint16(head[4:], uint16(len(imgs)))
	offset := len(head)
	for i, img := range imgs {
		b := img.Bounds()
		e := head[dirSize+entrySize*i:]
		e[0], e[1] = uint8(b.Dx()), uint8(b.Dy()) // 256 is stored as 0
		le.PutUint16(e[4:], 1)                    // colour planes
		le.PutUint16(e[6:], 32)                   // bits per pixel
		le.PutUint32(e[8:], uint32(len(blobs[i])))
		le.PutUint32(e[12:], uint32(offset))
		offset += len(blobs[i])
	}
	if _, err := w.Write(head); err != nil {
		return err
	}
	for _, blob := range blobs {
		if _, err := w.Write(blob); err != nil {
			return err
		}
	}
	return nil
}

// maskStride is the length of a row of the 1-bit mask, padded to 4 bytes.
func maskStride(w int) int { return (w + 31) / 32 * 4 }

// bitmap encodes img as a BITMAPINFOHEADER, bottom-up BGRA rows and the
// AND mask (1 = transparent).
func bitmap(img image.Image) []byte {
	b := img.Bounds()
	w, h := b.Dx(), b.Dy()
	ms := maskStride(w)
	out := make([]byte, dibSize+4*w*h+ms*h)
	le := binary.LittleEndian
	le.PutUint32(out[0:], dibSize)
	le.PutUint32(out[4:], uint32(w))
	le.PutUint32(out[8:], uint32(2*h)) // colour rows and mask rows
	le.PutUint16(out[12:], 1)          // planes
	le.PutUint16(out[14:], 32)         // bits per pixel
	le.PutUint32(out[20:], uint32(4*w*h+ms*h))
	pix := out[dibSize:]
	mask := out[dibSize+4*w*h:]
	for y := range h {
		row := h - 1 - y // bottom-up
		for x := range w {
			c := color.NRGBAModel.Convert(img.At(b.Min.X+x, b.Min.Y+y)).(color.NRGBA)
			p := pix[4*(row*w+x):]
			p[0], p[1], p[2], p[3] = c.B, c.G, c.R, c.A
			if c.A == 0 {
				mask[row*ms+x/8] |= 0x80 >> (x % 8)
			}
		}
	}
	return out
}

var pngSignature = []byte("\x89PNG\r\n\x1a\n")

// Decode reads an icon file and returns its images in directory order:
// *image.NRGBA for bitmaps, whatever image/png returns for PNG entries.
// It reads 32-bit uncompressed bitmaps, taking their alpha channel as it
// is, and PNG images: the encodings Encode writes and current tools
// produce. Other bitmap depths give an error wrapping ErrUnsupported.
// Errors are *FormatError values.
func Decode(r io.Reader) ([]image.Image, error) {
	data, err := io.ReadAll(r)
	if err != nil {
		return nil, err
	}
	le := binary.LittleEndian
	if len(data) < dirSize {
		return nil, &FormatError{Entry: -1, Offset: int64(len(data)), Err: ErrTruncated}
	}
	if le.Uint16(data[0:]) != 0 || le.Uint16(data[2:]) != 1 {
		return nil, &FormatError{Entry: -1, Err: ErrHeader}
	}
	n := int(le.Uint16(data[4:]))
	if n == 0 {
		return nil, &FormatError{Entry: -1, Offset: 4, Err: fmt.Errorf("%w: no images", ErrHeader)}
	}
	if len(data) < dirSize+entrySize*n {
		return nil, &FormatError{Entry: -1, Offset: int64(len(data)), Err: fmt.Errorf("%w: directory of %d entries", ErrTruncated, n)}
	}
	imgs := make([]image.Image, n)
	for i := range imgs {
		at := dirSize + entrySize*i
		e := data[at:]
		size, offset := int64(le.Uint32(e[8:])), int64(le.Uint32(e[12:]))
		if offset+size > int64(len(data)) {
			return nil, &FormatError{Entry: i, Offset: int64(at), Err: fmt.Errorf("%w: %d bytes at %d past the end of a %d-byte file", ErrTruncated, size, offset, len(data))}
		}
		blob := data[offset : offset+size]
		if bytes.HasPrefix(blob, pngSignature) {
			// Read the size first: an icon's images have at most 256
			// pixels a side, and a larger one is not decoded at all.
			cfg, err := png.DecodeConfig(bytes.NewReader(blob))
			if err != nil {
				return nil, &FormatError{Entry: i, Offset: offset, Err: err}
			}
			if cfg.Width > maxSide || cfg.Height > maxSide {
				return nil, &FormatError{Entry: i, Offset: offset, Err: fmt.Errorf("%w: PNG image of %d × %d", ErrUnsupported, cfg.Width, cfg.Height)}
			}
			img, err := png.Decode(bytes.NewReader(blob))
			if err != nil {
				return nil, &FormatError{Entry: i, Offset: offset, Err: err}
			}
			imgs[i] = img
			continue
		}
		img, err := readBitmap(blob)
		if err != nil {
			return nil, &FormatError{Entry: i, Offset: offset, Err: err}
		}
		imgs[i] = img
	}
	return imgs, nil
}

// readBitmap decodes a 32-bit BI_RGB icon bitmap.
func readBitmap(blob []byte) (*image.NRGBA, error) {
	le := binary.LittleEndian
	if len(blob) < dibSize {
		return nil, fmt.Errorf("%w: bitmap header", ErrTruncated)
	}
	hs := int(le.Uint32(blob[0:]))
	w, h2 := int(int32(le.Uint32(blob[4:]))), int(int32(le.Uint32(blob[8:])))
	bpp, compression := le.Uint16(blob[14:]), le.Uint32(blob[16:])
	if hs < dibSize || hs > len(blob) {
		return nil, fmt.Errorf("%w: bitmap header size %d", ErrUnsupported, hs)
	}
	if bpp != 32 || compression != 0 {
		return nil, fmt.Errorf("%w: %d bits per pixel, compression %d (want 32, uncompressed)", ErrUnsupported, bpp, compression)
	}
	h := h2 / 2
	if w < 1 || w > maxSide || h < 1 || h > maxSide || h2%2 != 0 {
		return nil, fmt.Errorf("%w: bitmap of %d × %d/2", ErrUnsupported, w, h2)
	}
	pix := blob[hs:]
	if len(pix) < 4*w*h {
		return nil, fmt.Errorf("%w: %d bytes of pixels, want %d", ErrTruncated, len(pix), 4*w*h)
	}
	img := image.NewNRGBA(image.Rect(0, 0, w, h))
	for y := range h {
		src := pix[4*(h-1-y)*w:]
		dst := img.Pix[y*img.Stride:]
		for x := range w {
			dst[4*x], dst[4*x+1], dst[4*x+2], dst[4*x+3] = src[4*x+2], src[4*x+1], src[4*x], src[4*x+3]
		}
	}
	return img, nil
}
