"""candor's evaluation protocol written with scikit-learn, for speed and
agreement comparisons.

It follows the protocol README.md describes under "How candor evaluates",
for binary targets:

- stratified, shuffled outer folds (seeded);
- inside each outer training split, out-of-fold scores from M stratified
  inner folds (not shuffled), with preprocessing refitted on every
  training part;
- Platt scaling on the family's native score and isotonic regression on
  its probability, both fitted on those out-of-fold scores;
- one fit on the whole outer training split, which scores the test fold;
- ECE (equal-width bins, right-closed), Brier score, log loss and ROC AUC
  of the raw, Platt and isotonic forecasts on the test fold.

Each family is the scikit-learn model closest to candor's family of the
same kind, with candor's default parameters. The folds are scikit-learn's,
not candor's, so per-fold numbers differ by fold noise; means over folds
and datasets are comparable.

    python3 -m venv .sk-venv
    .sk-venv/bin/pip install scikit-learn==1.9.1 pandas numpy scipy joblib threadpoolctl
    .sk-venv/bin/python scripts/sklearn_reference.py datasets/spambase.csv datasets/magic_gamma.csv \
        --jobs 2 --out sklearn.json

Every cell (dataset, family, outer fold) runs on one thread; `--jobs` cells
run at once.
"""
import argparse
import json
import os
import platform
import sys
import time

import joblib
import numpy as np
import pandas as pd
import scipy
import sklearn
from scipy.optimize import minimize
from scipy.special import expit
from sklearn.compose import ColumnTransformer
from sklearn.ensemble import (AdaBoostClassifier, HistGradientBoostingClassifier,
                              RandomForestClassifier)
from sklearn.impute import SimpleImputer
from sklearn.isotonic import IsotonicRegression
from sklearn.linear_model import LogisticRegression
from sklearn.metrics import roc_auc_score
from sklearn.model_selection import StratifiedKFold
from sklearn.naive_bayes import GaussianNB
from sklearn.neighbors import KNeighborsClassifier
from sklearn.neural_network import MLPClassifier
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import OneHotEncoder, StandardScaler
from sklearn.svm import LinearSVC
from sklearn.tree import DecisionTreeClassifier
from threadpoolctl import threadpool_limits

FAMILIES = ["logistic", "naive_bayes", "decision_tree", "random_forest", "boosted_stumps",
            "knn", "linear_svm", "gradient_boosting", "mlp"]
SCALED = {"logistic", "knn", "linear_svm", "mlp"}


def positive_class(path):
    """The positive class that the catalog.json beside a bundled CSV names."""
    catalog = os.path.join(os.path.dirname(path), "catalog.json")
    if os.path.exists(catalog):
        with open(catalog) as f:
            for entry in json.load(f):
                if entry.get("file") == os.path.basename(path):
                    return entry.get("positive")
    return None


def load(path, target, positive):
    frame = pd.read_csv(path)
    if target not in frame:
        sys.exit(f"{path}: no column named {target!r}; pass --target")
    labels = frame.pop(target).astype(str)
    classes = sorted(labels.unique())
    if len(classes) != 2:
        sys.exit(f"{path}: {len(classes)} classes; this reference handles binary targets")
    positive = positive or positive_class(path) or classes[1]
    if positive not in classes:
        sys.exit(f"{path}: the positive class {positive!r} is not among {classes}")
    y = (labels == positive).to_numpy().astype(int)
    return frame, y


def preprocessing(frame, scale):
    numeric = [c for c in frame if pd.api.types.is_numeric_dtype(frame[c])]
    text = [c for c in frame if c not in numeric]
    num = [SimpleImputer(strategy="median")] + ([StandardScaler()] if scale else [])
    parts = [("num", make_pipeline(*num), numeric)]
    if text:
        parts.append(("cat", make_pipeline(SimpleImputer(strategy="most_frequent"),
                                           OneHotEncoder(handle_unknown="ignore")), text))
    return ColumnTransformer(parts)


def model(family, seed):
    return {
        "logistic": lambda: LogisticRegression(C=1.0, max_iter=200),
        "naive_bayes": lambda: GaussianNB(var_smoothing=1e-9),
        "decision_tree": lambda: DecisionTreeClassifier(min_samples_leaf=5, random_state=seed),
        "random_forest": lambda: RandomForestClassifier(n_estimators=100, random_state=seed),
        "boosted_stumps": lambda: AdaBoostClassifier(
            DecisionTreeClassifier(max_depth=1), n_estimators=200, random_state=seed),
        "knn": lambda: KNeighborsClassifier(n_neighbors=25),
        "linear_svm": lambda: LinearSVC(C=1.0),
        "gradient_boosting": lambda: HistGradientBoostingClassifier(
            max_iter=100, learning_rate=0.1, max_depth=5, min_samples_leaf=20,
            l2_regularization=1.0, early_stopping=False, random_state=seed),
        # scikit-learn's early_stopping judges a held-out tenth by accuracy,
        # not by log loss as candor does, and stops far too soon on small
        # data; stopping on the training loss is the closer match.
        "mlp": lambda: MLPClassifier(hidden_layer_sizes=(64,), alpha=1e-4, batch_size=200,
                                     max_iter=200, tol=1e-4, n_iter_no_change=10,
                                     random_state=seed),
    }[family]()


def fit(family, X, y, seed):
    pipe = make_pipeline(preprocessing(X, family in SCALED), model(family, seed))
    pipe.fit(X, y)
    return pipe


def scores(family, pipe, X, margin_range=None):
    """The probability of the positive class, and the native score that Platt
    scaling reads (log-odds, margin or probability, as in candor)."""
    if family == "linear_svm":
        margin = pipe.decision_function(X)
        lo, hi = margin_range
        prob = np.clip((margin - lo) / (hi - lo), 0.0, 1.0) if hi > lo else np.full(len(margin), 0.5)
        return prob, margin
    if family == "naive_bayes":
        joint = pipe[-1].predict_joint_log_proba(pipe[:-1].transform(X))
        return pipe.predict_proba(X)[:, 1], joint[:, 1] - joint[:, 0]
    prob = pipe.predict_proba(X)[:, 1]
    if family in {"logistic", "gradient_boosting", "boosted_stumps"}:
        return prob, pipe.decision_function(X)
    if family == "mlp":
        p = np.clip(prob, 1e-15, 1 - 1e-15)
        return prob, np.log(p) - np.log1p(-p)
    return prob, prob


def svm_range(pipe, X):
    margin = pipe.decision_function(X)
    return margin.min(), margin.max()


def platt(f, y):
    """Platt (1999) with his smoothed targets; returns the map f -> p."""
    pos, neg = y.sum(), len(y) - y.sum()
    t = np.where(y == 1, (pos + 1) / (pos + 2), 1 / (neg + 2))

    def loss(ab):
        z = ab[0] * f + ab[1]
        return np.sum(t * z + np.logaddexp(0, -z))

    def grad(ab):
        z = ab[0] * f + ab[1]
        r = t - expit(-z)
        return np.array([np.dot(r, f), r.sum()])

    a, b = minimize(loss, [0.0, np.log((neg + 1) / (pos + 1))], jac=grad, method="BFGS",
                    options={"gtol": 1e-8}).x
    return lambda g: expit(-(a * g + b))


def metrics(p, y, bins):
    edges = np.linspace(0, 1, bins + 1)
    which = np.searchsorted(edges[1:-1], p, side="left")
    ece = 0.0
    for b in range(bins):
        inside = which == b
        if inside.any():
            ece += inside.sum() / len(p) * abs(p[inside].mean() - y[inside].mean())
    q = np.clip(p, 1e-15, 1 - 1e-15)
    return {
        "ece": ece,
        "brier": float(np.mean((p - y) ** 2)),
        "log_loss": float(-np.mean(y * np.log(q) + (1 - y) * np.log1p(-q))),
        "auc": float(roc_auc_score(y, p)),
    }


def cell(name, X, y, family, train, test, inner, bins, seed):
    with threadpool_limits(1):
        start = time.perf_counter()
        Xtr, ytr = X.iloc[train], y[train]
        oof_p, oof_f = np.empty(len(train)), np.empty(len(train))
        for fit_rows, score_rows in StratifiedKFold(inner).split(Xtr, ytr):
            part = fit(family, Xtr.iloc[fit_rows], ytr[fit_rows], seed)
            span = svm_range(part, Xtr.iloc[fit_rows]) if family == "linear_svm" else None
            oof_p[score_rows], oof_f[score_rows] = scores(family, part, Xtr.iloc[score_rows], span)
        to_platt = platt(oof_f, ytr)
        iso = IsotonicRegression(y_min=0, y_max=1, out_of_bounds="clip").fit(oof_p, ytr)
        final = fit(family, Xtr, ytr, seed)
        span = svm_range(final, Xtr) if family == "linear_svm" else None
        p, f = scores(family, final, X.iloc[test], span)
        yt = y[test]
        out = {
            "none": metrics(p, yt, bins),
            "platt": metrics(to_platt(f), yt, bins),
            "isotonic": metrics(iso.predict(p), yt, bins),
        }
        return name, family, out, time.perf_counter() - start


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("csv", nargs="+")
    parser.add_argument("--target", default="target")
    parser.add_argument("--positive", help="positive class (default: the catalog's, else the "
                        "second in sorted order)")
    parser.add_argument("--families", default=",".join(FAMILIES))
    parser.add_argument("--outer-folds", type=int, default=5)
    parser.add_argument("--inner-folds", type=int, default=5)
    parser.add_argument("--bins", type=int, default=15)
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--jobs", type=int, default=2)
    parser.add_argument("--out", default="sklearn.json")
    args = parser.parse_args()
    families = args.families.split(",")
    unknown = sorted(set(families) - set(FAMILIES))
    if unknown:
        sys.exit(f"unknown families {unknown}; choose from {FAMILIES}")

    start = time.perf_counter()
    tasks = []
    for path in args.csv:
        X, y = load(path, args.target, args.positive)
        outer = StratifiedKFold(args.outer_folds, shuffle=True, random_state=args.seed)
        for train, test in outer.split(X, y):
            for family in families:
                tasks.append((path, X, y, family, train, test))
    done = joblib.Parallel(n_jobs=args.jobs)(
        joblib.delayed(cell)(p, X, y, f, tr, te, args.inner_folds, args.bins, args.seed)
        for p, X, y, f, tr, te in tasks)
    wall = time.perf_counter() - start

    summary = {}
    for name, family, out, seconds in done:
        entry = summary.setdefault(name, {}).setdefault(family, {"seconds": 0.0, "folds": []})
        entry["seconds"] += seconds
        entry["folds"].append(out)
    for families_of in summary.values():
        for entry in families_of.values():
            entry["mean"] = {
                method: {m: float(np.mean([fold[method][m] for fold in entry["folds"]]))
                         for m in entry["folds"][0][method]}
                for method in entry["folds"][0]
            }
    versions = {"python": platform.python_version(), "numpy": np.__version__,
                "scipy": scipy.__version__, "scikit-learn": sklearn.__version__,
                "pandas": pd.__version__, "joblib": joblib.__version__}
    with open(args.out, "w") as f:
        json.dump({"versions": versions, "wall_seconds": wall, "jobs": args.jobs,
                   "results": summary}, f, indent=1)
    print(f"{len(tasks)} cells in {wall:.1f} s with {args.jobs} jobs; "
          + ", ".join(f"{k} {v}" for k, v in versions.items()))
    for name, families_of in summary.items():
        for family, entry in families_of.items():
            means = entry["mean"]
            print(f"{name:28} {family:18} " + "  ".join(
                f"{method} ece {means[method]['ece']:.4f} brier {means[method]['brier']:.4f}"
                for method in means))


if __name__ == "__main__":
    # Run through the module, not __main__, so that joblib's worker
    # processes can import the cell function and everything it uses.
    sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
    import sklearn_reference

    sklearn_reference.main()
