#!/usr/bin/env python3
"""Outside-reference fixtures for src/margin, from scikit-learn's AdaBoostClassifier (discrete SAMME).

Usage: gen_margin.py OUT_DIR. Writes two files, deterministic for the pinned versions in requirements.txt:

margin_adaboost.json
    Held-out examples of boosted models on the breast-cancer (Wisconsin diagnostic, UCI) and digits datasets
    that scikit-learn ships. Per example: the raw weighted votes a producer would send (binary: sum of
    alpha_t * h_t(x) with h in {-1, +1}, and the sum of alpha_t; multiclass: the vote share of each class,
    sum_t alpha_t [h_t(x) = k] / sum_t alpha_t), next to scikit-learn's own decision_function and predict.

margin_adaboost_staged.json
    Breast cancer, depth-2 trees, 1000 rounds, fit on the whole data set (the "training" set). Per round the
    estimator weight alpha_t and every training example's weak-learner vote h_t(x) (a bit string, hex), so
    the tests can rebuild the vote sums of every round through our own margin code; and at checkpoint rounds
    scikit-learn's staged_decision_function, to check the rebuilt sums against.
"""
import json
import os
import platform
import sys

import numpy as np
import scipy
import sklearn
from sklearn.datasets import load_breast_cancer, load_digits
from sklearn.ensemble import AdaBoostClassifier
from sklearn.model_selection import train_test_split
from sklearn.tree import DecisionTreeClassifier

SEED = 0


def generated_with():
    return {
        "script": "test/reference/gen_margin.py",
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "scikit-learn": sklearn.__version__,
    }


def floats(a):
    return [float(x) for x in np.asarray(a).ravel()]


def votes_of(clf, X):
    """Per estimator, the class it predicts for each row: shape (n_estimators, n_samples)."""
    return np.array([est.predict(X) for est in clf.estimators_])


def binary_case():
    X, y = load_breast_cancer(return_X_y=True)
    X_train, X_test, y_train, y_test = train_test_split(X, y, test_size=0.25, random_state=SEED, stratify=y)
    clf = AdaBoostClassifier(n_estimators=50, random_state=SEED).fit(X_train, y_train)
    alphas = clf.estimator_weights_[: len(clf.estimators_)]
    h = np.where(votes_of(clf, X_test) == clf.classes_[1], 1.0, -1.0)
    return {
        "dataset": "sklearn.datasets.load_breast_cancer",
        "model": f"AdaBoostClassifier(n_estimators=50, random_state={SEED}), decision stumps",
        "split": f"train_test_split(test_size=0.25, random_state={SEED}, stratify=y); examples are the test part",
        "classes": [int(c) for c in clf.classes_],
        "labels": [int(v) for v in y_test],
        "voteSum": floats(alphas @ h),
        # decision_function divides by the sum of *all* estimator weights; they are the same here
        # because every one of the 50 rounds was fitted.
        "voteTotal": float(clf.estimator_weights_.sum()),
        "decisionFunction": floats(clf.decision_function(X_test)),
        "predicted": [int(v) for v in clf.predict(X_test)],
    }


def multiclass_case():
    X, y = load_digits(return_X_y=True)
    X_train, X_test, y_train, y_test = train_test_split(X, y, test_size=0.25, random_state=SEED, stratify=y)
    clf = AdaBoostClassifier(
        estimator=DecisionTreeClassifier(max_depth=3), n_estimators=100, random_state=SEED
    ).fit(X_train, y_train)
    alphas = clf.estimator_weights_[: len(clf.estimators_)]
    votes = votes_of(clf, X_test)
    total = clf.estimator_weights_.sum()
    shares = np.stack([(alphas[:, None] * (votes == k)).sum(axis=0) / total for k in clf.classes_], axis=1)
    return {
        "dataset": "sklearn.datasets.load_digits",
        "model": f"AdaBoostClassifier(estimator=DecisionTreeClassifier(max_depth=3), n_estimators=100, random_state={SEED})",
        "split": f"train_test_split(test_size=0.25, random_state={SEED}, stratify=y); examples are the test part",
        "classes": [int(c) for c in clf.classes_],
        "rounds": len(clf.estimators_),
        "labels": [int(v) for v in y_test],
        "voteShares": [floats(row) for row in shares],
        "decisionFunction": [floats(row) for row in clf.decision_function(X_test)],
        "predicted": [int(v) for v in clf.predict(X_test)],
    }


def staged_case():
    X, y = load_breast_cancer(return_X_y=True)
    rounds = 1000
    clf = AdaBoostClassifier(
        estimator=DecisionTreeClassifier(max_depth=2), n_estimators=rounds, random_state=SEED
    ).fit(X, y)
    assert len(clf.estimators_) == rounds, "boosting stopped early; the fixture expects every round"
    positive = votes_of(clf, X) == clf.classes_[1]
    bits = [np.packbits(row, bitorder="big").tobytes().hex() for row in positive]

    # The zero-error round by scikit-learn's own staged_predict; the tests find it again through our code.
    first_zero = None
    for t, pred in enumerate(clf.staged_predict(X), start=1):
        if first_zero is None and np.all(pred == y):
            first_zero = t
    assert first_zero is not None and first_zero > 1
    # Fixed rule, chosen before looking at any margins: the round before and the round of zero training
    # error, twice that, then 50, 100, 200, 500 and the last round.
    checkpoints = sorted({first_zero - 1, first_zero, 2 * first_zero, 50, 100, 200, 500, rounds})
    staged = {}
    for t, df in enumerate(clf.staged_decision_function(X), start=1):
        if t in checkpoints:
            staged[str(t)] = floats(df)
    return {
        "dataset": "sklearn.datasets.load_breast_cancer (all 569 examples, used as the training set)",
        "model": f"AdaBoostClassifier(estimator=DecisionTreeClassifier(max_depth=2), n_estimators={rounds}, random_state={SEED})",
        "classes": [int(c) for c in clf.classes_],
        "labels": [int(v) for v in y],
        "rounds": rounds,
        "alphas": floats(clf.estimator_weights_),
        "votesEncoding": "per round, one bit per example in order (numpy.packbits, big-endian), 1 = votes for classes[1]; hex",
        "positiveVotes": bits,
        "firstZeroErrorRound": first_zero,
        "checkpoints": checkpoints,
        "stagedDecisionFunction": staged,
    }


def write(out_dir, name, body):
    with open(os.path.join(out_dir, name), "w") as f:
        json.dump({"generatedWith": generated_with(), **body}, f, separators=(",", ":"))
        f.write("\n")


def main():
    if len(sys.argv) != 2:
        print("usage: gen_margin.py OUT_DIR", file=sys.stderr)
        return 2
    out_dir = sys.argv[1]
    write(out_dir, "margin_adaboost.json", {"binary": binary_case(), "multiclass": multiclass_case()})
    write(out_dir, "margin_adaboost_staged.json", staged_case())
    return 0


if __name__ == "__main__":
    sys.exit(main())
