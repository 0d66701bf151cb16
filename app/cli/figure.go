package cli

import (
	"context"
	"flag"
	"fmt"
	"image/color"
	"io"
	"os"
	"path/filepath"
	"strings"

	"lodestone/app/paint"
	"lodestone/app/restore"
	"lodestone/app/session"
	"lodestone/app/tables"
	"lodestone/canvas/figure"
	"lodestone/canvas/raster"
	"lodestone/compute/atlas"
	"lodestone/compute/markers"
)

func init() {
	register("figure", "draw the map of a session, or the expression of its markers by group, as a PNG or SVG figure", runFigure)
}

func runFigure(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("figure", "--session FILE --out fig.png|fig.svg [--preset NAME] [--width PX --height PX] [--dpi N] [--paint COLUMN]\n"+
		"       lodestone figure --session FILE --expression markers.csv [--by COLUMN|groups] --out plot.png|plot.svg [--dpi N]", stderr)
	var sessionPath, out, expression string
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
	fs.inputPath(&expression, "expression", "instead of the map, plot the expression of the top markers of this table (written by the markers command or the window) across the groups of --by")
	by := fs.String("by", "", "with --expression: the categorical column, or \"groups\", whose groups are the plot's rows (default: the session's paint)")
	quiet := fs.Bool("quiet", false, "print no progress")
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
	if expression != "" {
		var mapOnly []string
		fs.Visit(func(f *flag.Flag) {
			switch f.Name {
			case "session", "out", "dpi", "expression", "by", "quiet":
			default:
				mapOnly = append(mapOnly, "--"+f.Name)
			}
		})
		if len(mapOnly) > 0 {
			return usagef("%s: these draw the map, not the expression plot", strings.Join(mapOnly, ", "))
		}
		return expressionFigure(fs, sessionPath, expression, *by, out, format, *dpi, stdout, newBar(stderr, *quiet))
	}
	if *by != "" {
		return usagef("--by goes with --expression; the map's paint is --paint")
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

// expressionFigure draws the expression plot of the markers in the table at
// markersPath across the groups of the session's column (or its groups)
// named by, as the window's Markers tab draws it.
func expressionFigure(fs *flags, sessionPath, markersPath, by, out, format string, dpi float64, stdout io.Writer, b *bar) error {
	defer b.finish()
	s, err := session.Read(sessionPath)
	if err != nil {
		return usageError{err}
	}
	if err := fs.checkSession(s); err != nil {
		return err
	}
	f, err := os.Open(markersPath)
	if err != nil {
		return usageError{err}
	}
	rows, err := tables.ReadMarkers(f, markersPath)
	f.Close()
	if err != nil {
		return usageError{err}
	}
	if len(rows) == 0 {
		return usagef("%s: the table lists no genes", markersPath)
	}
	if by == "" {
		switch s.Paint.Source {
		case "column":
			by = s.Paint.Name
		case "groups":
			by = "groups"
		default:
			return usagef("--by is required: the session's map is not painted by a column or by groups")
		}
	}
	codes, names, err := sessionGroups(s, by)
	if err != nil {
		return err
	}
	ctx, stop := interruptible()
	defer stop()
	p, _, err := restore.Features(ctx, s, stageReporter(b))
	if err != nil {
		return fmt.Errorf("session %s: %w", sessionPath, err)
	}
	b.finish()
	if err := fs.checkRead("the session's input file", p.Sources); err != nil {
		return err
	}
	if p.Expression == nil {
		return usagef("session %s: the atlas holds no expression values to plot", sessionPath)
	}
	index := make(map[string]int, len(p.GeneIDs))
	for g, id := range p.GeneIDs {
		index[id] = g
	}
	res := make([]markers.Result, len(rows))
	for i, r := range rows {
		g, ok := index[r.Gene]
		if !ok {
			return usagef("%s: row %d names the gene %q, which the session's atlas does not hold", markersPath, i+1, r.Gene)
		}
		res[i] = markers.Result{Gene: g, Z: r.Z, LogFoldChange: r.LogFoldChange}
	}
	t, size, err := paint.ExpressionPlot(ctx, p.Expression, res, paint.TopMarkers, p.GeneIDs, p.GeneSymbols, codes, names)
	if err != nil {
		return err
	}
	if len(t.Genes) == 0 {
		return usagef("%s: no gene is higher in the group (log2_fold > 0), so there is nothing to plot", markersPath)
	}
	if dpi > 0 {
		size.DPI = dpi
	}
	if err := writeOutput(b, "out", out, func(w io.Writer) error {
		if format == "svg" {
			return figure.WriteExpressionSVG(w, t, size)
		}
		return figure.WriteExpressionPNG(w, t, size)
	}); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "wrote %s (%d genes × %d groups of %q, %d × %d px)\n", out, len(t.Genes), len(t.Groups), by, size.WidthPx, size.HeightPx)
	return nil
}

// sessionGroups returns each cell's group (−1 for none) and the groups'
// names: the values of the session's categorical column named by, or its
// groups for "groups" (a cell in several groups counts in the first).
func sessionGroups(s *session.Session, by string) ([]int32, []string, error) {
	if by == "groups" {
		if len(s.Groups) == 0 {
			return nil, nil, usagef("--by groups: the session holds no groups")
		}
		codes := make([]int32, s.Cells())
		for i := range codes {
			codes[i] = -1
		}
		var names []string
		for k := range s.Groups {
			names = append(names, s.Groups[k].Name)
			for _, m := range s.Groups[k].Members {
				if codes[m] < 0 {
					codes[m] = int32(k)
				}
			}
		}
		return codes, names, nil
	}
	cols := restore.Annotations(s)
	c := column(cols, by)
	if c == nil || c.Kind != atlas.Categorical {
		var names []string
		for i := range cols {
			if cols[i].Kind == atlas.Categorical {
				names = append(names, cols[i].Name)
			}
		}
		return nil, nil, usagef("--by %q: the session has no categorical column of that name (it has: %s, and groups)", by, listSome(names))
	}
	return c.Codes, c.Levels, nil
}
