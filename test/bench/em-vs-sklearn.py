"""scikit-learn side of test/bench/em-vs-sklearn.ts and test/bench/sweep-vs-sklearn.ts.

Reads the float64 matrix the TypeScript side wrote and fits scikit-learn's GaussianMixture
(Debian's python3-sklearn) with the same settings; prints one JSON object on stdout.

  python3 em-vs-sklearn.py fit FILE ROWS COLS K COVARIANCE INIT MAX_ITER TOL
  python3 em-vs-sklearn.py sweep FILE ROWS COLS KMAX INIT MAX_ITER TOL
"""
import json
import sys
import time
import warnings

import numpy as np
from sklearn.exceptions import ConvergenceWarning
from sklearn.mixture import GaussianMixture
from threadpoolctl import threadpool_info

warnings.filterwarnings("ignore", category=ConvergenceWarning)

INIT = {"kmeans": "kmeans", "kmeans++": "k-means++", "random": "random_from_data"}


def load(path, rows, cols):
    return np.fromfile(path, dtype="<f8").reshape(int(rows), int(cols))


def fit_once(X, k, covariance, init, max_iter, tol):
    model = GaussianMixture(k, covariance_type=covariance, init_params=INIT[init], max_iter=max_iter,
                            tol=tol, n_init=1, reg_covar=1e-6, random_state=0)
    start = time.perf_counter()
    model.fit(X)
    seconds = time.perf_counter() - start
    return model, seconds


def kernels():
    return [{"api": info.get("internal_api"), "threads": info.get("num_threads"),
             "architecture": info.get("architecture"), "version": info.get("version")} for info in threadpool_info()]


def main():
    mode = sys.argv[1]
    if mode == "fit":
        _, _, path, rows, cols, k, covariance, init, max_iter, tol = sys.argv
        X = load(path, rows, cols)
        model, seconds = fit_once(X, int(k), covariance, init, int(max_iter), float(tol))
        # Init plus one iteration, to split the time into init and per-iteration parts.
        _, one_iteration = fit_once(X, int(k), covariance, init, 1, float(tol))
        print(json.dumps({"seconds": seconds, "oneIterationSeconds": one_iteration, "iterations": int(model.n_iter_),
                          "logLikelihood": float(model.score(X) * X.shape[0]), "kernels": kernels()}))
    elif mode == "sweep":
        _, _, path, rows, cols, kmax, init, max_iter, tol = sys.argv
        X = load(path, rows, cols)
        cells = []
        start = time.perf_counter()
        for covariance in ["full", "diag", "spherical", "tied"]:
            for k in range(1, int(kmax) + 1):
                model, seconds = fit_once(X, k, covariance, init, int(max_iter), float(tol))
                cells.append({"k": k, "covariance": covariance, "seconds": seconds, "iterations": int(model.n_iter_),
                              "bic": float(model.bic(X))})
        total = time.perf_counter() - start
        print(json.dumps({"seconds": total, "cells": cells, "kernels": kernels()}))
    else:
        raise SystemExit(f"unknown mode {mode}")


main()
