package tables

import (
	"bytes"
	"encoding/csv"
	"errors"
	"lodestone/compute/ingest"
	"math"
	"reflect"
	"strings"
	"testing"

	"lodestone/compute/markers"
)

func TestCellsTableReadsBackWithEncodingCSV(t *testing.T) {
	c := Cells{
		IDs:        []string{"a", "b,c", `d"e`},
		Layout:     []float32{1, 2, -0.5, 1e-7, 3, 4},
		Groups:     []Group{{Name: "first", Cells: []bool{true, false, true}}, {Name: "x,y", Cells: []bool{false, true, false}}},
		PaintName:  "state",
		PaintValue: func(i int) string { return []string{"s1", "", "s 3"}[i] },
	}
	var b bytes.Buffer
	if err := c.Write(&b); err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(&b).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	want := [][]string{
		{"id", "x", "y", "first", "x,y", "state"},
		{"a", "1", "2", "1", "0", "s1"},
		{"b,c", "-0.5", "1e-07", "0", "1", ""},
		{`d"e`, "3", "4", "1", "0", "s 3"},
	}
	if !reflect.DeepEqual(rows, want) {
		t.Fatalf("got %q\nwant %q", rows, want)
	}
}

func TestIDs(t *testing.T) {
	var b bytes.Buffer
	WriteIDs(&b, []string{"a", "b", "c"}, []bool{true, false, true})
	if b.String() != "a\nc\n" {
		t.Fatalf("ids %q", b.String())
	}
}

// TestMarkersRoundTrip writes a marker table and reads it back: the header
// in its documented order, every number as written (float64 values exactly,
// percentages to 12 digits), names with commas and quotes intact.
func TestMarkersRoundTrip(t *testing.T) {
	res := []markers.Result{
		{Gene: 1, LogFoldChange: 2.5, Z: 7.123456789012345, P: 1.0000000000000002e-12, Q: 2e-11, FractionIn: 0.9, FractionOut: 1.0 / 3},
		{Gene: 0, LogFoldChange: -0.1, Z: -1, P: 0.31731050786291415, Q: 0.31731050786291415, FractionIn: 0, FractionOut: 1},
		{Gene: 2, LogFoldChange: 0, Z: 40, P: 0, Q: 0, FractionIn: 0.5, FractionOut: 0.25},
	}
	ids, syms := []string{"g0", "g,1", `g"2`}, []string{"S0", "g,1", "S 2"} // g,1 has no symbol
	wantSym := []string{"S0", "", "S 2"}
	var b bytes.Buffer
	if err := WriteMarkers(&b, res, ids, syms); err != nil {
		t.Fatal(err)
	}
	if head, _, _ := strings.Cut(b.String(), "\n"); head != "gene,symbol,log2_fold,z,p,q,pct_in,pct_rest" {
		t.Fatalf("header %q", head)
	}
	back, err := ReadMarkers(&b, "m.csv")
	if err != nil {
		t.Fatal(err)
	}
	if len(back) != len(res) {
		t.Fatalf("%d rows back for %d", len(back), len(res))
	}
	for i, r := range res {
		m := back[i]
		if m.Gene != ids[r.Gene] || m.Symbol != wantSym[r.Gene] || m.LogFoldChange != r.LogFoldChange || m.Z != r.Z || m.P != r.P || m.Q != r.Q ||
			math.Abs(m.PercentIn-100*r.FractionIn) > 1e-10 || math.Abs(m.PercentRest-100*r.FractionOut) > 1e-10 {
			t.Errorf("row %d: %+v, wrote %+v", i, m, r)
		}
	}
}

// TestReadMarkersErrors checks that each kind of bad table is refused with
// the file, the line and the field.
func TestReadMarkersErrors(t *testing.T) {
	head := "gene,symbol,log2_fold,z,p,q,pct_in,pct_rest\n"
	for _, tc := range []struct {
		text, where string
		err         error
	}{
		{"", "m.csv: ", ingest.ErrEmpty},
		{"gene,symbol,log2_fold_change,z,p,q,pct_in,pct_rest\n", "m.csv:1:3:", ingest.ErrHeader},
		{head + "g1,S,1,2,3,4,5\n", "m.csv:2:", ingest.ErrFieldCount},
		{head + "g1,S,1,2,0.5,0.5,50,50\ng2,S,x,2,0.5,0.5,50,50\n", "m.csv:3:3:", ingest.ErrNotNumber},
		{head + "g1,S,1,NaN,0.5,0.5,50,50\n", "m.csv:2:4:", ingest.ErrNotFinite},
		{head + "g1,S,1,2,0.5,0.5,50,1e999\n", "m.csv:2:8:", ingest.ErrNotFinite},
		{head + " ,S,1,2,0.5,0.5,50,50\n", "m.csv:2:1:", ingest.ErrBlankLabel},
		{head + "\"g1,S,1,2,0.5,0.5,50,50\n", "m.csv:2:", ingest.ErrQuote},
	} {
		_, err := ReadMarkers(strings.NewReader(tc.text), "m.csv")
		var pe *ingest.ParseError
		if !errors.Is(err, tc.err) || !errors.As(err, &pe) || !strings.HasPrefix(err.Error(), tc.where) {
			t.Errorf("%q: %v, want %v at %q", tc.text, err, tc.err, tc.where)
		}
	}
}

// FuzzReadMarkers checks that no input makes ReadMarkers panic, that every
// error is a ParseError, and that it accepts only finite numbers.
func FuzzReadMarkers(f *testing.F) {
	f.Add("gene,symbol,log2_fold,z,p,q,pct_in,pct_rest\ng1,S1,1.5,3,0.001,0.01,50,10\n")
	f.Add("gene,symbol,log2_fold,z,p,q,pct_in,pct_rest\n\"g,1\",,-2,-3,1e-300,1,0,100\n")
	f.Add("gene,symbol\n")
	f.Add("\"")
	f.Fuzz(func(t *testing.T, text string) {
		ms, err := ReadMarkers(strings.NewReader(text), "fuzz.csv")
		if err != nil {
			var pe *ingest.ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %v is not a ParseError", err)
			}
			return
		}
		for _, m := range ms {
			for _, v := range []float64{m.LogFoldChange, m.Z, m.P, m.Q, m.PercentIn, m.PercentRest} {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					t.Fatalf("accepted %v", v)
				}
			}
		}
	})
}
