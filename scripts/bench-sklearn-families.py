"""Fit and predict time of each scikit-learn counterpart of candor's
families, on the same bundled datasets and the same split as
`cargo bench --bench families` (fit on rows whose index is not a multiple
of 5, predict the others), best of 3, one thread. Models and preprocessing
are those of scripts/sklearn_reference.py.

    .sk-venv/bin/python scripts/bench-sklearn-families.py
"""
import os
import sys
import time

import numpy as np
from threadpoolctl import threadpool_limits

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import sklearn_reference as ref  # noqa: E402

root = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "datasets")
sets = ["german_credit", "spambase", "magic_gamma"]
rows = {m: [] for m in ref.FAMILIES}
with threadpool_limits(1):
    for ds in sets:
        path = os.path.join(root, ds + ".csv")
        X, y = ref.load(path, "target", None)
        idx = np.arange(len(y))
        tr, te = idx % 5 != 0, idx % 5 == 0
        for m in ref.FAMILIES:
            fit, pred = float("inf"), float("inf")
            for _ in range(3):
                t = time.perf_counter()
                model = ref.fit(m, X[tr], y[tr], 0)
                fit = min(fit, time.perf_counter() - t)
                t = time.perf_counter()
                model.predict_proba(X[te])
                pred = min(pred, time.perf_counter() - t)
            rows[m].append((fit, pred))
print(f"{'family':18}" + "".join(f"{s:>26}" for s in sets))
for m in ref.FAMILIES:
    print(f"{m:18}" + "".join(f"   fit {f:7.3f} s, pred {p:6.3f}" for f, p in rows[m]))
