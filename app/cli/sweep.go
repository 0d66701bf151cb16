package cli

import (
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"lodestone/app/live"
	"lodestone/app/restore"
	"lodestone/app/session"
	"lodestone/compute/atlas"
	"lodestone/compute/embed"
	"lodestone/compute/pipeline"
	"lodestone/compute/quality"
	"lodestone/internal/atomicfile"
)

func init() {
	register("sweep", "compute maps at several attractions (or tails), each continued from the one before, with their fidelity", runSweep)
}

// scoresHeader is the header of a sweep's scores.csv.
const scoresHeader = "attraction,tail,knn_preservation,trustworthiness,label_accuracy,distance_correlation"

func runSweep(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("sweep", "(--in PATH [flags] | --session FILE) (--values 1,4,30,inf [--tail T] | --tails 0.5,1,2 [--attraction A])\n"+
		"       [--iterations N] [--label COLUMN] [--mixing COLUMN] --out DIR", stderr)
	var af atlasFlags
	af.register(fs, "start from the map of a session (.lodestone), with its inputs and settings, instead of a fresh map of --in")
	valuesText := fs.String("values", "", "the attractions to sweep, comma-separated: numbers from 0.5 to 1000, or inf (the spectral layout)")
	tailFlag := fs.Float64("tail", 0, "with --values: the kernel's tail α of every map (default: the grain as saved, or 1)")
	tailsText := fs.String("tails", "", fmt.Sprintf("instead of --values, the kernel's tails α to sweep, comma-separated: numbers from %g to %g (1: t-SNE)", float64(embed.MinTail), float64(embed.MaxTail)))
	attraction := attractionFlag(0)
	fs.Var(&attraction, "attraction", "with --tails: the attraction of every map (default: the dial as saved, or 1)")
	iterations := fs.Int("iterations", live.WarmIterations, "the most optimiser iterations of each map, which ends once its layout has settled (the window's iterations per turn)")
	label := fs.String("label", "", "a categorical annotation column: also score how well the map's neighbours predict it")
	mixing := fs.String("mixing", "", "a categorical column naming samples: also score how mixed they are in each map, and the --label column's types (default: the first --integrate column)")
	out := fs.String("out", "", "folder to write into (created when missing): a layout CSV per map (attraction-V.csv, or tail-T.csv) and scores.csv")
	fo := fidelityFlags(fs)
	quiet := fs.Bool("quiet", false, "print no progress")
	if err := fs.parse(args); err != nil {
		return err
	}
	switch {
	case *out == "":
		return usagef("--out is required")
	case (*valuesText == "") == (*tailsText == ""):
		return usagef("give either --values (attractions) or --tails")
	case *valuesText != "" && fs.isSet("attraction"):
		return usagef("--attraction goes with --tails; --values lists the attractions")
	case *tailsText != "" && fs.isSet("tail"):
		return usagef("--tail goes with --values; --tails lists the tails")
	case *tailsText != "" && math.IsInf(float64(attraction), 1):
		return usagef("--tails: at attraction inf every map is the spectral layout, whatever the tail; give a finite --attraction")
	}
	var values, tails []float64
	var err error
	if *valuesText != "" {
		values, err = parseAttractions(*valuesText)
	} else {
		tails, err = parseTails(*tailsText)
	}
	if err != nil {
		return err
	}
	if err := fo.check(); err != nil {
		return err
	}
	ctx, stop := interruptible()
	defer stop()
	b := newBar(stderr, *quiet)
	defer b.finish()
	a, err := af.load(ctx, fs, b, true, func(cols []atlas.Column, _ *session.Session) error {
		_, err := labelCodes(cols, *label)
		return err
	})
	if err != nil {
		return err
	}
	if err := fo.fit(a.Cells()); err != nil {
		return err
	}
	labels, err := labelCodes(a.Columns, *label)
	if err != nil {
		return err
	}
	// The samples' (and types') mixing in each map, as score scores it.
	if in := a.Settings.Integrate; *mixing == "" && in.On() {
		*mixing = in.Columns[0]
	}
	var mopt *quality.MixingOptions
	if *mixing != "" {
		o, err := pipeline.MixingLabels(a.Prepared, *mixing, *label, fo.mixingOptions(a.Settings.Seed, a.Settings.Threads))
		if err != nil {
			return err
		}
		mopt = &o
	}

	// The map the sweep starts from: the session's, or the window's first
	// map of an atlas (a fresh run at attraction 1 with the t-SNE kernel).
	// The controls' values, as the window shows them: the dial and the
	// grain of the session (the grain may differ from the last run's tail
	// when it was moved at ∞), or those of the first map.
	var (
		opt        *live.TSNE
		setting    float64
		base       []float32
		history    []live.Step
		dial, tail float64 = 1, 1
	)
	if a.Session != nil {
		history = restore.Steps(a.Session)
		base = a.Session.Layout
		dial, tail = float64(a.Session.Attraction), live.TailOf(history)
		if a.Session.Tail != 0 {
			tail = a.Session.Tail
		}
		if opt, setting, err = restore.NewReplayer(a.Prepared).Current(ctx, history); err != nil {
			return err
		}
	} else {
		setting = a.Settings.Perplexity
		opt = &live.TSNE{P: a.P, Seed: a.Settings.Seed, Threads: a.Settings.Threads}
		o := live.RunOptions{Attraction: 1, Tail: 1, Iterations: live.FreshIterations, Early: true}
		base, err = opt.Run(ctx, a.Init, o, func(f live.Frame) {
			b.report("t-SNE ρ=1", int64(f.Iteration), int64(f.Iterations))
		})
		if err != nil {
			return err
		}
		history = []live.Step{{Kind: live.Fresh, Attraction: 1, Iterations: live.FreshIterations, Done: live.FreshIterations, Setting: setting, Tail: 1}}
	}

	// What to sweep, and the file of each map.
	var points []live.SweepPoint
	var files []string
	if values != nil {
		if fs.isSet("tail") {
			tail = *tailFlag
		}
		points = live.AtTail(values, tail)
		for _, v := range values {
			files = append(files, "attraction-"+formatAttraction(v)+".csv")
		}
	} else {
		at := dial
		if fs.isSet("attraction") {
			at = float64(attraction)
		}
		if math.IsInf(at, 1) {
			return usagef("--tails: at attraction inf every map is the spectral layout, whatever the tail; give a finite --attraction")
		}
		points = live.AtAttraction(at, tails)
		for _, t := range tails {
			files = append(files, "tail-"+strconv.FormatFloat(t, 'g', -1, 64)+".csv")
		}
	}
	if err := sweepOutputs(fs, *out, append(slices.Clone(files), "scores.csv"), a.Sources); err != nil {
		return err
	}

	rows := []string{scoresHeader}
	fopt := fo.options(a.Settings, labels)
	if mopt != nil {
		rows[0] += ",sample_mixing"
		if *label != "" {
			rows[0] += ",type_mixing"
		}
	}
	before := func(k int) {
		b.report(fmt.Sprintf("map %d of %d (ρ=%s, α=%g)", k+1, len(points), formatAttraction(points[k].Attraction), points[k].Tail), 0, 1)
	}
	k := 0
	err = live.ScoredSweep(ctx, opt, base, history, points, *iterations, setting, a.Features, fopt, before, func(m live.ScoredMap) error {
		if err := writeLayout(b, filepath.Join(*out, files[k]), a.CellIDs, m.Layout); err != nil {
			return err
		}
		k++
		f := m.Fidelity
		acc := ""
		if !math.IsNaN(f.Labels) {
			acc = strconv.FormatFloat(f.Labels, 'g', -1, 64)
		}
		row := []string{formatAttraction(m.Attraction), strconv.FormatFloat(m.Tail, 'g', -1, 64),
			strconv.FormatFloat(f.KNN, 'g', -1, 64), strconv.FormatFloat(f.Trust, 'g', -1, 64), acc,
			strconv.FormatFloat(f.DCor, 'g', -1, 64)}
		if mopt != nil {
			mx, err := quality.MapMixing(ctx, m.Layout, *mopt)
			if err != nil {
				return err
			}
			row = append(row, strconv.FormatFloat(mx.Batch, 'g', -1, 64))
			if *label != "" {
				row = append(row, strconv.FormatFloat(mx.Types, 'g', -1, 64))
			}
		}
		rows = append(rows, strings.Join(row, ","))
		return nil
	})
	if err != nil {
		return err
	}
	b.finish()
	if err := writeOutput(b, "out", filepath.Join(*out, "scores.csv"), func(w io.Writer) error {
		_, err := io.WriteString(w, strings.Join(rows, "\n")+"\n")
		return err
	}); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "%d maps and their scores written to %s\n", len(points), *out)
	return nil
}

// sweepOutputs makes the folder dir and refuses, as usage errors, files to
// be written there that cannot be written or that are files the command
// reads (the path flags' inputs and the atlas's sources).
func sweepOutputs(fs *flags, dir string, names []string, sources []string) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return usageError{err}
	}
	read, _ := fs.given()
	for _, src := range sources {
		read = append(read, named{"the input file", src})
	}
	for _, name := range names {
		path := filepath.Join(dir, name)
		if _, err := atomicfile.Check(path); err != nil {
			return usageError{fmt.Errorf("--out: %w", err)}
		}
		for _, in := range read {
			if atomicfile.SameFile(path, in.path) {
				return usagef("--out %s would write %s, which is %s %s; choose another folder", dir, path, in.from, in.path)
			}
		}
	}
	return nil
}

// parseAttractions reads a comma-separated list of attractions, each as
// --attraction takes it.
func parseAttractions(text string) ([]float64, error) {
	return parseList("--values", text, func(f string) (float64, error) {
		var a attractionFlag
		err := a.Set(f)
		return float64(a), err
	})
}

// parseTails reads a comma-separated list of the kernel's tails.
func parseTails(text string) ([]float64, error) {
	return parseList("--tails", text, func(f string) (float64, error) {
		t, err := strconv.ParseFloat(f, 64)
		if err != nil || !(t >= embed.MinTail && t <= embed.MaxTail) {
			return 0, fmt.Errorf("want a number from %g to %g", float64(embed.MinTail), float64(embed.MaxTail))
		}
		return t, nil
	})
}

// parseList reads a comma-separated list of distinct values of the flag
// name with parse.
func parseList(name, text string, parse func(string) (float64, error)) ([]float64, error) {
	var out []float64
	for _, f := range strings.Split(text, ",") {
		f = strings.TrimSpace(f)
		if f == "" {
			continue
		}
		v, err := parse(f)
		if err != nil {
			return nil, usagef("%s: %q: %v", name, f, err)
		}
		if slices.Contains(out, v) {
			return nil, usagef("%s: %s is given twice", name, f)
		}
		out = append(out, v)
	}
	if len(out) == 0 {
		return nil, usagef("%s: give at least one value", name)
	}
	return out, nil
}

// labelCodes returns the codes of the categorical column named name, or nil
// when name is empty.
func labelCodes(cols []atlas.Column, name string) ([]int32, error) {
	if name == "" {
		return nil, nil
	}
	c := column(cols, name)
	if c == nil || c.Kind != atlas.Categorical {
		return nil, usagef("--label %q: no categorical annotation column of that name", name)
	}
	return c.Codes, nil
}
