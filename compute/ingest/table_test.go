package ingest

import (
	"bytes"
	"fmt"
	"math"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"lodestone/compute/atlas"
)

func TestReadTable(t *testing.T) {
	text := "\ufeffcell,\"CD3E\",\"gene, with comma\",PC1\r\n" +
		"c1, 0 ,2.5,-0.3\r\n" +
		"\"c 2\",1e-3,\"7\",123456789\r\n" +
		"\r\n" +
		"c3,-0,.5,1e15\r\n"
	for _, compress := range []bool{false, true} {
		data := []byte(text)
		if compress {
			data = gz(t, data)
		}
		ids, header, m, err := ReadTable(bg, bytes.NewReader(data), "t.csv", nil)
		if err != nil {
			t.Fatal(err)
		}
		if want := []string{"c1", "c 2", "c3"}; !reflect.DeepEqual(ids, want) {
			t.Errorf("ids %q, want %q", ids, want)
		}
		if want := []string{"CD3E", "gene, with comma", "PC1"}; !reflect.DeepEqual(header, want) {
			t.Errorf("header %q, want %q", header, want)
		}
		// Reference: strconv.ParseFloat of each field, rounded to float32.
		fields := [][]string{{"0", "2.5", "-0.3"}, {"1e-3", "7", "123456789"}, {"-0", ".5", "1e15"}}
		if m.Rows != 3 || m.Cols != 3 {
			t.Fatalf("%d×%d", m.Rows, m.Cols)
		}
		for i, row := range fields {
			for j, f := range row {
				x, _ := strconv.ParseFloat(f, 64)
				if got := m.At(i, j); got != float32(x) {
					t.Errorf("(%d,%d) = %v, want %v", i, j, got, float32(x))
				}
			}
		}
	}
}

func TestReadTableShortHeaderAndTabs(t *testing.T) {
	// A header naming only the value columns (one field fewer than the rows).
	text := "a\tb\nx\t1\t2\ny\t3\t4\n"
	ids, header, m, err := ReadTable(bg, strings.NewReader(text), "t.tsv", nil)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(ids, []string{"x", "y"}) || !reflect.DeepEqual(header, []string{"a", "b"}) || !reflect.DeepEqual(m.Data, []float32{1, 2, 3, 4}) {
		t.Errorf("got %q %q %v", ids, header, m.Data)
	}
}

func TestReadTableErrors(t *testing.T) {
	cases := []struct {
		name, text   string
		line, column int
		err          error
	}{
		{"empty", "", 1, 0, ErrEmpty},
		{"blank", "\n \n", 1, 0, ErrEmpty},
		{"header only", "cell,a,b\n", 2, 0, ErrEmpty},
		{"ID column only", "cell\nc1\n", 1, 2, ErrHeader},
		{"first row ragged", "cell,a,b\nc1,1\n", 2, 0, ErrFieldCount},
		{"row too short", "cell,a,b\nc1,1,2\nc2,1\n", 3, 3, ErrFieldCount},
		{"row too long", "cell,a,b\nc1,1,2\nc2,1,2,3\n", 3, 4, ErrFieldCount},
		{"not a number", "cell,a,b\nc1,1,2\nc2,1,abc\n", 3, 3, ErrNotNumber},
		{"empty value", "cell,a,b\nc1,1,\n", 2, 3, ErrNotNumber},
		{"NaN", "cell\ta\tb\nc1\tNaN\t2\n", 2, 2, ErrNotFinite},
		{"Inf", "cell,a,b\nc1,1,-Inf\n", 2, 3, ErrNotFinite},
		{"beyond float32", "cell,a,b\nc1,1,1e39\n", 2, 3, ErrNotFinite},
		{"duplicate ID", "cell,a\nc1,1\nc2,2\nc1,3\n", 4, 1, ErrDuplicateID},
		{"empty ID", "cell,a\nc1,1\n,2\n", 3, 1, ErrBlankLabel},
		{"open quote", "cell,a\nc1,\"1\n", 2, 2, ErrQuote},
		{"beyond the magnitude bound", "cell,a,b\nc1,1,2\nc2,-1e30,2\n", 3, 2, ErrMagnitude},
		{"negative expression", wideTable(-3), 4, 52, ErrNegative},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, _, _, err := ReadTable(bg, strings.NewReader(c.text), "t.csv", nil)
			wantParseError(t, err, "t.csv", c.line, c.column, c.err)
		})
	}
}

func TestParseFloatAgainstStrconv(t *testing.T) {
	// Reference: strconv.ParseFloat, which rounds correctly; the fast path
	// must agree bit for bit.
	inputs := []string{"0", "-0", "1", "+1", "1.", ".5", "-.5", "1e3", "1E-3", "1.5e+2",
		"123456789012345", "1234567890123456", "0.1", "0.3", "2.2250738585072014e-308",
		"9007199254740993", "1e22", "1e23", "1e-22", "1e-23", "4.35", "00012.5000",
		"3.4028234663852886e38", "1e310", "inf", "NaN", "0x1p-2", "1_0", "", "-", ".", "e5", "1e", "1e+", "1.2.3"}
	for a := 0; a < 2000; a++ {
		m := uint64(a*2654435761) % 1000000007
		inputs = append(inputs, strconv.FormatUint(m, 10)+"."+strconv.Itoa(a%997), strconv.FormatFloat(float64(m)*math.Pow(10, float64(a%40-20)), 'g', a%17+1, 64))
	}
	for _, s := range inputs {
		want, err := strconv.ParseFloat(s, 64)
		wantOK := err == nil || err.(*strconv.NumError).Err == strconv.ErrRange
		got, ok := parseFloat([]byte(s))
		if ok != wantOK || (ok && math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want))) {
			t.Errorf("parseFloat(%q) = %v, %v; strconv gives %v, %v", s, got, ok, want, err)
		}
	}
}

// wideTable returns a table of atlas.MaxFeatureColumns+1 columns and three
// rows with v on line 4, column 52.
func wideTable(v float64) string {
	var b strings.Builder
	b.WriteString("cell")
	for j := 0; j <= atlas.MaxFeatureColumns; j++ {
		fmt.Fprintf(&b, ",g%d", j)
	}
	for i := 0; i < 3; i++ {
		fmt.Fprintf(&b, "\nc%d", i)
		for j := 0; j <= atlas.MaxFeatureColumns; j++ {
			x := 1.0
			if i == 2 && j == 50 {
				x = v
			}
			fmt.Fprintf(&b, ",%g", x)
		}
	}
	return b.String() + "\n"
}

func TestReadTableNarrowTablesHoldAnyValueWithinTheBound(t *testing.T) {
	// Features (principal components) may be negative and large.
	text := "cell,PC1,PC2\nc1,-3.5,1e14\nc2,-1e15,0\n"
	_, _, m, err := ReadTable(bg, strings.NewReader(text), "pcs.csv", nil)
	if err != nil || !reflect.DeepEqual(m.Data, []float32{-3.5, 1e14, -1e15, 0}) {
		t.Fatalf("%v %v", m, err)
	}
	// An expression table of non-negative values reads.
	if _, _, m, err := ReadTable(bg, strings.NewReader(wideTable(7)), "wide.csv", nil); err != nil || m.Cols != atlas.MaxFeatureColumns+1 {
		t.Fatalf("%v %v", m, err)
	}
	// The message says why a negative value is refused.
	_, _, _, err = ReadTable(bg, strings.NewReader(wideTable(-3)), "wide.csv", nil)
	if err == nil || !strings.Contains(err.Error(), `wide.csv:4:52: negative value: value "-3" in column "g50"`) || !strings.Contains(err.Error(), "holds expression") {
		t.Fatalf("error %v", err)
	}
}
