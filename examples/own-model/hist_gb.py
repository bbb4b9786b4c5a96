"""scikit-learn's histogram gradient boosting as a candor `command` family.

candor runs this once per fit (every inner fold, then the whole training
split of each outer fold) as

    python hist_gb.py TRAIN SCORE OUTPUT SEED CLASSES

TRAIN is a CSV whose first column, `class`, holds the class index
(0 .. CLASSES-1) and whose other columns are the dataset's columns as
candor read them (an empty field is a missing value). SCORE has the same
columns without `class`. The script writes OUTPUT: a header `p0,...` with one
probability per class, then the native score (`score`, the log-odds of class
1, for two classes; `score0,...` otherwise), one row per row of SCORE.
"""

import sys

import numpy as np
import pandas as pd
from sklearn.ensemble import HistGradientBoostingClassifier


def read(path):
    # Empty fields are missing values; nothing else is (a level called "NA"
    # stays a level).
    return pd.read_csv(path, keep_default_na=False, na_values=[""])


def main(train_path, score_path, output_path, seed, n_classes):
    train = read(train_path)
    score = read(score_path)
    y = train.pop("class").to_numpy()
    # Text columns become categories with the training rows' levels; a level
    # unseen in training reads as missing.
    for column in train.columns:
        if not pd.api.types.is_numeric_dtype(train[column]):
            levels = pd.CategoricalDtype(sorted(train[column].dropna().unique()))
            train[column] = train[column].astype(levels)
            text = score[column].astype(str).where(score[column].notna())
            score[column] = text.astype(levels)
    model = HistGradientBoostingClassifier(
        categorical_features="from_dtype",
        random_state=seed % 2**32,
    )
    model.fit(train, y)
    proba = np.zeros((len(score), n_classes))
    proba[:, model.classes_] = model.predict_proba(score)
    out = pd.DataFrame(proba, columns=[f"p{c}" for c in range(n_classes)])
    native = model.decision_function(score)
    if n_classes == 2:
        out["score"] = native
    elif len(model.classes_) == n_classes:
        for c in range(n_classes):
            out[f"score{c}"] = native[:, c]
    out.to_csv(output_path, index=False, float_format="%.17g")


if __name__ == "__main__":
    train_path, score_path, output_path, seed, n_classes = sys.argv[1:6]
    main(train_path, score_path, output_path, int(seed), int(n_classes))
