package cli

import (
	"context"
	"io"
	"math"
	"os"
	"os/signal"
	"strconv"

	"lodestone/app/live"
	"lodestone/app/restore"
	"lodestone/compute/embed"
	"lodestone/compute/pipeline"
)

func init() {
	register("embed", "compute a map (t-SNE at an attraction, or the spectral layout) and write it as CSV", runEmbed)
}

// interruptible returns a context cancelled by Ctrl-C.
func interruptible() (context.Context, context.CancelFunc) {
	return signal.NotifyContext(context.Background(), os.Interrupt)
}

func runEmbed(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("embed", "--in PATH [--cell-labels FILE --gene-labels FILE] [--meta FILE] --out layout.csv [flags]", stderr)
	var in inputFlags
	var pf prepFlags
	in.register(fs)
	pf.register(fs)
	var out, sessionPath string
	fs.outputPath(&out, "out", "CSV file to write, with header id,x,y")
	attraction := attractionFlag(1)
	fs.Var(&attraction, "attraction", "the attraction dial: 0.5 (separate groups) … 100 (continuous paths), or inf (spectral layout)")
	tail := tailFlag(fs)
	iterations := fs.Int("iterations", embed.DefaultIterations, "optimiser iterations, early exaggeration included")
	initName := fs.String("init", "pca", "initial layout: pca, spectral, or a layout CSV (id,x,y) to continue from")
	quiet := fs.Bool("quiet", false, "print no progress")
	fs.outputPath(&sessionPath, "session", "also write a session file (.lodestone) that reopens the map in the window")
	if err := fs.parse(args); err != nil {
		return err
	}
	if out == "" && sessionPath == "" {
		return usagef("--out or --session is required")
	}
	if *initName != "pca" && *initName != "spectral" {
		if err := fs.checkPaths(named{"--init", *initName}); err != nil {
			return err
		}
	}
	ctx, stop := interruptible()
	defer stop()
	b := newBar(stderr, *quiet)
	defer b.finish()

	warmFrom := ""
	switch *initName {
	case "pca":
	case "spectral":
		pf.init = pipeline.InitSpectral
	default:
		warmFrom = *initName
	}
	p, err := prepare(ctx, &in, &pf, b)
	if err != nil {
		return err
	}
	init := p.Init
	kind := live.Fresh
	if warmFrom != "" {
		if init, err = readLayout(ctx, warmFrom, p.CellIDs); err != nil {
			return err
		}
		kind = live.Warm
	}
	a := float64(attraction)
	opt := &live.TSNE{P: p.P, Seed: pf.seed, Threads: pf.threads}
	step := live.Step{Kind: kind, Attraction: a, Iterations: *iterations, Done: *iterations, Setting: p.Settings.Perplexity, Tail: *tail}
	var layout []float32
	if math.IsInf(a, 1) {
		b.report("spectral layout", 0, 1)
		layout, err = opt.Spectral(ctx, init)
		step = live.Step{Kind: live.Spectral, Attraction: a, Iterations: live.SpectralGlide, Done: live.SpectralGlide, Setting: p.Settings.Perplexity, Tail: *tail}
	} else {
		label := "t-SNE ρ=" + formatAttraction(a)
		if *tail != 1 {
			label += " α=" + strconv.FormatFloat(*tail, 'g', -1, 64)
		}
		o := live.RunOptions{Attraction: a, Tail: *tail, Iterations: *iterations, Early: kind == live.Fresh}
		layout, err = opt.Run(ctx, init, o, func(f live.Frame) {
			b.report(label, int64(f.Iteration), int64(f.Iterations))
		})
	}
	if err != nil {
		return err
	}
	b.finish()
	if out != "" {
		if err := writeLayout(b, out, p.CellIDs, layout); err != nil {
			return err
		}
	}
	if sessionPath != "" {
		origin, err := in.origin(p)
		if err != nil {
			return err
		}
		s := restore.Capture(restore.Map{Prepared: p, Origin: origin, Initial: init, Layout: layout, Attraction: a,
			Tail: *tail, History: []live.Step{step}})
		if err := writeSession(b, sessionPath, s); err != nil {
			return err
		}
	}
	return nil
}

// tailFlag registers --tail, the kernel's tail α of the runs (embed.Params.Tail).
func tailFlag(fs *flags) *float64 {
	return fs.Float64("tail", 1, "the kernel's tail α: 1 is t-SNE; smaller (to 0.1) splits groups into finer ones, larger (to 20) smooths them together")
}
