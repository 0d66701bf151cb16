package ingest

import (
	"bufio"
	"bytes"
	"context"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"

	"lodestone/compute/atlas"
	"lodestone/compute/progress"
)

const (
	// MaxIntegerLevels is the largest number of distinct values for which
	// a column of integers is read as categorical (days, batches, donors
	// numbered 1…n) rather than continuous.
	MaxIntegerLevels = 12
	// internLimit bounds the distinct texts remembered for a column that
	// is numeric so far; beyond it the column is expected to stay numeric.
	internLimit = 1 << 16
	// maxListed bounds the duplicated IDs listed in a JoinReport.
	maxListed = 20
)

// missingTokens are the unquoted values read as missing, compared without
// regard to case, after removing surrounding spaces. A quoted value is
// missing only when empty.
var missingTokens = []string{"", "na", "nan", "n/a", "null", "none"}

// isMissing reports whether an annotation value stands for a missing value.
func isMissing(f []byte, quoted bool) bool {
	if quoted {
		return len(f) == 0
	}
	if len(f) > 4 {
		return false
	}
	for _, t := range missingTokens {
		if bytes.EqualFold(f, []byte(t)) {
			return true
		}
	}
	return false
}

// ReadAnnotations reads a table of per-cell annotations from r (plain or
// gzip compressed, comma- or tab-separated with RFC 4180 quoting, a header
// row) whose first column holds cell IDs, and joins it to cellIDs: column k
// of the result holds, for cell i, the value on the row whose ID is
// cellIDs[i]. name is used in error messages.
//
// Missing values are the empty field and, unquoted and in any case, NA,
// NaN, N/A, null and None. Cells without a row get missing values; rows
// naming no cell are counted as Extra; when an ID occurs on several rows the
// first is kept and the ID is reported as duplicated. A table none of whose
// IDs is a cell ID is an error (ErrNoMatch).
//
// Each column's kind is inferred from its non-missing values: continuous
// when all are finite numbers, except that integers with at most
// MaxIntegerLevels distinct values are categorical; otherwise categorical.
// A column of numbers with a few values that are not (at most
// maxOddTokens distinct ones, at most one for 20 numbers, such as "-", "?",
// "#N/A" or "inf") stays continuous when its numbers would be: those values
// are read as missing and listed in the report's NotNumbers. (In a column
// of a few integer levels they stay levels of their own.)
// Levels are in natural order (see NaturalLess): numbers by value, then
// text, with runs of digits inside text compared by value ("state 2" before
// "state 10"). Empty column names become "column N" and repeated ones get
// " (2)", " (3)" … appended. p, when not nil, receives the bytes read from
// r, as for ReadLabels.
func ReadAnnotations(ctx context.Context, r io.Reader, name string, cellIDs []string, p progress.Func) ([]atlas.Column, *atlas.JoinReport, error) {
	r, done := track(r, p)
	defer done()
	src, closeSrc, _, err := decompress(r)
	if err != nil {
		return nil, nil, readError(name, 1, err)
	}
	defer closeSrc()
	t, err := startTable(ctx, src, name)
	if err != nil {
		return nil, nil, err
	}
	index := make(map[string]int32, len(cellIDs))
	for i, id := range cellIDs {
		index[id] = int32(i)
	}
	n := len(cellIDs)
	cols := make([]colBuilder, len(t.names))
	for k := range cols {
		cols[k] = newColBuilder(n)
	}
	filled := make([]bool, n)
	rep := &atlas.JoinReport{}
	var firstExtra string
	rr := t.rr
	for {
		if err := t.checkFields(); err != nil {
			return nil, nil, err
		}
		id := rr.fields[0]
		cell, ok := index[string(id)]
		switch {
		case !ok:
			if rep.Extra == 0 {
				firstExtra = string(id)
			}
			rep.Extra++
		case filled[cell]:
			if rep.DuplicatedCount < maxListed {
				rep.Duplicated = append(rep.Duplicated, string(id))
			}
			rep.DuplicatedCount++
		default:
			filled[cell] = true
			rep.Matched++
			for k, f := range rr.fields[1:] {
				if !isMissing(f, rr.quoted[k+1]) {
					cols[k].add(cell, f)
				}
			}
		}
		if !rr.next() {
			break
		}
	}
	if rr.err != nil {
		return nil, nil, rr.err
	}
	if rep.Matched == 0 {
		example := ""
		if n > 0 {
			example = fmt.Sprintf(" (cells are named like %q)", cellIDs[0])
		}
		return nil, nil, &ParseError{File: name, Err: fmt.Errorf("%w: none of the %d IDs in the first column, such as %q, names a cell%s", ErrNoMatch, rep.Extra, firstExtra, example)}
	}
	rep.Unmatched = n - rep.Matched
	names := columnNames(t.names)
	out := make([]atlas.Column, len(cols))
	for k := range cols {
		out[k] = cols[k].finish(names[k])
		if b := &cols[k]; out[k].Kind == atlas.Continuous && len(b.odd) > 0 {
			rep.NotNumbers = append(rep.NotNumbers, b.oddNote(names[k]))
		}
	}
	return out, rep, nil
}

// columnNames names empty columns "column N" (N counting the ID column as 1)
// and makes repeated names distinct.
func columnNames(names []string) []string {
	out := make([]string, len(names))
	used := make(map[string]bool, len(names))
	for k, s := range names {
		if s == "" {
			s = fmt.Sprintf("column %d", k+2)
		}
		base := s
		for c := 2; used[s]; c++ {
			s = fmt.Sprintf("%s (%d)", base, c)
		}
		used[s] = true
		out[k] = s
	}
	return out
}

// colBuilder collects one annotation column while its kind is not known.
// While every value is a number it keeps the numbers; while it is text, or
// numeric with few distinct texts, it keeps each cell's text as a code into
// levels.
type colBuilder struct {
	numeric bool
	num     []float64 // per cell, NaN when missing; nil once not numeric
	intern  map[string]int32
	levels  []string
	codes   []int32 // per cell, Missing when absent; nil while not interning
	// odd counts the values that are not numbers in a column still taken
	// as numeric, by value; oddLimit bounds their count.
	odd      map[string]int
	oddAt    map[int32]string // the cells holding them
	oddCount int
	oddLimit int
	numCount int // values that are numbers
}

// maxOddTokens bounds the distinct values that are not numbers in a column
// still read as numbers.
const maxOddTokens = 3

func newColBuilder(n int) colBuilder {
	b := colBuilder{numeric: true, num: make([]float64, n), intern: map[string]int32{}, codes: make([]int32, n), oddLimit: max(1, n/20)}
	for i := range b.num {
		b.num[i] = math.NaN()
		b.codes[i] = atlas.Missing
	}
	return b
}

// add records the value f (not missing) of cell i.
func (b *colBuilder) add(i int32, f []byte) {
	if b.numeric {
		if x, ok := parseFloat(f); ok && !math.IsNaN(x) && !math.IsInf(x, 0) {
			b.num[i] = x
			b.numCount++
		} else {
			if b.odd == nil {
				b.odd, b.oddAt = map[string]int{}, map[int32]string{}
			}
			b.odd[string(f)]++
			b.oddAt[i] = string(f)
			b.oddCount++
			if len(b.odd) > maxOddTokens || b.oddCount > b.oddLimit {
				b.numeric = false
				if b.codes == nil {
					b.textFromNumbers()
				}
				b.num, b.odd, b.oddAt = nil, nil, nil
			}
		}
	}
	if b.codes == nil {
		return
	}
	code, ok := b.intern[string(f)]
	if !ok {
		code = int32(len(b.levels))
		s := string(f)
		b.intern[s] = code
		b.levels = append(b.levels, s)
	}
	b.codes[i] = code
	if b.numeric && len(b.levels) > internLimit {
		b.intern, b.levels, b.codes = nil, nil, nil
	}
}

// oddNote says which values of a numeric column were read as missing.
func (b *colBuilder) oddNote(name string) string {
	var vals []string
	for v := range b.odd {
		vals = append(vals, strconv.Quote(v))
	}
	sort.Strings(vals)
	what := plural(b.oddCount, "value") + " that are not numbers"
	if b.oddCount == 1 {
		what = "1 value that is not a number"
	}
	return fmt.Sprintf("column %q: %s (%s) read as missing", name, what, strings.Join(vals, ", "))
}

// textFromNumbers rebuilds the codes of a column that stopped keeping its
// texts from its numbers, written in shortest form, and the values that
// were not numbers.
func (b *colBuilder) textFromNumbers() {
	b.intern = map[string]int32{}
	b.levels = nil
	b.codes = make([]int32, len(b.num))
	var buf []byte
	for i, x := range b.num {
		b.codes[i] = atlas.Missing
		if odd, ok := b.oddAt[int32(i)]; ok {
			buf = append(buf[:0], odd...)
		} else if math.IsNaN(x) {
			continue
		} else {
			buf = strconv.AppendFloat(buf[:0], x, 'g', -1, 64)
		}
		code, ok := b.intern[string(buf)]
		if !ok {
			code = int32(len(b.levels))
			b.intern[string(buf)] = code
			b.levels = append(b.levels, string(buf))
		}
		b.codes[i] = code
	}
}

// finish decides the column's kind and returns it.
func (b *colBuilder) finish(name string) atlas.Column {
	if b.numeric && b.oddCount > 0 && 20*b.oddCount > b.numCount {
		// More than one value in 20 is not a number: text.
		b.numeric = false
		if b.codes == nil {
			b.textFromNumbers()
		}
	}
	if !b.numeric {
		return categorical(name, b.levels, b.codes)
	}
	distinct := map[float64]int32{}
	integers := true
	for _, x := range b.num {
		if math.IsNaN(x) {
			continue
		}
		integers = integers && x == math.Trunc(x)
		if _, ok := distinct[x]; !ok && len(distinct) <= MaxIntegerLevels {
			distinct[x] = int32(len(distinct))
		}
	}
	if !integers || len(distinct) == 0 || len(distinct) > MaxIntegerLevels {
		return atlas.Column{Name: name, Kind: atlas.Continuous, Values: b.num}
	}
	if len(b.odd) > 0 {
		// A few integer levels and a few texts: all of them are levels.
		if b.codes == nil {
			b.textFromNumbers()
		}
		return categorical(name, b.levels, b.codes)
	}
	levels := make([]string, len(distinct))
	for x, code := range distinct {
		levels[code] = strconv.FormatFloat(x, 'f', -1, 64)
	}
	codes := make([]int32, len(b.num))
	for i, x := range b.num {
		codes[i] = atlas.Missing
		if !math.IsNaN(x) {
			codes[i] = distinct[x]
		}
	}
	return categorical(name, levels, codes)
}

// categorical returns a categorical column with its levels put in natural
// order and its codes renumbered to match.
func categorical(name string, levels []string, codes []int32) atlas.Column {
	order := make([]int, len(levels))
	for k := range order {
		order[k] = k
	}
	sort.Slice(order, func(a, b int) bool { return NaturalLess(levels[order[a]], levels[order[b]]) })
	rank := make([]int32, len(levels))
	sorted := make([]string, len(levels))
	for r, k := range order {
		rank[k] = int32(r)
		sorted[r] = levels[k]
	}
	for i, c := range codes {
		if c >= 0 {
			codes[i] = rank[c]
		}
	}
	return atlas.Column{Name: name, Kind: atlas.Categorical, Levels: sorted, Codes: codes}
}

// NaturalLess orders labels as a person would: labels that are whole
// numbers come first, by value; then text, compared piece by piece, where a
// run of digits counts as one number ("state 2" < "state 10", "a01" = "a1")
// and other text compares byte by byte without regard to ASCII case. Labels
// that compare equal this way are ordered byte by byte, so the order is
// total.
func NaturalLess(a, b string) bool {
	xa, na := numberValue(a)
	xb, nb := numberValue(b)
	switch {
	case na && nb:
		if xa != xb {
			return xa < xb
		}
		return a < b
	case na != nb:
		return na
	}
	if c := naturalCompare(a, b); c != 0 {
		return c < 0
	}
	return a < b
}

// numberValue parses s as a finite number.
func numberValue(s string) (float64, bool) {
	x, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	return x, err == nil && !math.IsInf(x, 0) && !math.IsNaN(x)
}

// naturalCompare compares a and b piece by piece: runs of digits by value,
// other bytes one by one, folding ASCII case.
func naturalCompare(a, b string) int {
	i, j := 0, 0
	for i < len(a) && j < len(b) {
		ca, cb := a[i], b[j]
		if isDigit(ca) && isDigit(cb) {
			si, sj := i, j
			for i < len(a) && isDigit(a[i]) {
				i++
			}
			for j < len(b) && isDigit(b[j]) {
				j++
			}
			da := strings.TrimLeft(a[si:i], "0")
			db := strings.TrimLeft(b[sj:j], "0")
			if len(da) != len(db) {
				return cmpInt(len(da), len(db))
			}
			if c := strings.Compare(da, db); c != 0 {
				return c
			}
			continue
		}
		la, lb := lower(ca), lower(cb)
		if la != lb {
			return cmpInt(int(la), int(lb))
		}
		i++
		j++
	}
	return cmpInt(len(a)-i, len(b)-j)
}

func isDigit(c byte) bool { return '0' <= c && c <= '9' }

func lower(c byte) byte {
	if 'A' <= c && c <= 'Z' {
		return c + 'a' - 'A'
	}
	return c
}

func cmpInt(a, b int) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// WriteAnnotations writes per-cell annotation columns as a tab-separated
// table that ReadAnnotations reads back: a header row ("cell" and the
// column names), then one row per cell with its ID and its values.
// Categorical values are written as their level, continuous ones in the
// shortest form that reads back to the same float64, missing values as
// empty fields. Fields holding a tab, a quote, a line break, surrounding
// spaces, or (for text) a word read as missing are quoted after RFC 4180.
// Kinds are not stored: ReadAnnotations infers them again, so a column of
// few integers comes back categorical and one of many numeric levels
// continuous.
func WriteAnnotations(w io.Writer, cellIDs []string, cols []atlas.Column) error {
	for k := range cols {
		if n := cols[k].Len(); n != len(cellIDs) {
			return fmt.Errorf("ingest: annotation column %q has %d values for %d cells: %w", cols[k].Name, n, len(cellIDs), ErrFieldCount)
		}
	}
	bw := bufio.NewWriterSize(w, 64<<10)
	var buf []byte
	buf = appendField(buf, "cell")
	for k := range cols {
		buf = append(buf, '\t')
		buf = appendField(buf, cols[k].Name)
	}
	buf = append(buf, '\n')
	for i, id := range cellIDs {
		buf = appendField(buf, id)
		for k := range cols {
			buf = append(buf, '\t')
			c := &cols[k]
			switch {
			case c.Kind == atlas.Categorical && c.Codes[i] >= 0:
				buf = appendField(buf, c.Levels[c.Codes[i]])
			case c.Kind == atlas.Continuous && !math.IsNaN(c.Values[i]):
				buf = strconv.AppendFloat(buf, c.Values[i], 'g', -1, 64)
			}
		}
		buf = append(buf, '\n')
		if len(buf) > 32<<10 {
			if _, err := bw.Write(buf); err != nil {
				return err
			}
			buf = buf[:0]
		}
	}
	if _, err := bw.Write(buf); err != nil {
		return err
	}
	return bw.Flush()
}

// appendField appends s to buf, quoted when it would not read back as
// itself.
func appendField(buf []byte, s string) []byte {
	needs := strings.ContainsAny(s, "\t\"\r\n") || strings.Trim(s, " ") != s ||
		(s != "" && isMissing([]byte(s), false))
	if !needs {
		return append(buf, s...)
	}
	buf = append(buf, '"')
	buf = append(buf, strings.ReplaceAll(s, `"`, `""`)...)
	return append(buf, '"')
}
