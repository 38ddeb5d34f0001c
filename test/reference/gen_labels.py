#!/usr/bin/env python3
"""Outside-reference fixtures for src/labels (label figures).

Usage: gen_labels.py OUT_DIR. Writes labels_reference.json, deterministic for the pinned versions in requirements.txt:

calibration
    Held-out breast-cancer (Wisconsin diagnostic, UCI; shipped with scikit-learn) probabilities of a
    LogisticRegression, with their labels, and scikit-learn's calibration_curve(y, p, n_bins=10,
    strategy='uniform'): prob_true and prob_pred of the non-empty bins, and the bin counts (numpy.histogram
    over the same edges, which calibration_curve uses internally).

adaboost
    Held-out breast-cancer examples of AdaBoostClassifier (SAMME) and, at checkpoint rounds, scikit-learn's
    staged_decision_function (the normalised margin f in [-1, 1]) and staged_predict. Per round: the error
    rate as 1 - accuracy of staged_predict, the share with y*f <= 0 (numpy), the number of ties f == 0 (where
    the two differ: scikit-learn predicts classes[0] there, headroom counts a tie as a mistake), and the
    margin-loss curve P(y*f <= theta) over headroom's grid (numpy).
"""
import json
import os
import platform
import sys

import numpy as np
import scipy
import sklearn
from sklearn.calibration import calibration_curve
from sklearn.datasets import load_breast_cancer
from sklearn.ensemble import AdaBoostClassifier
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import train_test_split
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

SEED = 0
GRID = [-0.5, -0.25, 0, 0.1, 0.2, 0.3, 0.5, 0.75]  # src/labels/label-summary.ts MARGIN_LOSS_GRID
CHECKPOINTS = [1, 5, 20, 50]


def generated_with():
    return {
        "script": "test/reference/gen_labels.py",
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "scikit-learn": sklearn.__version__,
    }


def floats(a):
    return [float(x) for x in np.asarray(a).ravel()]


def split():
    X, y = load_breast_cancer(return_X_y=True)
    return train_test_split(X, y, test_size=0.4, random_state=SEED, stratify=y)


def calibration_case():
    X_train, X_test, y_train, y_test = split()
    # A weakly regularised model, so its probabilities spread over the bins instead of piling up at 0 and 1.
    model = make_pipeline(StandardScaler(), LogisticRegression(C=0.05, max_iter=1000)).fit(X_train, y_train)
    p = model.predict_proba(X_test)[:, 1]
    prob_true, prob_pred = calibration_curve(y_test, p, n_bins=10, strategy="uniform")
    edges = np.linspace(0.0, 1.0, 11)
    binids = np.searchsorted(edges[1:-1], p)  # as calibration_curve bins (right=False on the inner edges)
    counts = np.bincount(binids, minlength=10)
    return {
        "model": "make_pipeline(StandardScaler(), LogisticRegression(C=0.05, max_iter=1000))",
        "p": floats(p),
        "labels": [int(v) for v in y_test],
        "probTrue": floats(prob_true),
        "probPred": floats(prob_pred),
        "binCounts": [int(c) for c in counts],
    }


def adaboost_case():
    X_train, X_test, y_train, y_test = split()
    clf = AdaBoostClassifier(n_estimators=max(CHECKPOINTS), random_state=SEED).fit(X_train, y_train)
    y = np.where(y_test == clf.classes_[1], 1.0, -1.0)
    rounds = {}
    predictions = list(clf.staged_predict(X_test))
    for t, f in enumerate(clf.staged_decision_function(X_test), start=1):
        if t not in CHECKPOINTS:
            continue
        signed = y * f
        rounds[str(t)] = {
            "decisionFunction": floats(f),
            "sklearnErrorRate": float(np.mean(predictions[t - 1] != y_test)),
            "signedAtMostZero": float(np.mean(signed <= 0)),
            "ties": int(np.sum(f == 0)),
            "marginLoss": [float(np.mean(signed <= theta)) for theta in GRID],
        }
    return {
        "model": f"AdaBoostClassifier(n_estimators={max(CHECKPOINTS)}, random_state={SEED})",
        "classes": [int(c) for c in clf.classes_],
        "labels": [int(v) for v in y_test],
        "grid": GRID,
        "rounds": rounds,
    }


def main():
    out_dir = sys.argv[1] if len(sys.argv) > 1 else os.path.dirname(os.path.abspath(__file__))
    data = {
        "generatedWith": generated_with(),
        "dataset": "sklearn.datasets.load_breast_cancer, train_test_split(test_size=0.4, random_state=0, stratify=y)",
        "calibration": calibration_case(),
        "adaboost": adaboost_case(),
    }
    with open(os.path.join(out_dir, "labels_reference.json"), "w") as f:
        json.dump(data, f, separators=(",", ":"))
        f.write("\n")


if __name__ == "__main__":
    main()
