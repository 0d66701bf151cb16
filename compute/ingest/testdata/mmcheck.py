"""Matrix Market cross-checks against scipy.io, run by scipy_test.go.

    mmcheck.py write DIR   writes random sparse matrices with scipy.io.mmwrite
                           (DIR/NAME.mtx) and, for each, and for any other .mtx file
                           already in DIR, the matrix as scipy.io.mmread reads it,
                           dense, float64 little-endian (DIR/NAME.f64) with its shape
                           (DIR/NAME.shape: "rows cols")
    mmcheck.py check DIR   reads every DIR/NAME.mtx written by Lodestone with
                           scipy.io.mmread and compares it with DIR/NAME.f32 (dense
                           float32 little-endian, shape in DIR/NAME.shape); prints
                           "ok NAME" or "FAIL NAME: why" per matrix
"""
import os
import sys

import numpy as np
import scipy
import scipy.io
import scipy.sparse


def dense(d, name):
    back = scipy.io.mmread(os.path.join(d, name + ".mtx"))
    np.ascontiguousarray(back.toarray(), dtype="<f8").tofile(os.path.join(d, name + ".f64"))
    with open(os.path.join(d, name + ".shape"), "w") as f:
        f.write("%d %d\n" % back.shape)
    return back


def write(d):
    given = [fn[:-4] for fn in os.listdir(d) if fn.endswith(".mtx")]
    for name in given:
        dense(d, name)
    rng = np.random.default_rng(20240611)
    cases = []
    # Integer counts, entries in random order (COO as scipy.sparse.random makes it).
    a = scipy.sparse.random(300, 200, density=0.05, format="coo", random_state=rng,
                            data_rvs=lambda n: rng.integers(1, 1000, n)).astype(np.int64)
    cases.append(("int_coo", a, "integer"))
    # The same grouped by row, and grouped by column.
    cases.append(("int_csr", a.tocsr(), "integer"))
    cases.append(("int_csc", a.tocsc(), "integer"))
    # Negative integers and empty rows and columns.
    b = scipy.sparse.random(50, 80, density=0.1, format="coo", random_state=rng,
                            data_rvs=lambda n: rng.integers(-5000, 5000, n)).astype(np.int64)
    b = b.tolil()
    b[7, :] = 0
    b[:, 11] = 0
    cases.append(("int_negative", b.tocoo(), "integer"))
    # Reals spanning many magnitudes, written with 16 significant digits.
    c = scipy.sparse.random(150, 250, density=0.08, format="coo", random_state=rng,
                            data_rvs=lambda n: rng.standard_normal(n) * 10.0 ** rng.uniform(-30, 30, n))
    cases.append(("real_wide", c, "real"))
    # The same made non-negative, as counts or normalised values are.
    cases.append(("real_wide_positive", abs(c), "real"))
    # float32 data, which mmwrite writes with 8 significant digits.
    e = scipy.sparse.random(120, 90, density=0.2, format="coo", random_state=rng, dtype=np.float32)
    cases.append(("real_float32", e, "real"))
    for name, m, field in cases:
        path = os.path.join(d, name + ".mtx")
        scipy.io.mmwrite(path, m, field=field, symmetry="general")
        back = dense(d, name)
        ref = m.toarray().astype(np.float64)
        # mmwrite keeps 16 significant digits of float64 data, 8 of float32.
        rtol = 1e-7 if m.dtype == np.float32 else 1e-15
        if not np.allclose(back.toarray(), ref, rtol=rtol, atol=0):
            print("FAIL %s: scipy does not read back what it wrote" % name)
    print("scipy", scipy.__version__)


def check(d):
    for fn in sorted(os.listdir(d)):
        if not fn.endswith(".mtx"):
            continue
        name = fn[:-4]
        with open(os.path.join(d, name + ".shape")) as f:
            rows, cols = map(int, f.read().split())
        want = np.fromfile(os.path.join(d, name + ".f32"), dtype="<f4").reshape(rows, cols)
        with open(os.path.join(d, fn)) as f:
            header = f.readline().split()
        got = scipy.io.mmread(os.path.join(d, fn))
        if got.shape != (rows, cols):
            print("FAIL %s: shape %s, want %s" % (name, got.shape, (rows, cols)))
            continue
        dense = got.toarray()
        # Lodestone holds float32 values: compare after rounding scipy's
        # float64 reading to float32, entry by entry, exactly.
        bad = np.argwhere(dense.astype(np.float32) != want)
        if len(bad):
            i, j = bad[0]
            print("FAIL %s: %d entries differ, first (%d, %d): scipy %r, Lodestone %r"
                  % (name, len(bad), i, j, dense[i, j], want[i, j]))
            continue
        integral = bool(np.all(want == np.trunc(want)))
        field = "integer" if integral else "real"
        if header[3].lower() != field:
            print("FAIL %s: field %s, want %s" % (name, header[3], field))
            continue
        print("ok %s" % name)


if __name__ == "__main__":
    {"write": write, "check": check}[sys.argv[1]](sys.argv[2])
