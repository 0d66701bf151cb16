// Command mkicons draws the program's icon from its SVG source at every
// size the packages need, and writes the PNG files and the Windows icon:
//
//	go run lodestone/packaging/cmd/mkicons [-svg assets/icon.svg] [-out assets]
//
// It writes icon-N.png for N in 16, 24, 32, 48, 64, 128, 256, 512 and
// 1024, and icon.ico holding the sizes up to 256. "go generate ./assets" runs it; the
// files it writes are committed, so that building the program needs no
// generator.
package main

import (
	"bytes"
	"flag"
	"fmt"
	"image"
	"image/draw"
	"image/png"
	"io"
	"os"
	"path/filepath"
	"slices"

	"lodestone/packaging/internal/flatsvg"
	"lodestone/packaging/internal/ico"
)

// pngSizes are the square sizes of the PNG icons: the hicolor theme's
// usual application sizes on Linux (16 to 512), and the inputs of a macOS
// icon set (16 to 1024).
var pngSizes = []int{16, 24, 32, 48, 64, 128, 256, 512, 1024}

// icoSizes are the sizes in the Windows icon (at most 256, the format's
// limit), covering the small, list, tile and large views.
var icoSizes = []int{16, 24, 32, 48, 64, 128, 256}

// pngName is the file name of the PNG icon of the given size.
func pngName(size int) string { return fmt.Sprintf("icon-%d.png", size) }

// icoName is the file name of the Windows icon.
const icoName = "icon.ico"

// generate renders the SVG source at every size and returns the files to
// write, by name.
func generate(svg io.Reader) (map[string][]byte, error) {
	img, err := flatsvg.Parse(svg)
	if err != nil {
		return nil, err
	}
	files := make(map[string][]byte)
	var icoImages []image.Image
	enc := png.Encoder{CompressionLevel: png.BestCompression}
	for _, size := range pngSizes {
		rgba, err := img.Render(size, size)
		if err != nil {
			return nil, err
		}
		// Convert once, so that the PNG and the icon store the same
		// straight-alpha pixels.
		nrgba := image.NewNRGBA(rgba.Bounds())
		draw.Draw(nrgba, nrgba.Bounds(), rgba, image.Point{}, draw.Src)
		var buf bytes.Buffer
		if err := enc.Encode(&buf, nrgba); err != nil {
			return nil, err
		}
		files[pngName(size)] = buf.Bytes()
		if slices.Contains(icoSizes, size) {
			icoImages = append(icoImages, nrgba)
		}
	}
	var buf bytes.Buffer
	if err := ico.Encode(&buf, icoImages); err != nil {
		return nil, err
	}
	files[icoName] = buf.Bytes()
	return files, nil
}

func run(svgPath, outDir string) error {
	f, err := os.Open(svgPath)
	if err != nil {
		return err
	}
	defer f.Close()
	files, err := generate(f)
	if err != nil {
		return fmt.Errorf("%s: %w", svgPath, err)
	}
	for name, data := range files {
		if err := os.WriteFile(filepath.Join(outDir, name), data, 0o644); err != nil {
			return err
		}
	}
	return nil
}

func main() {
	svgPath := flag.String("svg", filepath.Join("assets", "icon.svg"), "the icon's SVG source")
	outDir := flag.String("out", "assets", "the folder to write the PNG files and "+icoName+" into")
	flag.Parse()
	if flag.NArg() != 0 {
		fmt.Fprintln(os.Stderr, "usage: mkicons [-svg FILE] [-out DIR]")
		os.Exit(2)
	}
	if err := run(*svgPath, *outDir); err != nil {
		fmt.Fprintln(os.Stderr, "mkicons:", err)
		os.Exit(1)
	}
}
