package tables

import (
	"bytes"
	"encoding/csv"
	"reflect"
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

func TestIDsAndMarkers(t *testing.T) {
	var b bytes.Buffer
	WriteIDs(&b, []string{"a", "b", "c"}, []bool{true, false, true})
	if b.String() != "a\nc\n" {
		t.Fatalf("ids %q", b.String())
	}
	b.Reset()
	res := []markers.Result{{Gene: 1, LogFoldChange: 2.5, Z: 7, P: 1e-12, Q: 2e-11, FractionIn: 0.9, FractionOut: 0.1, MeanIn: 1.5, MeanOut: 0.2}}
	if err := WriteMarkers(&b, res, []string{"g0", "g1"}, []string{"S0", "S1"}); err != nil {
		t.Fatal(err)
	}
	rows, _ := csv.NewReader(&b).ReadAll()
	if len(rows) != 2 || rows[1][0] != "g1" || rows[1][1] != "S1" || rows[1][4] != "1e-12" {
		t.Fatalf("markers %q", rows)
	}
}
