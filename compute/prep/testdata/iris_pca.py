"""Reference principal component analysis of the iris data (Fisher 1936).

Run by TestPCAIrisAgainstSklearn with /usr/bin/python3. Loads the iris data
as shipped with scikit-learn (sklearn.datasets.load_iris), fits
sklearn.decomposition.PCA (centred, not scaled, exact LAPACK SVD) and prints
the data and the fitted values as JSON on standard output. Exits with status
3 when numpy or scikit-learn cannot be imported.
"""
import json
import sys

try:
    import sklearn
    from sklearn.datasets import load_iris
    from sklearn.decomposition import PCA
except ImportError as err:
    print("cannot import scikit-learn: %s" % err, file=sys.stderr)
    sys.exit(3)

X = load_iris().data
pca = PCA(n_components=4, svd_solver="full").fit(X)
json.dump(
    {
        "sklearn_version": sklearn.__version__,
        "data": X.tolist(),
        "explained_variance": pca.explained_variance_.tolist(),
        "explained_variance_ratio": pca.explained_variance_ratio_.tolist(),
        "singular_values": pca.singular_values_.tolist(),
        "components": pca.components_.tolist(),
        "scores": pca.transform(X).tolist(),
    },
    sys.stdout,
)
