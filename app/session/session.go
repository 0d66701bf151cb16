// Package session reads and writes Lodestone session files: one file that
// reopens a map exactly as it was left and holds what is needed to
// recompute it.
//
// # Format
//
// A session file (extension .lodestone) is a ZIP archive (PKWARE APPNOTE)
// holding a JSON manifest and binary arrays:
//
//	manifest.json       what the session is: format name and version, the
//	                    inputs with their sizes and SHA-256 hashes, every
//	                    setting and seed, the dial, the history of runs,
//	                    paint, view, groups, annotation columns (with the
//	                    name of the array holding each), array lengths
//	cells.txt           the cell IDs of the map, one per line (UTF-8)
//	layout.f32          the layout on screen: 2N little-endian float32 (x0 y0 x1 y1 …)
//	initial.f32         the layout fresh runs start from, same form
//	columns/K.i32       categorical column K: N little-endian int32 codes (−1 missing)
//	columns/K.f64       continuous column K: N little-endian float64 values (NaN missing)
//	groups/K.u32        group K: its cells' indices, ascending little-endian uint32
//
// This package is the format only: the values a session holds, their
// checks, and reading and writing them. Package restore builds sessions from
// a map and brings them back: it reruns the preparation from the inputs and
// replays the history of runs, which gives the same layout bit for bit for
// the same seed and thread count on the same platform.
//
// Version 1 grows by additive fields only: a field added to the manifest
// carries omitempty, and its zero value means what sessions written before
// it meant.
package session

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strings"

	"lodestone/compute/embed"
)

// ProgramVersion is the version of Lodestone written into sessions;
// packaging stamps it from git with
// -ldflags "-X lodestone/app/session.ProgramVersion=…".
var ProgramVersion = "dev"

// Extension is the file extension of session files.
const Extension = ".lodestone"

// FormatName identifies a session manifest.
const FormatName = "lodestone-session"

// Version is the manifest version this package writes and reads.
const Version = 1

// Errors wrapped by the errors Read returns.
var (
	ErrNotSession = errors.New("not a Lodestone session")
	ErrVersion    = errors.New("unsupported session version")
	ErrMissing    = errors.New("missing part")
	ErrCorrupt    = errors.New("corrupt part")
)

// Input is one input file of the session.
type Input struct {
	Path   string `json:"path"`
	Size   int64  `json:"size"`
	SHA256 string `json:"sha256"`
}

// Reading says what was given about the input files beyond the path
// opened, so that they are read again the same way: the label files (as
// absolute paths), whether their first lines are headers ("first", "none",
// or empty: decided by the content), what the matrix's rows are ("cells",
// "genes", or empty: decided from the label files), the annotation table.
type Reading struct {
	CellLabels  string `json:"cell_labels,omitempty"`
	GeneLabels  string `json:"gene_labels,omitempty"`
	CellsHeader string `json:"cells_header,omitempty"`
	GenesHeader string `json:"genes_header,omitempty"`
	MatrixRows  string `json:"matrix_rows,omitempty"`
	Annotations string `json:"annotations,omitempty"`
}

// Example describes the bundled example atlas used as input.
type Example struct {
	Cells int   `json:"cells"`
	Genes int   `json:"genes"`
	Seed  int64 `json:"seed"`
}

// Settings are the settings of the preparation, in the form stored.
type Settings struct {
	MinGenes        int     `json:"min_genes"`
	MinCells        int     `json:"min_cells"`
	MinCounts       float64 `json:"min_counts"`
	MaxCounts       float64 `json:"max_counts"`
	MaxMitoFraction float64 `json:"max_mito_fraction"`
	Target          float64 `json:"target"`
	Genes           int     `json:"genes"`
	Components      int     `json:"components"`
	Oversample      int     `json:"oversample"`
	PowerIterations int     `json:"power_iterations"`
	Standardize     bool    `json:"standardize"`
	Perplexity      float64 `json:"perplexity"`
	Neighbors       int     `json:"neighbors"`
	Metric          string  `json:"metric"`
	Method          string  `json:"method"`
	Uniform         bool    `json:"uniform"`
	Init            string  `json:"init"`
	Seed            int64   `json:"seed"`
	Threads         int     `json:"threads"`
	// Integrate, when present, is the integration of samples the
	// components were corrected with; sessions without it have none.
	Integrate *Integration `json:"integrate,omitempty"`
}

// Integration is the stored form of the integration of samples (Harmony):
// the batch columns and every parameter, as used (defaults resolved).
type Integration struct {
	Columns    []string  `json:"columns"`
	Theta      []float64 `json:"theta"`  // per column
	Lambda     []float64 `json:"lambda"` // per column
	Clusters   int       `json:"clusters"`
	Sigma      float64   `json:"sigma"`
	Rounds     int       `json:"rounds"`
	Iterations int       `json:"iterations"`
	Tolerance  float64   `json:"tolerance"`
	// PooledGenes: the genes were selected on all cells pooled, not
	// within each batch of the first column.
	PooledGenes bool `json:"pooled_genes,omitempty"`
}

// Step is one run of the history (see live.Step), with the attraction
// written so that JSON can hold ∞.
type Step struct {
	Kind       string     `json:"kind"`
	Attraction Attraction `json:"attraction"`
	Iterations int        `json:"iterations"`
	Done       int        `json:"done"`
	Setting    float64    `json:"setting"`
	Compact    bool       `json:"compact,omitempty"`
	// Tail is the kernel's tail α of the run (live.Step.Tail); absent (0)
	// in sessions from before the tail could be set, meaning t-SNE's 1.
	Tail float64 `json:"tail,omitempty"`
	// Settled reports that the run ended because its layout had settled,
	// after Done of its Iterations (live.Step.Settled).
	Settled bool `json:"settled,omitempty"`
}

// Attraction is a dial value that marshals +Inf as the string "inf".
type Attraction float64

// MarshalJSON writes a number, or "inf".
func (a Attraction) MarshalJSON() ([]byte, error) {
	if math.IsInf(float64(a), 1) {
		return []byte(`"inf"`), nil
	}
	if math.IsNaN(float64(a)) || math.IsInf(float64(a), -1) {
		return nil, fmt.Errorf("attraction %v cannot be stored", float64(a))
	}
	return json.Marshal(float64(a))
}

// UnmarshalJSON reads a number or "inf".
func (a *Attraction) UnmarshalJSON(b []byte) error {
	if string(b) == `"inf"` {
		*a = Attraction(math.Inf(1))
		return nil
	}
	var f float64
	if err := json.Unmarshal(b, &f); err != nil {
		return fmt.Errorf("attraction: %w", err)
	}
	*a = Attraction(f)
	return nil
}

// Colour is an sRGB colour.
type Colour struct {
	R uint8 `json:"r"`
	G uint8 `json:"g"`
	B uint8 `json:"b"`
}

// Group is a named set of cells.
type Group struct {
	Name    string   `json:"name"`
	Colour  Colour   `json:"colour"`
	Members []uint32 `json:"-"` // stored in groups/K.u32
}

// Column is an annotation column of the map's cells.
type Column struct {
	Name   string    `json:"name"`
	Kind   string    `json:"kind"` // "categorical" or "continuous"
	Levels []string  `json:"levels,omitempty"`
	Codes  []int32   `json:"-"` // stored in columns/K.i32
	Values []float64 `json:"-"` // stored in columns/K.f64
}

// Paint says what colours the map.
type Paint struct {
	Source string `json:"source"` // "plain", "column", "gene" or "groups"
	Name   string `json:"name,omitempty"`
	Hidden []bool `json:"hidden,omitempty"` // per level of a categorical column, then missing
}

// View is the part of the map on screen, in the screen's logical pixels
// (files written before the window measured views in logical pixels hold
// device pixels, the same on screens that do not scale).
type View struct {
	CenterX float64 `json:"center_x"`
	CenterY float64 `json:"center_y"`
	Scale   float64 `json:"scale"` // logical pixels per data unit
	Width   int     `json:"width"`
	Height  int     `json:"height"`
	Pinned  bool    `json:"pinned"` // false: the view fits the layout
}

// Session is everything a session file holds.
type Session struct {
	Program string `json:"program"` // version of the program that wrote it
	// OpenedPath is the file or folder the atlas was opened from; Inputs
	// are the files read from it, with their hashes.
	OpenedPath string   `json:"opened_path,omitempty"`
	Inputs     []Input  `json:"inputs,omitempty"`
	Example    *Example `json:"example,omitempty"`
	// Reading, when not nil, says what was given about the input files
	// beyond the path opened.
	Reading  *Reading `json:"reading,omitempty"`
	Settings Settings `json:"settings"`

	CellIDs []string  `json:"-"`
	Columns []Column  `json:"columns"`
	Layout  []float32 `json:"-"`
	Initial []float32 `json:"-"`

	Attraction Attraction `json:"attraction"`
	// Tail is the value of the tail control (the kernel's α); absent (0)
	// means 1, t-SNE.
	Tail      float64 `json:"tail,omitempty"`
	History   []Step  `json:"history"`
	Groups    []Group `json:"groups"`
	Paint     Paint   `json:"paint"`
	View      View    `json:"view"`
	PointSize float64 `json:"point_size"`
	Opacity   float64 `json:"opacity"`
}

// Cells returns the number of cells on the map.
func (s *Session) Cells() int { return len(s.CellIDs) }

// Validate checks that the parts of s agree with each other.
func (s *Session) Validate() error {
	n := len(s.CellIDs)
	if n == 0 {
		return fmt.Errorf("%w: no cells", ErrCorrupt)
	}
	for i, id := range s.CellIDs {
		if strings.ContainsAny(id, "\n\r") {
			return fmt.Errorf("%w: cell %d's ID holds a line break", ErrCorrupt, i)
		}
	}
	if len(s.Layout) != 2*n {
		return fmt.Errorf("%w: layout has %d coordinates for %d cells", ErrCorrupt, len(s.Layout), n)
	}
	if len(s.Initial) != 2*n {
		return fmt.Errorf("%w: initial layout has %d coordinates for %d cells", ErrCorrupt, len(s.Initial), n)
	}
	for _, l := range []struct {
		name string
		xy   []float32
	}{{"layout", s.Layout}, {"initial layout", s.Initial}} {
		if err := finitePoints(l.name, l.xy, s.CellIDs); err != nil {
			return err
		}
	}
	for i, c := range s.Columns {
		switch c.Kind {
		case "categorical":
			if len(c.Codes) != n {
				return fmt.Errorf("%w: column %d (%q) has %d values for %d cells", ErrCorrupt, i, c.Name, len(c.Codes), n)
			}
			for j, v := range c.Codes {
				if v < -1 || int(v) >= len(c.Levels) {
					return fmt.Errorf("%w: column %q, cell %d: code %d outside its %d levels", ErrCorrupt, c.Name, j, v, len(c.Levels))
				}
			}
		case "continuous":
			if len(c.Values) != n {
				return fmt.Errorf("%w: column %d (%q) has %d values for %d cells", ErrCorrupt, i, c.Name, len(c.Values), n)
			}
		default:
			return fmt.Errorf("%w: column %d (%q) has unknown kind %q", ErrCorrupt, i, c.Name, c.Kind)
		}
	}
	for i, g := range s.Groups {
		for j, m := range g.Members {
			if int(m) >= n || j > 0 && m <= g.Members[j-1] {
				return fmt.Errorf("%w: group %d (%q): member %d out of order or range", ErrCorrupt, i, g.Name, m)
			}
		}
	}
	for i, st := range s.History {
		switch st.Kind {
		case "fresh", "warm", "spectral":
		default:
			return fmt.Errorf("%w: history step %d has unknown kind %q", ErrCorrupt, i+1, st.Kind)
		}
		if st.Done < 0 || st.Iterations < 0 {
			return fmt.Errorf("%w: history step %d has negative counts", ErrCorrupt, i+1)
		}
		if !validTail(st.Tail) {
			return fmt.Errorf("%w: history step %d has tail %v (want %g … %g)", ErrCorrupt, i+1, st.Tail, float64(embed.MinTail), float64(embed.MaxTail))
		}
	}
	if !validTail(s.Tail) {
		return fmt.Errorf("%w: tail %v (want %g … %g)", ErrCorrupt, s.Tail, float64(embed.MinTail), float64(embed.MaxTail))
	}
	if r := s.Reading; r != nil {
		for _, h := range []string{r.CellsHeader, r.GenesHeader} {
			if h != "" && h != "first" && h != "none" {
				return fmt.Errorf("%w: reading: header %q (want first or none)", ErrCorrupt, h)
			}
		}
		if r.MatrixRows != "" && r.MatrixRows != "cells" && r.MatrixRows != "genes" {
			return fmt.Errorf("%w: reading: matrix rows %q (want cells or genes)", ErrCorrupt, r.MatrixRows)
		}
	}
	if math.IsNaN(float64(s.Attraction)) {
		return fmt.Errorf("%w: attraction is not a number", ErrCorrupt)
	}
	return nil
}

// validTail reports whether a stored tail is absent (0) or in the range
// the optimiser accepts.
func validTail(t float64) bool {
	return t == 0 || t >= embed.MinTail && t <= embed.MaxTail
}

// finitePoints reports a layout with points whose coordinates are not
// finite numbers: the map could not be drawn (NaN bounds, a blank figure)
// nor continued from.
func finitePoints(name string, xy []float32, ids []string) error {
	bad, first := 0, -1
	for i := 0; i+1 < len(xy); i += 2 {
		x, y := float64(xy[i]), float64(xy[i+1])
		if math.IsNaN(x) || math.IsInf(x, 0) || math.IsNaN(y) || math.IsInf(y, 0) {
			if bad == 0 {
				first = i / 2
			}
			bad++
		}
	}
	switch {
	case bad == 0:
		return nil
	case 2*bad == len(xy):
		return fmt.Errorf("%w: the %s has no point with finite coordinates (all %d are NaN or infinite)", ErrCorrupt, name, bad)
	}
	return fmt.Errorf("%w: the %s has %d of %d points whose coordinates are NaN or infinite, the first cell %q (number %d)", ErrCorrupt, name, bad, len(xy)/2, ids[first], first+1)
}

// Members lists the cells marked in a selection, ascending.
func Members(cells []bool) []uint32 {
	var out []uint32
	for i, in := range cells {
		if in {
			out = append(out, uint32(i))
		}
	}
	return out
}

// Mask returns the group's cells as one flag per cell of n.
func (g *Group) Mask(n int) []bool {
	out := make([]bool, n)
	for _, m := range g.Members {
		out[m] = true
	}
	return out
}
