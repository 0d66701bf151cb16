package ingest

import (
	"bytes"
	"errors"
	"reflect"
	"strings"
	"testing"
)

func TestReadLabels(t *testing.T) {
	cases := []struct {
		name, text    string
		ids, symbols  []string
		fields        int
		sharesSymbols bool
	}{
		{"one column", "AAAC-1\nAAAG-1\r\nAACT-1", []string{"AAAC-1", "AAAG-1", "AACT-1"}, []string{"AAAC-1", "AAAG-1", "AACT-1"}, 1, true},
		{"symbols", "\ufeffG1\tCD3E\tGene Expression\nG2\tMS4A1\tGene Expression\n\n\n", []string{"G1", "G2"}, []string{"CD3E", "MS4A1"}, 3, false},
		{"some symbols", "G1\nG2\tX\nG3\t\n", []string{"G1", "G2", "G3"}, []string{"G1", "X", "G3"}, 2, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			for _, compress := range []bool{false, true} {
				data := []byte(c.text)
				if compress {
					data = gz(t, data)
				}
				l, err := ReadLabels(bg, bytes.NewReader(data), "l.tsv", nil)
				if err != nil {
					t.Fatal(err)
				}
				if !reflect.DeepEqual(l.IDs, c.ids) || !reflect.DeepEqual(l.Symbols, c.symbols) || l.Fields != c.fields {
					t.Errorf("got %q %q %d, want %q %q %d", l.IDs, l.Symbols, l.Fields, c.ids, c.symbols, c.fields)
				}
			}
		})
	}
}

func TestReadLabelsErrors(t *testing.T) {
	cases := []struct {
		name, text   string
		line, column int
		err          error
	}{
		{"empty", "", 1, 0, ErrEmpty},
		{"only blank lines", "\n\n", 1, 0, ErrEmpty},
		{"blank line inside", "a\nb\n\nc\n", 3, 0, ErrBlankLabel},
		{"empty ID", "a\n\tsym\n", 2, 1, ErrBlankLabel},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ReadLabels(bg, strings.NewReader(c.text), "l.tsv", nil)
			wantParseError(t, err, "l.tsv", c.line, c.column, c.err)
		})
	}
}

func TestWriteLabelsRoundTrip(t *testing.T) {
	for _, c := range []struct{ ids, symbols []string }{
		{[]string{"a", "b"}, nil},
		{[]string{"a", "b"}, []string{"a", "b"}},
		{[]string{"G1", "G2"}, []string{"CD3E", "G2"}},
	} {
		var b bytes.Buffer
		if err := WriteLabels(&b, c.ids, c.symbols); err != nil {
			t.Fatal(err)
		}
		l, err := ReadLabels(bg, &b, "w", nil)
		if err != nil {
			t.Fatal(err)
		}
		want := c.symbols
		if want == nil {
			want = c.ids
		}
		if !reflect.DeepEqual(l.IDs, c.ids) || !reflect.DeepEqual(l.Symbols, want) {
			t.Errorf("read back %q %q, want %q %q", l.IDs, l.Symbols, c.ids, want)
		}
	}
	if err := WriteLabels(&bytes.Buffer{}, []string{"a\tb"}, nil); !errors.Is(err, ErrBadLabel) {
		t.Errorf("tab in label: %v", err)
	}
	if err := WriteLabels(&bytes.Buffer{}, []string{"a", ""}, nil); !errors.Is(err, ErrBlankLabel) {
		t.Errorf("empty label: %v", err)
	}
	if err := WriteLabels(&bytes.Buffer{}, []string{"a"}, []string{"x", "y"}); !errors.Is(err, ErrFieldCount) {
		t.Errorf("symbol count: %v", err)
	}
}
