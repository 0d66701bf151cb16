package prep

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"math"
	"os/exec"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/compute/sparse"
)

// referencePython is the interpreter with the reference libraries (Debian's
// python3-sklearn installs for it).
const referencePython = "/usr/bin/python3"

// irisReference holds the output of testdata/iris_pca.py.
type irisReference struct {
	SklearnVersion         string      `json:"sklearn_version"`
	Data                   [][]float64 `json:"data"`
	ExplainedVariance      []float64   `json:"explained_variance"`
	ExplainedVarianceRatio []float64   `json:"explained_variance_ratio"`
	SingularValues         []float64   `json:"singular_values"`
	Components             [][]float64 `json:"components"`
	Scores                 [][]float64 `json:"scores"`
}

// loadIrisReference runs testdata/iris_pca.py, or skips the test when
// scikit-learn is not available.
func loadIrisReference(t *testing.T) *irisReference {
	t.Helper()
	var stdout, stderr bytes.Buffer
	cmd := exec.Command(referencePython, "testdata/iris_pca.py")
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		var exit *exec.ExitError
		if errors.Is(err, exec.ErrNotFound) || (errors.As(err, &exit) && exit.ExitCode() == 3) || stdout.Len() == 0 {
			t.Skipf("skipping: the sklearn reference needs %s with scikit-learn (Debian package python3-sklearn): %v %s", referencePython, err, stderr.String())
		}
		t.Fatalf("testdata/iris_pca.py: %v\n%s", err, stderr.String())
	}
	var ref irisReference
	if err := json.Unmarshal(stdout.Bytes(), &ref); err != nil {
		t.Fatal(err)
	}
	return &ref
}

// Explained-variance ratios, singular values, components and scores of the
// iris data (Fisher 1936, as shipped with scikit-learn) against
// sklearn.decomposition.PCA, centred and unscaled. The data are stored as
// float32 here, which bounds the agreement to about 1e-7 relative; the
// ratios must agree to 1e-6.
func TestPCAIrisAgainstSklearn(t *testing.T) {
	ref := loadIrisReference(t)
	t.Logf("reference: scikit-learn %s", ref.SklearnVersion)
	n, g := len(ref.Data), len(ref.Data[0])
	tab := atlas.NewDense(n, g)
	sp := &sparse.CSR{Rows: n, Cols: g, RowPtr: make([]int64, n+1)}
	for i, row := range ref.Data {
		for j, v := range row {
			tab.Data[i*g+j] = float32(v)
			if v != 0 {
				sp.ColIdx = append(sp.ColIdx, int32(j))
				sp.Val = append(sp.Val, float32(v))
			}
		}
		sp.RowPtr[i+1] = int64(len(sp.ColIdx))
	}
	for _, k := range []int{2, 4} {
		dense, err := DensePCA(context.Background(), tab, PCAOptions{Components: k})
		if err != nil {
			t.Fatal(err)
		}
		sparseRes, err := RunPCA(context.Background(), sp, PCAOptions{Components: k})
		if err != nil {
			t.Fatal(err)
		}
		for name, res := range map[string]*PCA{"DensePCA": dense, "RunPCA": sparseRes} {
			for c := range k {
				if d := math.Abs(res.ExplainedVarianceRatio[c] - ref.ExplainedVarianceRatio[c]); d > 1e-6 {
					t.Errorf("%s k=%d: explained variance ratio %d = %.9f, sklearn %.9f", name, k, c+1, res.ExplainedVarianceRatio[c], ref.ExplainedVarianceRatio[c])
				}
				if rel := math.Abs(res.ExplainedVariance[c]-ref.ExplainedVariance[c]) / ref.ExplainedVariance[c]; rel > 1e-6 {
					t.Errorf("%s k=%d: explained variance %d = %.9f, sklearn %.9f", name, k, c+1, res.ExplainedVariance[c], ref.ExplainedVariance[c])
				}
				if rel := math.Abs(res.SingularValues[c]-ref.SingularValues[c]) / ref.SingularValues[c]; rel > 1e-6 {
					t.Errorf("%s k=%d: singular value %d = %.9f, sklearn %.9f", name, k, c+1, res.SingularValues[c], ref.SingularValues[c])
				}
				// sklearn fixes signs by another rule: compare up to sign.
				var dot float64
				for j := range g {
					dot += float64(res.Loadings.At(j, c)) * ref.Components[c][j]
				}
				sign := math.Copysign(1, dot)
				for j := range g {
					if d := math.Abs(float64(res.Loadings.At(j, c)) - sign*ref.Components[c][j]); d > 1e-5 {
						t.Errorf("%s k=%d: component %d entry %d = %.7f, sklearn %.7f", name, k, c+1, j, res.Loadings.At(j, c), sign*ref.Components[c][j])
					}
				}
				for i := range n {
					if d := math.Abs(float64(res.Scores.At(i, c)) - sign*ref.Scores[i][c]); d > 1e-5*ref.SingularValues[0] {
						t.Errorf("%s k=%d: score (%d, %d) = %.7f, sklearn %.7f", name, k, i, c+1, res.Scores.At(i, c), sign*ref.Scores[i][c])
					}
				}
			}
		}
	}
}
