package cli

import (
	"errors"
	"fmt"
	"io"
	"slices"
	"strings"

	"lodestone/app/session"
	"lodestone/app/tables"
	"lodestone/compute/atlas"
	"lodestone/compute/markers"
)

func init() {
	register("markers", "rank the genes that mark a group or category (Wilcoxon rank-sum test) and write them as CSV", runMarkers)
}

func runMarkers(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("markers", "(--in PATH [flags] | --session FILE) [--by COLUMN] --group VALUE [--against VALUE] --out markers.csv", stderr)
	var af atlasFlags
	af.register(fs, "a session (.lodestone): its inputs, settings, annotation columns and groups are used instead of --in and the preparation flags")
	by := fs.String("by", "", "categorical annotation column whose values --group and --against name (without it, they name groups of the --session)")
	group := fs.String("group", "", "the cells whose markers are ranked: a value of --by, or a group of the session")
	against := fs.String("against", "", "the cells they are compared with: another value or group (default: all other cells)")
	var out string
	fs.outputPath(&out, "out", "CSV file to write: gene,symbol,log2_fold,z,p,q,pct_in,pct_rest, one row per gene, the most raised in the group first (descending z), as the Markers tab lists them")
	quiet := fs.Bool("quiet", false, "print no progress")
	if err := fs.parse(args); err != nil {
		return err
	}
	switch {
	case out == "":
		return usagef("--out is required")
	case *group == "":
		return usagef("--group is required")
	case *by == "" && af.session == "":
		return usagef("--by is required (or --session, whose groups --group then names)")
	case *against != "" && *against == *group:
		return usagef("--group and --against name the same cells (%q)", *group)
	}
	ctx, stop := interruptible()
	defer stop()
	b := newBar(stderr, *quiet)
	defer b.finish()
	// Cells of a value of --by, or of a group of the session.
	pick := func(cols []atlas.Column, s *session.Session, flagName, name string) ([]bool, error) {
		if *by != "" {
			return levelCells(cols, *by, flagName, name)
		}
		return groupCells(s, flagName, name)
	}
	choose := func(cols []atlas.Column, s *session.Session) (in, ref []bool, err error) {
		if in, err = pick(cols, s, "--group", *group); err != nil || *against == "" {
			return in, nil, err
		}
		ref, err = pick(cols, s, "--against", *against)
		return in, ref, err
	}
	a, err := af.load(ctx, fs, b, false, func(cols []atlas.Column, s *session.Session) error {
		_, _, err := choose(cols, s)
		return err
	})
	if err != nil {
		return err
	}
	if a.Expression == nil {
		return usagef("the atlas holds no expression values to rank genes by (a narrow table is used as features as it is)")
	}
	in, ref, err := choose(a.Columns, a.Session)
	if err != nil {
		return err
	}
	expr, err := markers.NewExpression(ctx, a.Expression)
	if err != nil {
		return err
	}
	res, err := expr.Rank(ctx, in, ref, markers.Options{Threads: a.Settings.Threads,
		Progress: func(done, total int64) { b.report("ranking genes", done, total) }})
	switch {
	case errors.Is(err, markers.ErrEmptyGroup), errors.Is(err, markers.ErrEmptyReference), errors.Is(err, markers.ErrOverlap):
		return usageError{err}
	case err != nil:
		return err
	}
	b.finish()
	// In Rank's order, as the Markers tab lists and saves them.
	if err := writeOutput(b, "out", out, func(w io.Writer) error {
		return tables.WriteMarkers(w, res, a.GeneIDs, a.GeneSymbols)
	}); err != nil {
		return err
	}
	up := 0
	for _, r := range res {
		if r.Q < 0.05 && r.LogFoldChange > 0 {
			up++
		}
	}
	rest := "all other cells"
	if *against != "" {
		rest = *against
	}
	fmt.Fprintf(stdout, "%d genes ranked for %s against %s, %d higher at q < 0.05; written to %s\n", len(res), *group, rest, up, out)
	return nil
}

// levelCells returns the cells whose value in the categorical column named
// col is level.
func levelCells(cols []atlas.Column, col, flagName, level string) ([]bool, error) {
	c := column(cols, col)
	if c == nil || c.Kind != atlas.Categorical {
		var names []string
		for i := range cols {
			if cols[i].Kind == atlas.Categorical {
				names = append(names, cols[i].Name)
			}
		}
		return nil, usagef("--by %q: no categorical annotation column of that name (there are: %s)", col, listSome(names))
	}
	k := slices.Index(c.Levels, level)
	if k < 0 {
		return nil, usagef("%s %q: column %q has no such value (it has: %s)", flagName, level, col, listSome(c.Levels))
	}
	mask := make([]bool, len(c.Codes))
	for i, code := range c.Codes {
		mask[i] = code == int32(k)
	}
	return mask, nil
}

// groupCells returns the cells of the session's group named name.
func groupCells(s *session.Session, flagName, name string) ([]bool, error) {
	var names []string
	for i := range s.Groups {
		if s.Groups[i].Name == name {
			return s.Groups[i].Mask(s.Cells()), nil
		}
		names = append(names, s.Groups[i].Name)
	}
	if len(names) == 0 {
		return nil, usagef("%s %q: the session holds no groups; name a column with --by", flagName, name)
	}
	return nil, usagef("%s %q: the session has no group of that name (it has: %s)", flagName, name, listSome(names))
}

// listSome lists up to 12 names, quoted, for a message.
func listSome(names []string) string {
	if len(names) == 0 {
		return "none"
	}
	var b strings.Builder
	for i, n := range names {
		if i == 12 {
			fmt.Fprintf(&b, " and %d more", len(names)-12)
			break
		}
		if i > 0 {
			b.WriteString(", ")
		}
		fmt.Fprintf(&b, "%q", n)
	}
	return b.String()
}
