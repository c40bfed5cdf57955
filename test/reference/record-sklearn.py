#!/usr/bin/python3
"""Records scikit-learn's Gaussian-mixture and adjusted-Rand results on the reference datasets.

Run from the repository root with Debian's Python (python3-sklearn):

    /usr/bin/python3 test/reference/record-sklearn.py

Reads test/reference/data/{faithful,iris,iris-species}.csv (exported from R by
export-datasets.R) and writes test/reference/sklearn-results.json. The tests read only that JSON;
they never need Python.

What is recorded, per dataset, covariance structure and k = 2, 3, from
GaussianMixture(n_init=10, tol=1e-6, max_iter=1000, reg_covar=1e-6, random_state=0):
total log-likelihood (score x n), BIC, AIC, weights, means, covariances (expanded to one full
d x d matrix per component, whatever the structure), the parameter count (_n_parameters()),
whether it converged and its iteration count. Then the BIC of k = 1..6 per structure with the
same settings and the winning k, and adjusted_rand_score on a few label pairs (their labels are
stored beside the value so the tests recompute from the same input).
"""

import csv
import hashlib
import json
import os
import platform
import sys

import numpy as np
import scipy
import sklearn
from sklearn.cluster import KMeans
from sklearn.metrics import adjusted_rand_score
from sklearn.mixture import GaussianMixture
from scipy.optimize import linear_sum_assignment

HERE = os.path.dirname(os.path.abspath(__file__))
DATA = os.path.join(HERE, "data")
OUTPUT = os.path.join(HERE, "sklearn-results.json")

STRUCTURES = ["full", "diag", "spherical", "tied"]
FIT_KS = [2, 3]
SWEEP_KS = list(range(1, 7))
SETTINGS = dict(n_init=10, tol=1e-6, max_iter=1000, reg_covar=1e-6, random_state=0)

DATASETS = {
    "faithful": {
        "file": "faithful.csv",
        "source": "R datasets::faithful (Azzalini & Bowman 1990), exported by export-datasets.R",
    },
    "iris": {
        "file": "iris.csv",
        "source": "R datasets::iris (Fisher 1936; Anderson 1935), four numeric columns, "
        "exported by export-datasets.R",
    },
}


def read_numeric_csv(path):
    with open(path, newline="") as handle:
        rows = list(csv.reader(handle))
    header, body = rows[0], rows[1:]
    return header, np.array([[float(cell) for cell in row] for row in body], dtype=np.float64)


def sha256(path):
    with open(path, "rb") as handle:
        return hashlib.sha256(handle.read()).hexdigest()


def full_covariances(model, d):
    """One full d x d matrix per component, whatever the structure."""
    k = model.n_components
    cov = model.covariances_
    kind = model.covariance_type
    if kind == "full":
        return [cov[j] for j in range(k)]
    if kind == "diag":
        return [np.diag(cov[j]) for j in range(k)]
    if kind == "spherical":
        return [np.eye(d) * cov[j] for j in range(k)]
    if kind == "tied":
        return [cov for _ in range(k)]
    raise ValueError(kind)


def smallest_variance_ratio(model, x):
    """Smallest component variance over the data's variance of the same feature.

    A value near reg_covar / variance means a component sits on repeated values (Old Faithful's
    waiting times are whole minutes): a degenerate optimum whose likelihood grows without bound
    as the regularisation shrinks, so which k "wins" then depends on which restarts found one.
    """
    feature_variance = x.var(axis=0)
    ratios = [np.diag(c) / feature_variance for c in full_covariances(model, x.shape[1])]
    return float(np.min(ratios))


def fit(x, k, structure):
    model = GaussianMixture(n_components=k, covariance_type=structure, **SETTINGS).fit(x)
    n, d = x.shape
    return model, {
        "k": k,
        "covariance": structure,
        "logLikelihood": float(model.score(x) * n),
        "meanLogLikelihood": float(model.score(x)),
        "bic": float(model.bic(x)),
        "aic": float(model.aic(x)),
        "parameters": int(model._n_parameters()),
        "converged": bool(model.converged_),
        "iterations": int(model.n_iter_),
        "lowerBound": float(model.lower_bound_),
        "smallestVarianceRatio": smallest_variance_ratio(model, x),
        "weights": model.weights_.tolist(),
        "means": model.means_.tolist(),
        "covariances": [c.tolist() for c in full_covariances(model, d)],
    }


def record_dataset(name, spec):
    path = os.path.join(DATA, spec["file"])
    header, x = read_numeric_csv(path)
    n, d = x.shape
    fits = []
    for structure in STRUCTURES:
        for k in FIT_KS:
            _, result = fit(x, k, structure)
            fits.append(result)
            print(f"{name} {structure} k={k}: logL={result['logLikelihood']:.6f}", file=sys.stderr)
    sweeps = []
    for structure in STRUCTURES:
        table = []
        for k in SWEEP_KS:
            model = GaussianMixture(n_components=k, covariance_type=structure, **SETTINGS).fit(x)
            table.append({"k": k, "bic": float(model.bic(x)),
                          "logLikelihood": float(model.score(x) * n),
                          "smallestVarianceRatio": smallest_variance_ratio(model, x)})
        winner = min(table, key=lambda row: row["bic"])["k"]
        sweeps.append({"covariance": structure, "table": table, "winnerK": winner})
        print(f"{name} {structure} sweep winner k={winner}", file=sys.stderr)
    return {
        "file": f"data/{spec['file']}",
        "sha256": sha256(path),
        "source": spec["source"],
        "columns": header,
        "n": n,
        "d": d,
        "fits": fits,
        "bicSweep": {"ks": SWEEP_KS, "structures": sweeps},
    }


def ari_cases():
    cases = []

    def add(name, a, b):
        a = [int(v) for v in a]
        b = [int(v) for v in b]
        cases.append({"name": name, "a": a, "b": b, "ari": float(adjusted_rand_score(a, b))})

    # Small hand-made pairs.
    add("identical", [0, 0, 1, 1, 2, 2], [0, 0, 1, 1, 2, 2])
    add("renamed", [0, 0, 1, 1, 2, 2], [2, 2, 0, 0, 1, 1])
    add("one moved", [0, 0, 0, 1, 1, 1], [0, 0, 1, 1, 1, 1])
    add("split", [0, 0, 0, 0, 1, 1, 1, 1], [0, 0, 1, 1, 2, 2, 3, 3])
    add("crossed", [0, 0, 1, 1], [0, 1, 0, 1])
    add("unequal sizes", [0, 0, 0, 0, 0, 1, 1, 2, 2, 2, 2], [1, 1, 1, 0, 0, 0, 2, 2, 2, 2, 0])

    # Random pairs from a fixed seed: near-zero expected ARI, differing numbers of classes.
    rng = np.random.RandomState(0)
    for n, ka, kb in [(50, 3, 3), (200, 4, 6), (1000, 5, 2), (37, 7, 7)]:
        add(f"random n={n} {ka}x{kb}", rng.randint(0, ka, size=n), rng.randint(0, kb, size=n))
    # A correlated random pair: b copies a, then 30% of it is re-drawn.
    a = rng.randint(0, 4, size=300)
    b = a.copy()
    redraw = rng.rand(300) < 0.3
    b[redraw] = rng.randint(0, 4, size=int(redraw.sum()))
    add("random n=300 partly re-drawn", a, b)

    # Iris species against a k-means labelling of the four measurements.
    _, x = read_numeric_csv(os.path.join(DATA, "iris.csv"))
    with open(os.path.join(DATA, "iris-species.csv"), newline="") as handle:
        species = [row[0] for row in list(csv.reader(handle))[1:]]
    names = sorted(set(species))
    species_codes = [names.index(s) for s in species]
    kmeans = KMeans(n_clusters=3, n_init=10, random_state=0).fit(x)
    add("iris species vs k-means (k=3, n_init=10, random_state=0)", species_codes, kmeans.labels_)
    # And against the most probable component of the full-covariance k = 3 mixture fitted above.
    mixture = GaussianMixture(n_components=3, covariance_type="full", **SETTINGS).fit(x)
    add("iris species vs GaussianMixture full k=3", species_codes, mixture.predict(x))
    return cases


def assignment_cases():
    """scipy's linear_sum_assignment (the solver scikit-learn itself depends on) on seeded
    random cost matrices, square and rectangular, larger than brute force reaches."""
    cases = []
    rng = np.random.RandomState(1)
    for rows, cols in [(8, 8), (10, 10), (5, 9), (9, 4), (12, 12), (3, 11)]:
        cost = rng.rand(rows, cols) * 100
        row_index, column_index = linear_sum_assignment(cost)
        cases.append({
            "rows": rows,
            "cols": cols,
            "cost": cost.tolist(),
            "pairs": [[int(r), int(c)] for r, c in zip(row_index, column_index)],
            "totalCost": float(cost[row_index, column_index].sum()),
        })
    return cases


def main():
    result = {
        "generatedBy": "test/reference/record-sklearn.py",
        "versions": {
            "python": platform.python_version(),
            "sklearn": sklearn.__version__,
            "numpy": np.__version__,
            "scipy": scipy.__version__,
        },
        "settings": {**SETTINGS, "fitKs": FIT_KS, "structures": STRUCTURES},
        "datasets": {name: record_dataset(name, spec) for name, spec in DATASETS.items()},
        "adjustedRand": ari_cases(),
        "linearSumAssignment": assignment_cases(),
    }
    with open(OUTPUT, "w") as handle:
        json.dump(result, handle, indent=1)
        handle.write("\n")
    print(f"wrote {OUTPUT}", file=sys.stderr)


if __name__ == "__main__":
    main()
