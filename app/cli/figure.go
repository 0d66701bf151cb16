package cli

import (
	"context"
	"fmt"
	"image/color"
	"io"
	"path/filepath"
	"strings"

	"lodestone/app/paint"
	"lodestone/app/restore"
	"lodestone/app/session"
	"lodestone/canvas/figure"
	"lodestone/canvas/raster"
	"lodestone/compute/atlas"
)

func init() {
	register("figure", "draw the map of a session as a PNG or SVG figure", runFigure)
}

func runFigure(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("figure", "--session FILE --out fig.png|fig.svg [--preset NAME] [--width PX --height PX] [--dpi N] [--paint COLUMN]", stderr)
	var sessionPath, out string
	fs.inputPath(&sessionPath, "session", "the session file (.lodestone) whose map to draw")
	fs.outputPath(&out, "out", "the figure to write: .png or .svg")
	preset := fs.String("preset", "slide16x9", "size: "+strings.Join(figure.Presets(), ", ")+" (ignored with --width and --height)")
	width := fs.Int("width", 0, "width in pixels (with --height, instead of --preset)")
	height := fs.Int("height", 0, "height in pixels (with --width)")
	dpi := fs.Float64("dpi", 0, "resolution written into the file (0: the preset's)")
	paintName := fs.String("paint", "", "annotation column to paint by, or \"groups\" (default: the session's paint)")
	title := fs.String("title", "", "title above the map")
	noKey := fs.Bool("no-key", false, "leave out the key")
	labels := fs.Bool("labels", false, "write each category's name on the map")
	transparent := fs.Bool("transparent", false, "transparent background")
	if err := fs.parse(args); err != nil {
		return err
	}
	if sessionPath == "" || out == "" {
		return usagef("--session and --out are required")
	}
	format := strings.ToLower(strings.TrimPrefix(filepath.Ext(out), "."))
	if format != "png" && format != "svg" {
		return usagef("--out %q: the name must end in .png or .svg", out)
	}
	var size figure.Size
	switch {
	case *width > 0 || *height > 0:
		if *width < 16 || *height < 16 {
			return usagef("--width and --height must both be at least 16")
		}
		size = figure.Size{WidthPx: *width, HeightPx: *height, DPI: *dpi}
	default:
		var err error
		if size, err = figure.Preset(*preset, *dpi); err != nil {
			return usageError{err}
		}
	}
	s, err := session.Read(sessionPath)
	if err != nil {
		return usageError{err}
	}
	p, err := sessionPaint(s, *paintName)
	if err != nil {
		return err
	}
	f := &figure.Figure{Layout: s.Layout, Colours: p.Colours, Palette: p.Palette, Title: *title,
		ScreenRadius: s.PointSize, Opacity: s.Opacity, Background: color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xff}}
	if s.View.Pinned && s.View.Scale > 0 {
		f.View = &raster.View{CenterX: s.View.CenterX, CenterY: s.View.CenterY, Scale: s.View.Scale, Width: s.View.Width, Height: s.View.Height}
	}
	if *transparent {
		f.Background = color.NRGBA{}
	}
	if !*noKey {
		f.Key = p.Key()
	}
	if *labels {
		if f.Labels, err = p.Labels(context.Background(), s.Layout); err != nil {
			return err
		}
	}
	if err := writeOutput(newBar(stderr, true), "out", out, func(w io.Writer) error {
		if format == "svg" {
			return figure.WriteSVG(w, f, size, figure.DefaultVectorLimit)
		}
		return figure.WritePNG(w, f, size)
	}); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "wrote %s (%d × %d px, painted by %s)\n", out, size.WidthPx, size.HeightPx, p.Name)
	return nil
}

// sessionPaint computes the paint of a session's map: the named column or
// "groups", else the session's own paint. A paint by a gene needs the
// atlas's expression, which a session does not hold; it falls back to no
// paint with an error telling so.
func sessionPaint(s *session.Session, name string) (*paint.Paint, error) {
	n := s.Cells()
	cols := restore.Annotations(s)
	hidden := []bool(nil)
	if name == "" {
		switch s.Paint.Source {
		case "column":
			name, hidden = s.Paint.Name, s.Paint.Hidden
		case "groups":
			name = "groups"
		case "gene":
			return nil, usagef("the session's map is painted by the gene %q, which needs the atlas: give --paint COLUMN", s.Paint.Name)
		default:
			return paint.PlainPaint(n), nil
		}
	}
	if name == "groups" {
		var gs []*paint.Group
		for _, g := range s.Groups {
			gs = append(gs, &paint.Group{Name: g.Name, Colour: color.NRGBA{R: g.Colour.R, G: g.Colour.G, B: g.Colour.B, A: 0xff},
				Cells: g.Mask(n), Count: len(g.Members)})
		}
		return paint.GroupsPaint(gs, n), nil
	}
	var names []string
	for i := range cols {
		if cols[i].Name == name {
			if hidden != nil && (cols[i].Kind != atlas.Categorical || len(hidden) != len(cols[i].Levels)+1) {
				hidden = nil
			}
			return paint.ForColumn(&cols[i], hidden), nil
		}
		names = append(names, cols[i].Name)
	}
	return nil, usagef("--paint %q: the session has no such column (it has: %s, groups)", name, strings.Join(names, ", "))
}
