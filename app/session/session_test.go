package session

import (
	"archive/zip"
	"bytes"
	"encoding/binary"
	"errors"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

func sample() *Session {
	n := 5
	s := &Session{
		Program:  "test",
		Inputs:   []Input{{Path: "/data/counts.mtx", Size: 10, SHA256: strings.Repeat("ab", 32)}},
		Settings: Settings{MinGenes: 200, MinCells: 3, Target: 1e4, Genes: 2000, Components: 50, Perplexity: 30, Metric: "euclidean", Init: "pca", Seed: 1},
		CellIDs:  []string{"c1", "c2", "c,3", "c\"4", "c5"},
		Columns: []Column{
			{Name: "state", Kind: "categorical", Levels: []string{"a", "b"}, Codes: []int32{0, 1, -1, 0, 1}},
			{Name: "score", Kind: "continuous", Values: []float64{0.5, math.NaN(), 2, -1, 1e-300}},
		},
		Layout:     []float32{1, 2, 3, 4, 5, 6, 7, 8, float32(math.Copysign(0, -1)), 1e-30},
		Initial:    make([]float32, 2*n),
		Attraction: Attraction(math.Inf(1)),
		Tail:       0.5,
		History: []Step{{Kind: "fresh", Attraction: 1, Iterations: 750, Done: 750, Setting: 30},
			{Kind: "warm", Attraction: 1, Iterations: 500, Done: 200, Setting: 30, Tail: 0.5},
			{Kind: "spectral", Attraction: Attraction(math.Inf(1)), Iterations: 15, Done: 15, Setting: 30, Tail: 0.5}},
		Groups:    []Group{{Name: `<odd & "named">`, Colour: Colour{R: 1, G: 2, B: 3}, Members: []uint32{0, 3, 4}}},
		Paint:     Paint{Source: "column", Name: "state", Hidden: []bool{false, true, false}},
		View:      View{CenterX: 1.5, CenterY: -2, Scale: 30, Width: 800, Height: 600, Pinned: true},
		PointSize: 2, Opacity: 0.8,
	}
	return s
}

func encode(t *testing.T, s *Session) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := Encode(&b, s); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// equalBits compares float slices bit for bit (NaN and −0 included).
func equalBits32(a, b []float32) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float32bits(a[i]) != math.Float32bits(b[i]) {
			return false
		}
	}
	return true
}

func TestRoundTripKeepsEverything(t *testing.T) {
	s := sample()
	path := filepath.Join(t.TempDir(), "map"+Extension)
	if err := Write(path, s); err != nil {
		t.Fatal(err)
	}
	got, err := Read(path)
	if err != nil {
		t.Fatal(err)
	}
	if !equalBits32(got.Layout, s.Layout) || !equalBits32(got.Initial, s.Initial) {
		t.Fatal("layouts differ")
	}
	if !math.IsNaN(got.Columns[1].Values[1]) || got.Columns[1].Values[4] != 1e-300 {
		t.Fatalf("continuous column %v", got.Columns[1].Values)
	}
	// Compare the rest with the NaN column set aside.
	got.Columns[1].Values, s.Columns[1].Values = nil, nil
	if !reflect.DeepEqual(got, s) {
		t.Fatalf("round trip differs:\n got %+v\nwant %+v", got, s)
	}
}

func TestBadFilesGiveClearErrors(t *testing.T) {
	good := encode(t, sample())
	cases := map[string]struct {
		data []byte
		want error
	}{
		"empty":          {nil, ErrNotSession},
		"truncated":      {good[:len(good)/2], ErrNotSession},
		"text":           {[]byte("hello"), ErrNotSession},
		"version":        {rewrite(t, good, "manifest.json", func(b []byte) []byte { return bytes.Replace(b, []byte(`"version": 1`), []byte(`"version": 99`), 1) }), ErrVersion},
		"format":         {rewrite(t, good, "manifest.json", func(b []byte) []byte { return bytes.Replace(b, []byte(FormatName), []byte("other"), 1) }), ErrNotSession},
		"no layout":      {rewrite(t, good, "layout.f32", nil), ErrMissing},
		"short layout":   {rewrite(t, good, "layout.f32", func(b []byte) []byte { return b[:len(b)-4] }), ErrCorrupt},
		"no manifest":    {rewrite(t, good, "manifest.json", nil), ErrMissing},
		"bad json":       {rewrite(t, good, "manifest.json", func(b []byte) []byte { return b[:len(b)/2] }), ErrCorrupt},
		"bad tail":       {rewrite(t, good, "manifest.json", func(b []byte) []byte { return bytes.Replace(b, []byte(`"tail": 0.5`), []byte(`"tail": 50`), 1) }), ErrCorrupt},
		"bad code":       {rewrite(t, good, "columns/0.i32", func(b []byte) []byte { c := append([]byte(nil), b...); c[0] = 9; return c }), ErrCorrupt},
		"unsorted group": {rewrite(t, good, "groups/0.u32", func(b []byte) []byte { c := append([]byte(nil), b...); c[0], c[4] = 4, 0; return c }), ErrCorrupt},
	}
	nan := func(all bool) func([]byte) []byte {
		return func(b []byte) []byte {
			c := append([]byte(nil), b...)
			for i := 0; i < len(c); i += 4 {
				if all || i == 12 { // cell 2's y
					binary.LittleEndian.PutUint32(c[i:], math.Float32bits(float32(math.NaN())))
				}
			}
			return c
		}
	}
	messages := map[string]struct {
		data []byte
		msg  string
	}{
		"NaN map":         {rewrite(t, good, "layout.f32", nan(true)), "the layout has no point with finite coordinates (all 5 are NaN or infinite)"},
		"one NaN point":   {rewrite(t, good, "layout.f32", nan(false)), `the layout has 1 of 5 points whose coordinates are NaN or infinite, the first cell "c2" (number 2)`},
		"NaN start":       {rewrite(t, good, "initial.f32", nan(false)), "the initial layout has 1 of 5 points"},
		"duplicate parts": {duplicatePart(t, good, "layout.f32"), "the archive holds two parts named layout.f32"},
	}
	for name, c := range messages {
		cases[name] = struct {
			data []byte
			want error
		}{c.data, ErrCorrupt}
		_, err := Decode(bytes.NewReader(c.data), int64(len(c.data)))
		if err == nil || !strings.Contains(err.Error(), c.msg) {
			t.Errorf("%s: error %v, want %q", name, err, c.msg)
		}
	}
	for name, c := range cases {
		_, err := Decode(bytes.NewReader(c.data), int64(len(c.data)))
		if !errors.Is(err, c.want) {
			t.Errorf("%s: error %v, want %v", name, err, c.want)
		}
	}
	// A map with a NaN point is not written either.
	bad := sample()
	bad.Layout[3] = float32(math.NaN())
	if err := Write(filepath.Join(t.TempDir(), "x"+Extension), bad); !errors.Is(err, ErrCorrupt) {
		t.Errorf("writing a NaN map: %v", err)
	}
	// Read names the file.
	path := filepath.Join(t.TempDir(), "broken"+Extension)
	os.WriteFile(path, good[:100], 0o644)
	if _, err := Read(path); err == nil || !strings.Contains(err.Error(), path) {
		t.Fatalf("Read error %v does not name the file", err)
	}
}

// rewrite returns the archive with one part changed by f (or removed when f
// is nil).
func rewrite(t *testing.T, data []byte, part string, f func([]byte) []byte) []byte {
	t.Helper()
	z, err := zip.NewReader(bytes.NewReader(data), int64(len(data)))
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	w := zip.NewWriter(&out)
	for _, zf := range z.File {
		rc, _ := zf.Open()
		var b bytes.Buffer
		b.ReadFrom(rc)
		rc.Close()
		body := b.Bytes()
		if zf.Name == part {
			if f == nil {
				continue
			}
			body = f(body)
		}
		fw, _ := w.Create(zf.Name)
		fw.Write(body)
	}
	w.Close()
	return out.Bytes()
}

func TestWriteIsAtomicOnFailure(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "keep"+Extension)
	if err := Write(path, sample()); err != nil {
		t.Fatal(err)
	}
	before, _ := os.ReadFile(path)
	bad := sample()
	bad.Layout = bad.Layout[:3]
	if err := Write(path, bad); err == nil {
		t.Fatal("an inconsistent session was written")
	}
	after, _ := os.ReadFile(path)
	if !bytes.Equal(before, after) {
		t.Fatal("a failed save changed the file")
	}
	if es, _ := os.ReadDir(dir); len(es) != 1 {
		t.Fatalf("%d files in the folder after a failed save", len(es))
	}
}

func TestChangedInputs(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "in.txt")
	os.WriteFile(p, []byte("abc"), 0o644)
	in, err := HashFile(p)
	if err != nil {
		t.Fatal(err)
	}
	// SHA-256 of "abc" (FIPS 180-2, appendix B.1).
	if in.SHA256 != "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad" || in.Size != 3 {
		t.Fatalf("hash %+v", in)
	}
	s := &Session{Inputs: []Input{in}}
	if c := Changed(s); len(c) != 0 {
		t.Fatalf("unchanged input reported: %v", c)
	}
	os.WriteFile(p, []byte("abd"), 0o644)
	if c := Changed(s); len(c) != 1 {
		t.Fatalf("changed input not reported: %v", c)
	}
}

func FuzzDecode(f *testing.F) {
	var b bytes.Buffer
	Encode(&b, sample())
	f.Add(b.Bytes())
	f.Add([]byte("PK\x03\x04"))
	f.Fuzz(func(t *testing.T, data []byte) {
		s, err := Decode(bytes.NewReader(data), int64(len(data)))
		if err != nil {
			return
		}
		if err := s.Validate(); err != nil {
			t.Fatalf("Decode returned an invalid session: %v", err)
		}
	})
}

// duplicatePart returns the archive with a second part named part, holding
// other data, after the first.
func duplicatePart(t *testing.T, data []byte, part string) []byte {
	t.Helper()
	z, err := zip.NewReader(bytes.NewReader(data), int64(len(data)))
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	w := zip.NewWriter(&out)
	for _, zf := range z.File {
		rc, _ := zf.Open()
		var b bytes.Buffer
		b.ReadFrom(rc)
		rc.Close()
		fw, _ := w.Create(zf.Name)
		fw.Write(b.Bytes())
		if zf.Name == part {
			fw, _ := w.Create(zf.Name)
			fw.Write(make([]byte, b.Len()))
		}
	}
	w.Close()
	return out.Bytes()
}
