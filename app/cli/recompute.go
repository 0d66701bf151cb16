package cli

import (
	"fmt"
	"io"
	"math"

	"lodestone/app/restore"
	"lodestone/app/session"
)

func init() {
	register("recompute", "recompute the map of a session from its inputs and history, and write it as CSV", runRecompute)
}

func runRecompute(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("recompute", "--session FILE --out layout.csv", stderr)
	var sessionPath, out string
	fs.inputPath(&sessionPath, "session", "the session file (.lodestone) whose map to recompute")
	fs.outputPath(&out, "out", "CSV file to write, with header id,x,y")
	quiet := fs.Bool("quiet", false, "print no progress")
	if err := fs.parse(args); err != nil {
		return err
	}
	if sessionPath == "" || out == "" {
		return usagef("--session and --out are required")
	}
	s, err := session.Read(sessionPath)
	if err != nil {
		return usageError{err}
	}
	if err := fs.checkSession(s); err != nil {
		return err
	}
	ctx, stop := interruptible()
	defer stop()
	b := newBar(stderr, *quiet)
	defer b.finish()
	p, layout, err := restore.Recompute(ctx, s, stageReporter(b))
	if err != nil {
		return fmt.Errorf("session %s: %w", sessionPath, err)
	}
	b.finish()
	if err := fs.checkRead("the session's input file", p.Sources); err != nil {
		return err
	}
	if err := writeLayout(b, out, s.CellIDs, layout); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "recomputed %d cells through %d runs into %s: %s\n", len(s.CellIDs), len(s.History), out, compareLayouts(layout, s.Layout))
	return nil
}

// compareLayouts says how a recomputed layout compares with the stored one.
func compareLayouts(got, stored []float32) string {
	same, diff := true, 0.0
	for i := range got {
		if math.Float32bits(got[i]) != math.Float32bits(stored[i]) {
			same = false
			diff = math.Max(diff, math.Abs(float64(got[i])-float64(stored[i])))
		}
	}
	if same {
		return "identical to the stored map, bit for bit"
	}
	return fmt.Sprintf("differs from the stored map by at most %.3g map units (the thread count or the platform differ from those that made it)", diff)
}
