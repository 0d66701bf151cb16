#!/usr/bin/python3
"""Writes the reference t-SNE layout of the digits data for digits_test.go.

Run once with Debian's python3-sklearn:
    /usr/bin/python3 testdata/digits_reference.py > testdata/digits_reference.txt

scikit-learn's Barnes-Hut t-SNE with perplexity 30 and its defaults otherwise
(init="pca", learning_rate="auto", 1000 iterations), random_state 0, on
sklearn.datasets.load_digits().data (1797 x 64). The header records the
library versions and the KL divergence scikit-learn reports for its own
(Barnes-Hut) affinities; the rows are the layout, one point per line.
"""
import sys

import numpy
import sklearn
from sklearn.datasets import load_digits
from sklearn.manifold import TSNE

x = load_digits().data
tsne = TSNE(n_components=2, perplexity=30.0, method="barnes_hut", random_state=0)
y = tsne.fit_transform(x)
out = sys.stdout
out.write("# script: testdata/digits_reference.py\n")
out.write("# sklearn %s numpy %s\n" % (sklearn.__version__, numpy.__version__))
out.write("# kl_divergence_ %.10g\n" % tsne.kl_divergence_)
out.write("# n_iter_ %d\n" % tsne.n_iter_)
for row in y:
    out.write("%.9g %.9g\n" % (row[0], row[1]))
