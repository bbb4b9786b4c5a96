"""Fit and predict time of each scikit-learn counterpart of candor's
families, on the same bundled datasets and the same split as
`cargo bench --bench families` (fit on rows whose index is not a multiple
of 5, predict the others), best of 3, one thread. Models and preprocessing
are the reference grid's own (shared/peer/peer_grid.py).

    .peer-venv/bin/python scripts/bench-sklearn-families.py [PEER_DIR]
"""
import os, sys, time

peer = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..", "..", "shared", "peer")
sys.path.insert(0, os.path.abspath(peer))
import numpy as np  # noqa: E402
from threadpoolctl import threadpool_limits  # noqa: E402
import peer_grid  # noqa: E402

root = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "datasets")
models = ["logreg", "nbayes", "tree", "forest", "adaboost", "gboost", "knn", "svm", "mlp"]
sets = ["german_credit", "spambase", "magic_gamma"]
rows = {m: [] for m in models}
with threadpool_limits(1):
    for ds in sets:
        name, data, err = peer_grid.load_dataset(os.path.join(root, ds + ".csv"), 2)
        if data is None:
            sys.exit(f"{ds}: {err}")
        X, y, info = data
        idx = np.arange(len(y))
        tr, te = idx % 5 != 0, idx % 5 == 0
        Xtr = X.iloc[tr] if hasattr(X, "iloc") else X[tr]
        Xte = X.iloc[te] if hasattr(X, "iloc") else X[te]
        prep = peer_grid.make_prep(info)
        for m in models:
            fit, pred = float("inf"), float("inf")
            for _ in range(3):
                model = peer_grid.make_model(m, 0, prep)
                t = time.perf_counter()
                model.fit(Xtr, y[tr])
                fit = min(fit, time.perf_counter() - t)
                t = time.perf_counter()
                model.predict_proba(Xte)
                pred = min(pred, time.perf_counter() - t)
            rows[m].append((fit, pred))
print(f"{'model':10}" + "".join(f"{s:>26}" for s in sets))
for m in models:
    print(f"{m:10}" + "".join(f"   fit {f:7.3f} s, pred {p:6.3f}" for f, p in rows[m]))
