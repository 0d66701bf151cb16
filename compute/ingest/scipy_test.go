package ingest

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"lodestone/compute/sparse"
	"lodestone/internal/pyref"
)

// needScipy skips the test when scipy cannot be imported.
func needScipy(t *testing.T) {
	t.Helper()
	pyref.Require(t, "numpy, scipy.io, scipy.sparse")
}

func runMMCheck(t *testing.T, mode, dir string) string {
	t.Helper()
	out, err := exec.Command(pyref.Python, filepath.Join("testdata", "mmcheck.py"), mode, dir).CombinedOutput()
	if err != nil {
		t.Fatalf("mmcheck.py %s: %v\n%s", mode, err, out)
	}
	return string(out)
}

func TestMatrixMarketReadsScipyOutput(t *testing.T) {
	// Reference: scipy.io.mmwrite writes random sparse matrices (integer
	// and real, entries in random, row and column order); each must read
	// back equal, entry by entry, to what scipy.io.mmread reads from the
	// same file, rounded to float32; a matrix with a negative value must be
	// refused. The published example of NISTIR 5935 is checked the same
	// way, with and without its negative value.
	needScipy(t)
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "nist.mtx"), []byte(nistExample), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "nist_counts.mtx"), []byte(nistCounts), 0o644); err != nil {
		t.Fatal(err)
	}
	out := runMMCheck(t, "write", dir)
	if strings.Contains(out, "FAIL") {
		t.Fatalf("mmcheck.py write:\n%s", out)
	}
	t.Logf("mmcheck.py write: %s", strings.TrimSpace(out))
	names, _ := filepath.Glob(filepath.Join(dir, "*.mtx"))
	if len(names) < 9 {
		t.Fatalf("%d matrices written", len(names))
	}
	for _, path := range names {
		name := strings.TrimSuffix(path, ".mtx")
		var rows, cols int
		shape, err := os.ReadFile(name + ".shape")
		if err != nil {
			t.Fatal(err)
		}
		fmt.Sscan(string(shape), &rows, &cols)
		raw, err := os.ReadFile(name + ".f64")
		if err != nil {
			t.Fatal(err)
		}
		if len(raw) != 8*rows*cols {
			t.Fatalf("%s: %d bytes for %d×%d", name, len(raw), rows, cols)
		}
		negative := false
		for k := 0; k < len(raw); k += 8 {
			negative = negative || math.Float64frombits(binary.LittleEndian.Uint64(raw[k:])) < 0
		}
		for _, tr := range []bool{false, true} {
			f, err := os.Open(path)
			if err != nil {
				t.Fatal(err)
			}
			m, err := ReadMatrixMarket(bg, f, path, MatrixOptions{Transpose: func(MatrixHeader) (bool, error) { return tr, nil }})
			f.Close()
			if negative {
				// Counts are never negative: such a matrix is refused.
				if !errors.Is(err, ErrNegative) {
					t.Errorf("%s: error %v, want %v", filepath.Base(path), err, ErrNegative)
				}
				continue
			}
			if err != nil {
				t.Fatal(err)
			}
			if err := m.Validate(); err != nil {
				t.Fatal(err)
			}
			var nnz int64
			for i := 0; i < rows; i++ {
				for j := 0; j < cols; j++ {
					want := float32(math.Float64frombits(binary.LittleEndian.Uint64(raw[8*(i*cols+j):])))
					var got float32
					if tr {
						got = m.At(j, i)
					} else {
						got = m.At(i, j)
					}
					if got != want {
						t.Fatalf("%s (transpose %v): (%d,%d) = %v, scipy reads %v", filepath.Base(path), tr, i, j, got, want)
					}
					if want != 0 {
						nnz++
					}
				}
			}
			if m.NNZ() != nnz {
				t.Errorf("%s: %d stored entries, %d non-zeros", filepath.Base(path), m.NNZ(), nnz)
			}
		}
	}
}

func TestMatrixMarketWrittenForScipy(t *testing.T) {
	// Reference: scipy.io.mmread reads what WriteMatrixMarket writes; the
	// comparison, entry by entry and exact after rounding scipy's float64
	// to float32, runs in Python and prints a verdict per matrix.
	needScipy(t)
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(13, 14))
	type kind struct {
		name  string
		value func() float32
	}
	kinds := []kind{
		{"counts", func() float32 { return float32(1 + rng.IntN(500)) }},
		{"signed", func() float32 { return float32(rng.IntN(20001) - 10000) }},
		{"real", func() float32 { return float32(rng.NormFloat64() * math.Pow(10, float64(rng.IntN(60)-30))) }},
		{"tiny", func() float32 { return math.Float32frombits(uint32(rng.IntN(1 << 23))) }}, // subnormals
		{"halves", func() float32 { return float32(rng.IntN(100)) + 0.5 }},
	}
	for _, k := range kinds {
		rows, cols := 20+rng.IntN(100), 20+rng.IntN(100)
		m := &sparse.CSR{Rows: rows, Cols: cols, RowPtr: make([]int64, rows+1)}
		d := make([]float32, rows*cols)
		for i := 0; i < rows; i++ {
			for j := 0; j < cols; j++ {
				if rng.Float64() < 0.1 {
					v := k.value()
					if v == 0 {
						continue
					}
					m.ColIdx = append(m.ColIdx, int32(j))
					m.Val = append(m.Val, v)
					d[i*cols+j] = v
				}
			}
			m.RowPtr[i+1] = int64(len(m.ColIdx))
		}
		f, err := os.Create(filepath.Join(dir, k.name+".mtx"))
		if err != nil {
			t.Fatal(err)
		}
		w := bufio.NewWriter(f)
		if err := WriteMatrixMarket(w, sparse.FromCSR(m)); err != nil {
			t.Fatal(err)
		}
		if err := w.Flush(); err != nil {
			t.Fatal(err)
		}
		f.Close()
		raw := make([]byte, 4*len(d))
		for i, v := range d {
			binary.LittleEndian.PutUint32(raw[4*i:], math.Float32bits(v))
		}
		os.WriteFile(filepath.Join(dir, k.name+".f32"), raw, 0o644)
		os.WriteFile(filepath.Join(dir, k.name+".shape"), []byte(fmt.Sprintf("%d %d\n", rows, cols)), 0o644)
	}
	out := runMMCheck(t, "check", dir)
	for _, k := range kinds {
		if !strings.Contains(out, "ok "+k.name+"\n") {
			t.Errorf("scipy verdict on %s:\n%s", k.name, out)
		}
	}
	if strings.Contains(out, "FAIL") {
		t.Errorf("mmcheck.py check:\n%s", out)
	}
}
