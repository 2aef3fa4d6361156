#!/usr/bin/python3
"""Golden values for cluster/mixture's Gaussian mixture with one shared covariance, from Debian's
python3-sklearn (sklearn.mixture.GaussianMixture, covariance_type="tied").

Data: the iris measurements (Fisher 1936) in testdata/iris.csv, the copy python3-sklearn ships.
Fits: k = 1, and k = 3 run by EM from the species as memberships (the first M step done here, as
cluster/mixture's FitTiedGaussianFrom does it, and handed to scikit-learn as its start), with a
tolerance tight enough that both stop at the same optimum.

Run from the repository root:  /usr/bin/python3 testdata/mixture/make_golden_gmm.py
Writes testdata/mixture/gmm.json.
"""
import json

import numpy as np
import sklearn
from sklearn.mixture import GaussianMixture

data = np.loadtxt("testdata/iris.csv", delimiter=",", skiprows=1)
x, y = data[:, :4], data[:, 4].astype(int)
n, d = x.shape
reg = 1e-6
out = {"source": f"scikit-learn {sklearn.__version__}, numpy {np.__version__}", "fits": []}
for k in (1, 3):
    resp = np.zeros((n, k))
    resp[np.arange(n), y if k == 3 else 0] = 1
    nk = resp.sum(0)
    means = resp.T @ x / nk[:, None]
    cov = (x.T @ x - (nk[:, None] * means).T @ means) / n + reg * np.eye(d)
    gm = GaussianMixture(n_components=k, covariance_type="tied", reg_covar=reg, tol=1e-14, max_iter=100000,
                         weights_init=nk / n, means_init=means, precisions_init=np.linalg.inv(cov))
    gm.fit(x)
    out["fits"].append({"k": k, "weights": gm.weights_.tolist(), "means": gm.means_.tolist(),
                        "covariance": gm.covariances_.tolist(), "loglik": float(gm.score(x) * n),
                        "bic": float(gm.bic(x)), "aic": float(gm.aic(x)), "labels": gm.predict(x).tolist(),
                        "converged": bool(gm.converged_)})
with open("testdata/mixture/gmm.json", "w") as f:
    json.dump(out, f, indent=1)
