#!/usr/bin/env python3
"""The yardstick: what an analyst without a dedicated tool would write.

pandas' C CSV reader, a dense treatment-coded design, and a numpy IRLS loop for
the Poisson log-link model with a log-exposure offset, stopping on the same
rule as tallyfit (relative change in deviance below 1e-10). Prints the
coefficients as JSON so the benchmark can check both programs agree.

    python3 bench/yardstick.py FILE.csv
"""
import json
import sys

import numpy as np
import pandas as pd


def main(path):
    df = pd.read_csv(path)
    y = df["visits"].to_numpy(dtype=float)
    off = np.log(df["exposure"].to_numpy(dtype=float))
    cols = [np.ones(len(df))]
    for f in ["region", "agegrp", "sex"]:
        levels = sorted(df[f].unique(), key=lambda s: (len(s), s))
        for lv in levels[1:]:
            cols.append((df[f].to_numpy() == lv).astype(float))
    cols += [df["insured"].to_numpy(dtype=float), df["score"].to_numpy(dtype=float)]
    X = np.column_stack(cols)
    mu = y + 0.1
    eta = np.log(mu)
    dev_old = np.inf
    for it in range(50):
        w = mu
        z = eta - off + (y - mu) / mu
        XtW = X.T * w
        beta = np.linalg.solve(XtW @ X, XtW @ z)
        eta = off + X @ beta
        mu = np.exp(eta)
        dev = 2 * np.sum(np.where(y > 0, y * np.log(np.where(y > 0, y, 1) / mu), 0) - (y - mu))
        if abs(dev - dev_old) / (abs(dev) + 0.1) < 1e-10:
            break
        dev_old = dev
    cov = np.linalg.inv((X.T * mu) @ X)
    print(json.dumps({"iterations": it + 1, "deviance": float(dev), "beta": beta.tolist(), "se": np.sqrt(np.diag(cov)).tolist()}))


if __name__ == "__main__":
    main(sys.argv[1])
