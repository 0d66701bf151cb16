package ingest

import (
	"bytes"
	"fmt"
	"math"
	"reflect"
	"sort"
	"strings"
	"testing"

	"lodestone/compute/atlas"
)

func TestReadAnnotationsJoinAndKinds(t *testing.T) {
	cells := []string{"c1", "c2", "c3", "c4", "c5", "c6"}
	text := "id,day,score,state,batch,blank\n" +
		"c3,2,0.5,state 10,1,NA\n" +
		"c1,1,1.25,state 2,2,\n" +
		"c9,3,9,x,1,\n" +
		"c2,NA,n/a,state 1,\"NA\",None\n" +
		"c1,5,5,dup,1,\n" +
		"c4,14,2.0,State 2,3,null\n"
	cols, rep, err := ReadAnnotations(bg, strings.NewReader(text), "a.csv", cells, nil)
	if err != nil {
		t.Fatal(err)
	}
	wantRep := atlas.JoinReport{Matched: 4, Unmatched: 2, Extra: 1, Duplicated: []string{"c1"}, DuplicatedCount: 1}
	if !reflect.DeepEqual(*rep, wantRep) {
		t.Errorf("report %+v, want %+v", *rep, wantRep)
	}
	if len(cols) != 5 {
		t.Fatalf("%d columns, want 5", len(cols))
	}
	type want struct {
		name   string
		kind   atlas.Kind
		levels []string
		labels []string // per cell, "" when missing
	}
	wants := []want{
		{"day", atlas.Categorical, []string{"1", "2", "14"}, []string{"1", "", "2", "14", "", ""}},
		{"score", atlas.Continuous, nil, []string{"1.25", "", "0.5", "2", "", ""}},
		{"state", atlas.Categorical, []string{"state 1", "State 2", "state 2", "state 10"}, []string{"state 2", "state 1", "state 10", "State 2", "", ""}},
		{"batch", atlas.Categorical, []string{"1", "2", "3", "NA"}, []string{"2", "NA", "1", "3", "", ""}},
		{"blank", atlas.Continuous, nil, []string{"", "", "", "", "", ""}},
	}
	for k, w := range wants {
		c := cols[k]
		if c.Name != w.name || c.Kind != w.kind || !reflect.DeepEqual(c.Levels, w.levels) || c.Len() != len(cells) {
			t.Errorf("column %d: %q %v %q (%d values), want %q %v %q", k, c.Name, c.Kind, c.Levels, c.Len(), w.name, w.kind, w.levels)
			continue
		}
		for i := range cells {
			if got := c.Label(i); got != w.labels[i] {
				t.Errorf("column %q, cell %s: %q, want %q", c.Name, cells[i], got, w.labels[i])
			}
		}
	}
}

func TestReadAnnotationsIntegerLevels(t *testing.T) {
	// Integers with at most MaxIntegerLevels distinct values are
	// categorical; one more makes the column continuous.
	for _, distinct := range []int{MaxIntegerLevels, MaxIntegerLevels + 1} {
		var cells []string
		var b strings.Builder
		b.WriteString("cell\tn\n")
		for i := 0; i < 3*distinct; i++ {
			id := fmt.Sprintf("c%d", i)
			cells = append(cells, id)
			fmt.Fprintf(&b, "%s\t%d\n", id, 100-i%distinct)
		}
		cols, _, err := ReadAnnotations(bg, strings.NewReader(b.String()), "n.tsv", cells, nil)
		if err != nil {
			t.Fatal(err)
		}
		wantKind := atlas.Categorical
		if distinct > MaxIntegerLevels {
			wantKind = atlas.Continuous
		}
		if cols[0].Kind != wantKind {
			t.Errorf("%d distinct integers: %v, want %v", distinct, cols[0].Kind, wantKind)
		}
		if wantKind == atlas.Categorical {
			if len(cols[0].Levels) != distinct || cols[0].Levels[0] != fmt.Sprint(100-distinct+1) {
				t.Errorf("levels %q", cols[0].Levels)
			}
			for i := range cells {
				if cols[0].Label(i) != fmt.Sprint(100-i%distinct) {
					t.Fatalf("cell %d: %q", i, cols[0].Label(i))
				}
			}
		}
	}
}

func TestReadAnnotationsNumbersThenText(t *testing.T) {
	// More distinct numbers than are remembered as text, then more
	// distinct words than a numeric column tolerates: the column becomes
	// categorical, the numbers written in shortest form.
	n := internLimit + 10
	words := []string{"word", "alpha", "beta", "gamma"}
	cells := make([]string, n+len(words))
	var b strings.Builder
	b.WriteString("cell,x\n")
	for i := 0; i < n; i++ {
		cells[i] = fmt.Sprint("c", i)
		fmt.Fprintf(&b, "c%d,%d.50\n", i, i)
	}
	for k, w := range words {
		cells[n+k] = fmt.Sprint("last", k)
		fmt.Fprintf(&b, "last%d,%s\n", k, w)
	}
	cols, _, err := ReadAnnotations(bg, strings.NewReader(b.String()), "x.csv", cells, nil)
	if err != nil {
		t.Fatal(err)
	}
	c := cols[0]
	if c.Kind != atlas.Categorical || len(c.Levels) != n+len(words) {
		t.Fatalf("%v with %d levels", c.Kind, len(c.Levels))
	}
	for _, i := range []int{0, 1, 777, n - 1} {
		if want := fmt.Sprintf("%d.5", i); c.Label(i) != want {
			t.Errorf("cell %d: %q, want %q", i, c.Label(i), want)
		}
	}
	for k, w := range words {
		if c.Label(n+k) != w {
			t.Errorf("cell %d: %q, want %q", n+k, c.Label(n+k), w)
		}
	}
}

func TestReadAnnotationsNumbersWithAFewMissingMarks(t *testing.T) {
	// A numeric column with a few marks that are not numbers stays numeric
	// (they are missing, and reported); a column of a few integer levels
	// keeps them as levels; too many marks make text.
	const n = 200
	cells := make([]string, n)
	var b strings.Builder
	b.WriteString("cell\tscore\tday\tmostly\n")
	for i := range n {
		cells[i] = fmt.Sprint("c", i)
		score, day, mostly := fmt.Sprintf("%g", cellScore(i)), fmt.Sprint(i%5), fmt.Sprint(i)
		switch i {
		case 5:
			score, day = "-", "unknown"
		case 9:
			score = "#N/A"
		case 17:
			score = "inf"
		}
		if i%10 == 3 {
			mostly = "?"
		}
		fmt.Fprintf(&b, "c%d\t%s\t%s\t%s\n", i, score, day, mostly)
	}
	cols, rep, err := ReadAnnotations(bg, strings.NewReader(b.String()), "a.tsv", cells, nil)
	if err != nil {
		t.Fatal(err)
	}
	score, day, mostly := cols[0], cols[1], cols[2]
	if score.Kind != atlas.Continuous || !math.IsNaN(score.Values[5]) || !math.IsNaN(score.Values[17]) || score.Values[6] != cellScore(6) {
		t.Fatalf("score: %v %v", score.Kind, score.Values[:8])
	}
	if len(rep.NotNumbers) != 1 || rep.NotNumbers[0] != `column "score": 3 values that are not numbers ("#N/A", "-", "inf") read as missing` {
		t.Errorf("report %q", rep.NotNumbers)
	}
	if day.Kind != atlas.Categorical || day.Label(5) != "unknown" || day.Label(6) != "1" || len(day.Levels) != 6 {
		t.Errorf("day: %v %q %q", day.Kind, day.Levels, day.Label(5))
	}
	if mostly.Kind != atlas.Categorical || mostly.Label(3) != "?" {
		t.Errorf("mostly: %v, cell 3 %q", mostly.Kind, mostly.Label(3))
	}
}

func TestReadAnnotationsErrors(t *testing.T) {
	cells := []string{"a", "b"}
	_, _, err := ReadAnnotations(bg, strings.NewReader("id,x\nz,1\ny,2\n"), "m.csv", cells, nil)
	wantParseError(t, err, "m.csv", 0, 0, ErrNoMatch)
	if !strings.Contains(err.Error(), `"z"`) || !strings.Contains(err.Error(), `"a"`) {
		t.Errorf("message %q names no example IDs", err)
	}
	_, _, err = ReadAnnotations(bg, strings.NewReader("id,x,y\na,1,2\nb,1\n"), "m.csv", cells, nil)
	wantParseError(t, err, "m.csv", 3, 3, ErrFieldCount)
	_, _, err = ReadAnnotations(bg, strings.NewReader(""), "m.csv", cells, nil)
	wantParseError(t, err, "m.csv", 1, 0, ErrEmpty)
	_, _, err = ReadAnnotations(bg, bytes.NewReader(gz(t, []byte("id,x\na,1\nb,2\n"))[:11]), "m.csv.gz", cells, nil)
	wantParseError(t, err, "m.csv.gz", 1, 0, ErrTruncated)
}

func TestWriteAnnotationsRoundTrip(t *testing.T) {
	cells := []string{"c1", "c 2", "c\t3", "c4"}
	cols := []atlas.Column{
		{Name: "group", Kind: atlas.Categorical, Levels: []string{"alpha", "NA", " padded ", "tab\there", `quote"d`}, Codes: []int32{0, 1, atlas.Missing, 3}},
		{Name: "score", Kind: atlas.Continuous, Values: []float64{0.1, math.NaN(), -2.5e-8, 1e300}},
		{Name: "mixed\tname", Kind: atlas.Categorical, Levels: []string{"x", "y"}, Codes: []int32{1, 0, 4 % 2, atlas.Missing}},
	}
	var b bytes.Buffer
	if err := WriteAnnotations(&b, cells, cols); err != nil {
		t.Fatal(err)
	}
	got, rep, err := ReadAnnotations(bg, &b, "w.tsv", cells, nil)
	if err != nil {
		t.Fatal(err)
	}
	if rep.Matched != len(cells) || rep.Extra != 0 {
		t.Errorf("report %+v", rep)
	}
	for k := range cols {
		if got[k].Name != cols[k].Name || got[k].Kind != cols[k].Kind {
			t.Errorf("column %d: %q %v, want %q %v", k, got[k].Name, got[k].Kind, cols[k].Name, cols[k].Kind)
		}
		for i := range cells {
			if cols[k].Kind == atlas.Continuous {
				a, b := cols[k].Values[i], got[k].Values[i]
				if a != b && !(math.IsNaN(a) && math.IsNaN(b)) {
					t.Errorf("column %d, cell %d: %v, want %v", k, i, b, a)
				}
			} else if got[k].Label(i) != cols[k].Label(i) {
				t.Errorf("column %d, cell %d: %q, want %q", k, i, got[k].Label(i), cols[k].Label(i))
			}
		}
	}
	if err := WriteAnnotations(&b, cells[:2], cols); err == nil {
		t.Error("no error for columns longer than the cells")
	}
}

func TestNaturalLess(t *testing.T) {
	// Common practice ("natural sort order"): numbers by value, then text
	// with digit runs compared by value; ties ("a02", "a2") in byte order.
	want := []string{"-3", "0.5", "2", "10", "1e3", "a", "A1", "a02", "a2", "a10", "B", "state 1", "state 2", "state 10", "state 10b", "x"}
	got := append([]string(nil), want...)
	for seed := 0; seed < 20; seed++ {
		for i := range got {
			j := (i*7 + seed*13) % len(got)
			got[i], got[j] = got[j], got[i]
		}
		sort.Slice(got, func(a, b int) bool { return NaturalLess(got[a], got[b]) })
		if !reflect.DeepEqual(got, want) {
			t.Fatalf("sorted %q, want %q", got, want)
		}
	}
	for _, a := range want {
		if NaturalLess(a, a) {
			t.Errorf("NaturalLess(%q, %q)", a, a)
		}
	}
}

func cellScore(i int) float64 { return float64(i) * 0.37 }
