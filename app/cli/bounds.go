package cli

import (
	"flag"
	"fmt"
	"math"
	"strconv"

	"lodestone/compute/embed"
	"lodestone/compute/neighbors"
	"lodestone/compute/pipeline"
)

// bound is the range of a numeric flag: lo … hi, with lo left out when
// loOpen; zero allows 0 as well (an "automatic" or "off" value); clamp
// lowers a value above hi to hi with a warning instead of refusing it.
type bound struct {
	lo, hi float64
	loOpen bool
	zero   string // what 0 means, when it is allowed
	clamp  string // why values above hi are lowered, when they are
}

// maxComponents bounds --pcs before the atlas is read; once it is, the
// components must also be fewer than the cells and the genes analysed.
const maxComponents = 1000

// bounds holds the range of every numeric flag of every command, by flag
// name; an entry "command.name" overrides "name" for one command. parse
// checks every numeric flag given on the command line against it, so a
// command inherits the checks of the flags it shares with others; a test
// fails when a command has a numeric flag without an entry.
var bounds = map[string]bound{
	"threads":    {lo: 1, hi: pipeline.MaxThreads, zero: "all processors", clamp: "the most Lodestone uses"},
	"pcs":        {lo: 1, hi: maxComponents},
	"genes":      {lo: 1, hi: 1e6},
	"perplexity": {lo: 1, hi: neighbors.MaxK / 3},
	"iterations": {lo: 1, hi: 100000},
	"tail":       {lo: embed.MinTail, hi: embed.MaxTail},
	"k":          {lo: 1, hi: neighbors.MaxK},
	"sample":     {lo: 3, hi: 1e8},
	"min-genes":  {lo: 0, hi: 1e6},
	"min-cells":  {lo: 0, hi: 1e8},
	"max-mito":   {lo: 0, hi: 1, loOpen: true},
	"seed":       {lo: math.Inf(-1), hi: math.Inf(1)},
	"resolution": {lo: 0, hi: 1000, loOpen: true},
	"width":      {lo: 16, hi: 10000, zero: "the preset's"},
	"height":     {lo: 16, hi: 10000, zero: "the preset's"},
	"dpi":        {lo: 10, hi: 4800, zero: "the preset's"},

	"bench.genes": {lo: 100, hi: 100000, zero: "20,000 up to 200,000 cells, 30,000 above"},

	"integrate-clusters":   {lo: 1, hi: 10000, zero: "min(100, cells/30)"},
	"integrate-sigma":      {lo: 0, hi: 10, loOpen: true},
	"integrate-rounds":     {lo: 1, hi: 1000},
	"integrate-iterations": {lo: 1, hi: 1000},
	"integrate-tolerance":  {lo: 0, hi: 0.5, loOpen: true},

	"example.cells": {lo: 1, hi: 2000000},
	"example.genes": {lo: 100, hi: 100000},
}

// boundOf returns the bound of flag name of command cmd.
func boundOf(cmd, name string) (bound, bool) {
	if b, ok := bounds[cmd+"."+name]; ok {
		return b, true
	}
	b, ok := bounds[name]
	return b, ok
}

// numericValue returns a flag's value as a number, and whether it is one
// (an int, int64, uint, uint64 or float64 flag).
func numericValue(fl *flag.Flag) (float64, bool) {
	g, ok := fl.Value.(flag.Getter)
	if !ok {
		return 0, false
	}
	switch v := g.Get().(type) {
	case int:
		return float64(v), true
	case int64:
		return float64(v), true
	case uint:
		return float64(v), true
	case uint64:
		return float64(v), true
	case float64:
		return v, true
	}
	return 0, false
}

// checkNumbers checks every numeric flag given on the command line against
// its bound: a value out of range is a usage error naming the flag, the
// value and the range; a value above a clamping bound is lowered, with a
// warning. Floating-point flags must be finite whatever their bound.
func (f *flags) checkNumbers(warn func(string)) error {
	var err error
	f.Visit(func(fl *flag.Flag) {
		v, ok := numericValue(fl)
		if !ok || err != nil {
			return
		}
		b, known := boundOf(f.Name(), fl.Name)
		if math.IsNaN(v) || math.IsInf(v, 0) {
			want := "a finite number"
			if r := rangeText(b, known); r != "" {
				want = r[2:]
			}
			err = usagef("--%s %s: want %s", fl.Name, fl.Value, want)
			return
		}
		if !known || (b.zero != "" && v == 0) {
			return
		}
		if v > b.hi && b.clamp != "" {
			if e := fl.Value.Set(strconv.FormatFloat(b.hi, 'f', -1, 64)); e != nil {
				err = usagef("--%s: %v", fl.Name, e)
				return
			}
			warn(fmt.Sprintf("--%s %s lowered to %s, %s", fl.Name, strconv.FormatFloat(v, 'f', -1, 64), fl.Value, b.clamp))
			return
		}
		if v < b.lo || v > b.hi || (b.loOpen && v == b.lo) {
			err = usagef("--%s %s: want %s", fl.Name, fl.Value, rangeText(b, true)[2:])
		}
	})
	return err
}

// rangeText says a bound in words, after ", ": ", a number from 1 to 50".
func rangeText(b bound, known bool) string {
	if !known {
		return ""
	}
	num := func(x float64) string { return strconv.FormatFloat(x, 'f', -1, 64) }
	var s string
	switch {
	case math.IsInf(b.lo, -1) && math.IsInf(b.hi, 1):
		return ""
	case b.loOpen:
		s = fmt.Sprintf("a number above %s, at most %s", num(b.lo), num(b.hi))
	default:
		s = fmt.Sprintf("a number from %s to %s", num(b.lo), num(b.hi))
	}
	if b.zero != "" {
		s = fmt.Sprintf("0 (%s) or %s", b.zero, s)
	}
	return ", " + s
}
