package cli

import (
	"bytes"
	"context"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"lodestone/app/paint"
	"lodestone/app/restore"
	"lodestone/app/session"
	"lodestone/canvas/figure"
	"lodestone/compute/markers"
)

// TestExpressionFigure ranks the markers of a state with the markers
// command and draws their expression plot with figure --expression: the PNG
// is the one drawn in process from the ranking itself (so the table loses
// nothing on the way), sized for 12 genes and the column's states; SVG works
// too, and bad choices exit with status 2.
func TestExpressionFigure(t *testing.T) {
	dir := writeExample(t)
	sess := filepath.Join(t.TempDir(), "map"+session.Extension)
	if code, _, errs := run(t, append([]string{"embed", "--in", dir, "--session", sess, "--iterations", "50", "--quiet"}, smallFlags...)...); code != ExitOK {
		t.Fatalf("embed: %s", errs)
	}
	table := filepath.Join(t.TempDir(), "markers.csv")
	if code, _, errs := run(t, "markers", "--session", sess, "--by", "state", "--group", "seedbed", "--out", table, "--quiet"); code != ExitOK {
		t.Fatalf("markers: %s", errs)
	}
	plot := filepath.Join(t.TempDir(), "plot.png")
	code, out, errs := run(t, "figure", "--session", sess, "--expression", table, "--by", "state", "--out", plot, "--quiet")
	if code != ExitOK || !strings.Contains(out, "12 genes × 9 groups") {
		t.Fatalf("figure --expression: status %d: %s %s", code, out, errs)
	}
	got, err := os.ReadFile(plot)
	if err != nil {
		t.Fatal(err)
	}

	// The same plot drawn in process from the ranking.
	s, err := session.Read(sess)
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	p, _, err := restore.Features(ctx, s, nil)
	if err != nil {
		t.Fatal(err)
	}
	col := column(restore.Annotations(s), "state")
	in := make([]bool, len(col.Codes))
	for i, c := range col.Codes {
		in[i] = col.Levels[c] == "seedbed"
	}
	res, err := markers.Rank(ctx, p.Expression, in, nil, markers.Options{})
	if err != nil {
		t.Fatal(err)
	}
	tab, size, err := paint.ExpressionPlot(ctx, p.Expression, res, paint.TopMarkers, p.GeneIDs, p.GeneSymbols, col.Codes, col.Levels)
	if err != nil {
		t.Fatal(err)
	}
	var want bytes.Buffer
	if err := figure.WriteExpressionPNG(&want, tab, size); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, want.Bytes()) {
		t.Fatal("the plot of the markers table differs from the plot of the ranking it was written from")
	}
	cfg, err := png.DecodeConfig(bytes.NewReader(got))
	if err != nil || cfg.Width != 200+70*12 || cfg.Height != 260+36*9 {
		t.Fatalf("PNG %v: %d × %d", err, cfg.Width, cfg.Height)
	}
	svg := filepath.Join(t.TempDir(), "plot.svg")
	if code, _, errs := run(t, "figure", "--session", sess, "--expression", table, "--by", "state", "--out", svg, "--quiet"); code != ExitOK {
		t.Fatalf("figure --expression svg: %s", errs)
	}
	if b, _ := os.ReadFile(svg); !bytes.Contains(b, []byte("<svg")) {
		t.Fatal("no SVG written")
	}

	bad := filepath.Join(t.TempDir(), "bad.csv")
	os.WriteFile(bad, []byte("gene,symbol,log2_fold,z,p,q,pct_in,pct_rest\nnot-a-gene,,1,5,0.1,0.1,50,10\n"), 0o644)
	for _, args := range [][]string{
		{"figure", "--session", sess, "--expression", table, "--out", plot},                        // plain paint: --by needed
		{"figure", "--session", sess, "--expression", table, "--by", "nonexistent", "--out", plot}, // no such column
		{"figure", "--session", sess, "--expression", table, "--by", "groups", "--out", plot},      // no groups
		{"figure", "--session", sess, "--expression", bad, "--by", "state", "--out", plot},         // unknown gene
		{"figure", "--session", sess, "--expression", sess, "--by", "state", "--out", plot},        // not a table
		{"figure", "--session", sess, "--expression", table, "--by", "state", "--title", "x", "--out", plot},
		{"figure", "--session", sess, "--by", "state", "--out", plot},
	} {
		code, _, errs := run(t, append(args, "--quiet")...)
		if code != ExitUsage || strings.Count(strings.TrimSpace(errs), "\n") != 0 || errs == "" {
			t.Errorf("%v: status %d, stderr %q; want %d and one line", args, code, errs, ExitUsage)
		}
	}
}

func TestFigureFromSession(t *testing.T) {
	dir := writeExample(t)
	sess := filepath.Join(t.TempDir(), "map.lodestone")
	args := append([]string{"embed", "--in", dir, "--session", sess, "--iterations", "100", "--quiet"}, smallFlags...)
	if code, _, errs := run(t, args...); code != ExitOK {
		t.Fatalf("embed: %s", errs)
	}
	pngPath := filepath.Join(t.TempDir(), "fig.png")
	code, out, errs := run(t, "figure", "--session", sess, "--out", pngPath, "--paint", "state", "--labels", "--title", "states <&>")
	if code != ExitOK || !strings.Contains(out, "1920 × 1080") {
		t.Fatalf("figure: status %d: %s %s", code, out, errs)
	}
	f, err := os.Open(pngPath)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	cfg, err := png.DecodeConfig(f)
	if err != nil || cfg.Width != 1920 || cfg.Height != 1080 {
		t.Fatalf("PNG %v: %+v", err, cfg)
	}
	svg := filepath.Join(t.TempDir(), "fig.svg")
	if code, _, errs := run(t, "figure", "--session", sess, "--out", svg, "--preset", "column1", "--dpi", "600"); code != ExitOK {
		t.Fatalf("figure svg: %s", errs)
	}
	for _, bad := range [][]string{
		{"figure", "--session", sess, "--out", "x.gif"},
		{"figure", "--session", sess, "--out", pngPath, "--paint", "nonexistent"},
		{"figure", "--session", filepath.Join(dir, "counts.mtx"), "--out", pngPath},
		{"figure", "--session", sess, "--out", pngPath, "--preset", "poster"},
	} {
		if code, _, _ := run(t, bad...); code != ExitUsage {
			t.Errorf("%v: status %d, want %d", bad, code, ExitUsage)
		}
	}
}
