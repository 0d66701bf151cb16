package session

import (
	"archive/zip"
	"bufio"
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	"lodestone/internal/atomicfile"
)

// manifest is the JSON document at manifest.json.
type manifest struct {
	Format  string           `json:"format"`
	Version int              `json:"version"`
	Cells   int              `json:"cells"`
	Arrays  map[string]array `json:"arrays"`
	*Session
}

// array describes one binary part.
type array struct {
	Type   string `json:"type"`   // "float32le", "float64le", "int32le", "uint32le" or "text"
	Length int    `json:"length"` // number of elements (lines for text)
}

// Write saves s to path atomically: a temporary file in the same folder,
// renamed over path only when complete.
func Write(path string, s *Session) error {
	if err := s.Validate(); err != nil {
		return fmt.Errorf("session %s: %w", path, err)
	}
	return atomicfile.Write(path, func(w io.Writer) error { return Encode(w, s) })
}

// Encode writes s as a session file to w.
func Encode(w io.Writer, s *Session) error {
	z := zip.NewWriter(w)
	m := manifest{Format: FormatName, Version: Version, Cells: s.Cells(), Arrays: map[string]array{}, Session: s}
	put := func(name, typ string, length int, data []byte) error {
		m.Arrays[name] = array{Type: typ, Length: length}
		f, err := z.CreateHeader(&zip.FileHeader{Name: name, Method: zip.Deflate})
		if err != nil {
			return err
		}
		_, err = f.Write(data)
		return err
	}
	ids := strings.Join(s.CellIDs, "\n")
	if err := put("cells.txt", "text", len(s.CellIDs), []byte(ids)); err != nil {
		return err
	}
	if err := put("layout.f32", "float32le", len(s.Layout), float32Bytes(s.Layout)); err != nil {
		return err
	}
	if err := put("initial.f32", "float32le", len(s.Initial), float32Bytes(s.Initial)); err != nil {
		return err
	}
	for k, c := range s.Columns {
		var err error
		if c.Kind == "categorical" {
			err = put(fmt.Sprintf("columns/%d.i32", k), "int32le", len(c.Codes), int32Bytes(c.Codes))
		} else {
			err = put(fmt.Sprintf("columns/%d.f64", k), "float64le", len(c.Values), float64Bytes(c.Values))
		}
		if err != nil {
			return err
		}
	}
	for k, g := range s.Groups {
		if err := put(fmt.Sprintf("groups/%d.u32", k), "uint32le", len(g.Members), uint32Bytes(g.Members)); err != nil {
			return err
		}
	}
	f, err := z.CreateHeader(&zip.FileHeader{Name: "manifest.json", Method: zip.Deflate})
	if err != nil {
		return err
	}
	enc := json.NewEncoder(f)
	enc.SetIndent("", "  ")
	if err := enc.Encode(m); err != nil {
		return err
	}
	return z.Close()
}

// Read opens the session file at path. Errors name the file and the part
// that is wrong, and wrap ErrNotSession, ErrVersion, ErrMissing or
// ErrCorrupt.
func Read(path string) (*Session, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, err
	}
	s, err := Decode(f, st.Size())
	if err != nil {
		return nil, fmt.Errorf("session %s: %w", path, err)
	}
	return s, nil
}

// maxPart bounds the size of one part when decompressed, so that a crafted
// file cannot exhaust memory: 4 GiB.
const maxPart = 4 << 30

// Decode reads a session file of the given size from r.
func Decode(r io.ReaderAt, size int64) (*Session, error) {
	z, err := zip.NewReader(r, size)
	if err != nil {
		return nil, fmt.Errorf("%w: not a ZIP archive (%v)", ErrNotSession, err)
	}
	files := map[string]*zip.File{}
	for _, f := range z.File {
		if _, dup := files[f.Name]; dup {
			return nil, fmt.Errorf("%w: the archive holds two parts named %s", ErrCorrupt, f.Name)
		}
		files[f.Name] = f
	}
	raw, err := readPart(files, "manifest.json", 64<<20)
	if err != nil {
		return nil, err
	}
	m := manifest{Session: &Session{}}
	if err := json.Unmarshal(raw, &m); err != nil {
		return nil, fmt.Errorf("%w: manifest.json: %v", ErrCorrupt, err)
	}
	if m.Format != FormatName {
		return nil, fmt.Errorf("%w: manifest format %q", ErrNotSession, m.Format)
	}
	if m.Version != Version {
		return nil, fmt.Errorf("%w: version %d (this program reads version %d)", ErrVersion, m.Version, Version)
	}
	s := m.Session
	get := func(name, typ string, width int) ([]byte, int, error) {
		a, ok := m.Arrays[name]
		if !ok {
			return nil, 0, fmt.Errorf("%w: the manifest lists no array %s", ErrMissing, name)
		}
		if a.Type != typ {
			return nil, 0, fmt.Errorf("%w: %s has type %q, want %q", ErrCorrupt, name, a.Type, typ)
		}
		if a.Length < 0 || width > 0 && int64(a.Length)*int64(width) > maxPart {
			return nil, 0, fmt.Errorf("%w: %s has length %d", ErrCorrupt, name, a.Length)
		}
		b, err := readPart(files, name, maxPart)
		if err != nil {
			return nil, 0, err
		}
		if width > 0 && len(b) != a.Length*width {
			return nil, 0, fmt.Errorf("%w: %s holds %d bytes, the manifest says %d values of %d bytes", ErrCorrupt, name, len(b), a.Length, width)
		}
		return b, a.Length, nil
	}
	b, nIDs, err := get("cells.txt", "text", 0)
	if err != nil {
		return nil, err
	}
	if nIDs > 0 {
		s.CellIDs = strings.Split(string(b), "\n")
	}
	if len(s.CellIDs) != nIDs || nIDs != m.Cells {
		return nil, fmt.Errorf("%w: cells.txt holds %d IDs, the manifest says %d", ErrCorrupt, len(s.CellIDs), m.Cells)
	}
	if b, _, err = get("layout.f32", "float32le", 4); err != nil {
		return nil, err
	}
	s.Layout = bytesFloat32(b)
	if b, _, err = get("initial.f32", "float32le", 4); err != nil {
		return nil, err
	}
	s.Initial = bytesFloat32(b)
	for k := range s.Columns {
		c := &s.Columns[k]
		if c.Kind == "categorical" {
			if b, _, err = get(fmt.Sprintf("columns/%d.i32", k), "int32le", 4); err != nil {
				return nil, err
			}
			c.Codes = bytesInt32(b)
		} else {
			if b, _, err = get(fmt.Sprintf("columns/%d.f64", k), "float64le", 8); err != nil {
				return nil, err
			}
			c.Values = bytesFloat64(b)
		}
	}
	for k := range s.Groups {
		if b, _, err = get(fmt.Sprintf("groups/%d.u32", k), "uint32le", 4); err != nil {
			return nil, err
		}
		s.Groups[k].Members = bytesUint32(b)
	}
	if err := s.Validate(); err != nil {
		return nil, err
	}
	return s, nil
}

func readPart(files map[string]*zip.File, name string, limit int64) ([]byte, error) {
	f, ok := files[name]
	if !ok {
		return nil, fmt.Errorf("%w: the archive has no %s", ErrMissing, name)
	}
	if f.UncompressedSize64 > uint64(limit) {
		return nil, fmt.Errorf("%w: %s is too large (%d bytes)", ErrCorrupt, name, f.UncompressedSize64)
	}
	rc, err := f.Open()
	if err != nil {
		return nil, fmt.Errorf("%w: %s: %v", ErrCorrupt, name, err)
	}
	defer rc.Close()
	var buf bytes.Buffer
	if _, err := io.Copy(&buf, io.LimitReader(rc, limit+1)); err != nil {
		return nil, fmt.Errorf("%w: %s: %v", ErrCorrupt, name, err)
	}
	if int64(buf.Len()) > limit {
		return nil, fmt.Errorf("%w: %s is too large", ErrCorrupt, name)
	}
	return buf.Bytes(), nil
}

func float32Bytes(v []float32) []byte {
	b := make([]byte, 4*len(v))
	for i, x := range v {
		binary.LittleEndian.PutUint32(b[4*i:], math.Float32bits(x))
	}
	return b
}

func bytesFloat32(b []byte) []float32 {
	v := make([]float32, len(b)/4)
	for i := range v {
		v[i] = math.Float32frombits(binary.LittleEndian.Uint32(b[4*i:]))
	}
	return v
}

func float64Bytes(v []float64) []byte {
	b := make([]byte, 8*len(v))
	for i, x := range v {
		binary.LittleEndian.PutUint64(b[8*i:], math.Float64bits(x))
	}
	return b
}

func bytesFloat64(b []byte) []float64 {
	v := make([]float64, len(b)/8)
	for i := range v {
		v[i] = math.Float64frombits(binary.LittleEndian.Uint64(b[8*i:]))
	}
	return v
}

func int32Bytes(v []int32) []byte {
	b := make([]byte, 4*len(v))
	for i, x := range v {
		binary.LittleEndian.PutUint32(b[4*i:], uint32(x))
	}
	return b
}

func bytesInt32(b []byte) []int32 {
	v := make([]int32, len(b)/4)
	for i := range v {
		v[i] = int32(binary.LittleEndian.Uint32(b[4*i:]))
	}
	return v
}

func uint32Bytes(v []uint32) []byte {
	b := make([]byte, 4*len(v))
	for i, x := range v {
		binary.LittleEndian.PutUint32(b[4*i:], x)
	}
	return b
}

func bytesUint32(b []byte) []uint32 {
	v := make([]uint32, len(b)/4)
	for i := range v {
		v[i] = binary.LittleEndian.Uint32(b[4*i:])
	}
	return v
}

// HashFile returns the size and SHA-256 of the file at path.
func HashFile(path string) (Input, error) {
	f, err := os.Open(path)
	if err != nil {
		return Input{}, err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, bufio.NewReaderSize(f, 1<<20))
	if err != nil {
		return Input{}, fmt.Errorf("reading %s: %w", path, err)
	}
	return Input{Path: path, Size: n, SHA256: hex.EncodeToString(h.Sum(nil))}, nil
}

// Changed lists the inputs of s that are missing or whose content differs
// from when the session was saved.
func Changed(s *Session) []string {
	var out []string
	for _, in := range s.Inputs {
		now, err := HashFile(in.Path)
		switch {
		case err != nil:
			out = append(out, in.Path+" (cannot be read: "+err.Error()+")")
		case now.Size != in.Size || now.SHA256 != in.SHA256:
			out = append(out, in.Path+" (its content changed)")
		}
	}
	return out
}
