package ingest

import (
	"bytes"
	"encoding/csv"
	"math/rand/v2"
	"reflect"
	"strings"
	"testing"
)

// readAll splits text into records with a recordReader.
func readAll(t *testing.T, text string, sep byte) ([][]string, error) {
	t.Helper()
	rr := &recordReader{s: newLineScanner(bg, strings.NewReader(text)), name: "r.csv", sep: sep}
	var out [][]string
	for rr.next() {
		rec := make([]string, len(rr.fields))
		for k, f := range rr.fields {
			rec[k] = string(f)
		}
		if len(rr.quoted) != len(rr.fields) {
			t.Fatalf("%d quoted flags for %d fields", len(rr.quoted), len(rr.fields))
		}
		out = append(out, rec)
	}
	return out, rr.err
}

func TestRecordsRFC4180Examples(t *testing.T) {
	// The examples of RFC 4180, section 2 (rules 1 to 7).
	cases := []struct {
		text string
		want [][]string
	}{
		{"aaa,bbb,ccc\r\nzzz,yyy,xxx\r\n", [][]string{{"aaa", "bbb", "ccc"}, {"zzz", "yyy", "xxx"}}},
		{"aaa,bbb,ccc\r\nzzz,yyy,xxx", [][]string{{"aaa", "bbb", "ccc"}, {"zzz", "yyy", "xxx"}}},
		{"field_name,field_name,field_name\r\naaa,bbb,ccc\r\n", [][]string{{"field_name", "field_name", "field_name"}, {"aaa", "bbb", "ccc"}}},
		{`"aaa","bbb","ccc"` + "\r\nzzz,yyy,xxx", [][]string{{"aaa", "bbb", "ccc"}, {"zzz", "yyy", "xxx"}}},
		{`"aaa","b` + "\r\n" + `bb","ccc"` + "\r\nzzz,yyy,xxx", [][]string{{"aaa", "b\nbb", "ccc"}, {"zzz", "yyy", "xxx"}}},
		{`"aaa","b""bb","ccc"`, [][]string{{"aaa", `b"bb`, "ccc"}}},
	}
	for _, c := range cases {
		got, err := readAll(t, c.text, 0)
		if err != nil {
			t.Fatalf("%q: %v", c.text, err)
		}
		if !reflect.DeepEqual(got, c.want) {
			t.Errorf("%q: got %q, want %q", c.text, got, c.want)
		}
	}
}

func TestRecordsAgainstEncodingCSV(t *testing.T) {
	// Reference: Go's encoding/csv writes random records (with
	// separators, quotes and line breaks inside fields); both it and our
	// reader must read them back unchanged.
	rng := rand.New(rand.NewPCG(9, 10))
	alphabet := []string{"a", "B", "7", ",", "\t", `"`, "\n", " ", ".", "é"}
	field := func() string {
		var b strings.Builder
		for n := rng.IntN(6); n > 0; n-- {
			b.WriteString(alphabet[rng.IntN(len(alphabet))])
		}
		// Our reader removes spaces around unquoted fields; encoding/csv
		// quotes leading but not trailing ones.
		return strings.TrimRight(b.String(), " ")
	}
	for trial := 0; trial < 300; trial++ {
		sep := ','
		if trial%2 == 1 {
			sep = '\t'
		}
		var recs [][]string
		width := 2 + rng.IntN(4)
		for r := rng.IntN(8) + 1; r > 0; r-- {
			rec := make([]string, width)
			for k := range rec {
				rec[k] = field()
			}
			recs = append(recs, rec)
		}
		var b bytes.Buffer
		w := csv.NewWriter(&b)
		w.Comma = sep
		w.UseCRLF = trial%3 == 0
		if err := w.WriteAll(recs); err != nil {
			t.Fatal(err)
		}
		text := b.String()
		got, err := readAll(t, text, byte(sep))
		if err != nil {
			t.Fatalf("%q: %v", text, err)
		}
		r := csv.NewReader(strings.NewReader(text))
		r.Comma = sep
		ref, err := r.ReadAll()
		if err != nil {
			t.Fatalf("encoding/csv: %q: %v", text, err)
		}
		if !reflect.DeepEqual(got, ref) || !reflect.DeepEqual(got, recs) {
			t.Fatalf("%q:\n got %q\n csv %q\nwant %q", text, got, ref, recs)
		}
	}
}

func TestRecordsQuoteErrors(t *testing.T) {
	_, err := readAll(t, "a,b\n1,\"x\ny\n", 0)
	wantParseError(t, err, "r.csv", 2, 2, ErrQuote)
	_, err = readAll(t, "a,b\n1,\"x\"y\n", 0)
	wantParseError(t, err, "r.csv", 2, 2, ErrQuote)
}

func TestDetectSeparator(t *testing.T) {
	cases := map[string]byte{
		"cell,a,b":            ',',
		"cell\ta\tb":          '\t',
		"cell\ta,1\tb,2":      '\t',
		`"x	y",a,b`:           ',',
		"cell":                ',',
		"cell\ta\tb,c,d,e,f":  ',',
		"\"a,b\"\t\"c,d\"\tx": '\t',
	}
	for line, want := range cases {
		if got := detectSeparator([]byte(line)); got != want {
			t.Errorf("%q: separator %q, want %q", line, got, want)
		}
	}
}
