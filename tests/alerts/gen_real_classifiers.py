#!/usr/bin/env python3
"""gen_real_classifiers.py — prediction logs of five differently built, really
trained classifiers for the alert-quality test (real_classifiers.sh).

Dataset: scikit-learn's bundled copy of the UCI optical digits (load_digits:
1,797 8x8 images, 10 classes; nothing is downloaded). Library: Debian's
python3-sklearn (written against 1.2.1) and python3-numpy. Half of the images
train the members, the other half is the pool that production draws from.

Members: logistic regression, a random forest, k nearest neighbours, Gaussian
naive Bayes and a small multilayer perceptron, all on pixels scaled to [0, 1].
On these data k-NN alone beats the averaged output (the ensemble's gain over its
best member is slightly negative on clean days): the case the alert rules must
not mistake for an incident.

30 days from 2026-03-02, PER_DAY events a day drawn from the pool, half of them
labelled (half of those inline, half as delayed labels), seeded per day:
  days  1-10  clean (days 1-7 are the baseline)
  days 11-13  covariate shift: pixel noise (sd 0.3 of the range) and a blur
  days 14-16  clean
  days 17-19  label shift: digits 0, 1 and 2 six times as frequent
  days 20-22  clean
  days 23-25  diversity collapse: all five members are copies of the forest
  days 26-27  clean
  days 28-30  one broken member: the perceptron replaced by one trained on
              60 images for 30 iterations (accuracy about 0.65 instead of 0.97)
The effects are large on purpose (see the margins printed by the driver), so
that last-bit differences between CPUs or library builds cannot change which
alerts fire.

Usage: gen_real_classifiers.py OUTDIR   -> events.jsonl, labels.jsonl, plan.json
"""
import json
import os
import sys
import warnings

import numpy as np
import sklearn
from sklearn.datasets import load_digits
from sklearn.ensemble import RandomForestClassifier
from sklearn.exceptions import ConvergenceWarning
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import train_test_split
from sklearn.naive_bayes import GaussianNB
from sklearn.neighbors import KNeighborsClassifier
from sklearn.neural_network import MLPClassifier

SEED = 20260302
FIRST_DAY = 20514          # 2026-03-02 as days since 1970-01-01
DAYS, PER_DAY, LABEL_SHARE = 30, 600, 0.5
MEMBERS = ["logreg", "forest", "knn", "bayes", "mlp"]
PHASES = [("clean", 1, 10), ("covariate-shift", 11, 13), ("clean", 14, 16),
          ("label-shift", 17, 19), ("clean", 20, 22), ("diversity-collapse", 23, 25),
          ("clean", 26, 27), ("broken-member", 28, 30)]


def phase_of(day):
    return next(name for name, a, b in PHASES if a <= day <= b)


def members(x, y):
    warnings.simplefilter("ignore", ConvergenceWarning)
    ms = [LogisticRegression(C=0.8, max_iter=3000),
          RandomForestClassifier(n_estimators=60, max_depth=8, random_state=SEED),
          KNeighborsClassifier(n_neighbors=10),
          GaussianNB(var_smoothing=0.05),
          MLPClassifier(hidden_layer_sizes=(24,), alpha=1.0, solver="lbfgs", max_iter=400,
                        random_state=SEED)]
    for m in ms:
        m.fit(x, y)
    return ms


def blur_noise(x, rng):
    """Each image averaged with its 4-neighbourhood (weight 0.5), then noise."""
    img = x.reshape(-1, 8, 8)
    pad = np.pad(img, ((0, 0), (1, 1), (1, 1)), mode="edge")
    nb = (pad[:, :-2, 1:-1] + pad[:, 2:, 1:-1] + pad[:, 1:-1, :-2] + pad[:, 1:-1, 2:]) / 4
    out = 0.5 * img + 0.5 * nb + rng.normal(0.0, 0.3, img.shape)
    return np.clip(out, 0.0, 1.0).reshape(len(x), 64)


def probs_of(models, x):
    return np.stack([m.predict_proba(x) for m in models], axis=1)  # n x M x K


def row_text(p):
    # 5 decimals; the largest entry absorbs the rounding so that each row sums to 1
    r = np.round(p, 5)
    r[np.argmax(r)] += round(1.0 - float(r.sum()), 5)
    return "[" + ",".join(f"{v:.5f}" for v in np.clip(r, 0.0, 1.0)) + "]"


def main():
    out = sys.argv[1]
    os.makedirs(out, exist_ok=True)
    X, y = load_digits(return_X_y=True)
    X = X / 16.0
    x_tr, x_pool, y_tr, y_pool = train_test_split(X, y, test_size=0.5, random_state=SEED,
                                                  stratify=y)
    models = members(x_tr, y_tr)
    warnings.simplefilter("ignore", ConvergenceWarning)
    weak = MLPClassifier(hidden_layer_sizes=(8,), alpha=1.0, solver="lbfgs", max_iter=30,
                         random_state=SEED).fit(x_tr[:60], y_tr[:60])
    clean = probs_of(models, x_pool)
    weak_p = np.zeros((len(x_pool), 10))
    weak_p[:, weak.classes_] = weak.predict_proba(x_pool)

    ev = open(os.path.join(out, "events.jsonl"), "w")
    lab = open(os.path.join(out, "labels.jsonl"), "w")
    plan = {"dataset": "sklearn.datasets.load_digits (UCI optical digits, bundled)",
            "sklearn": sklearn.__version__, "numpy": np.__version__, "first_day": FIRST_DAY,
            "days": {}, "phases": PHASES, "members": MEMBERS}
    for day in range(1, DAYS + 1):
        rng = np.random.default_rng(SEED + day)
        phase = phase_of(day)
        w = np.ones(len(y_pool))
        if phase == "label-shift":
            w[y_pool <= 2] = 6.0
        idx = rng.choice(len(y_pool), size=PER_DAY, p=w / w.sum())
        p = clean[idx].copy()
        if phase == "covariate-shift":
            p = probs_of(models, blur_noise(x_pool[idx], rng))
        elif phase == "diversity-collapse":
            p[:, :, :] = p[:, 1:2, :]
        elif phase == "broken-member":
            p[:, MEMBERS.index("mlp"), :] = weak_p[idx]
        u = rng.random(PER_DAY)
        right = (p.mean(axis=1).argmax(axis=1) == y_pool[idx]).mean()
        plan["days"][day] = {"phase": phase, "ensemble_accuracy": round(float(right), 4)}
        t0 = (FIRST_DAY + day - 1) * 86400
        for i in range(PER_DAY):
            eid = f"r{day:02d}-{i:04d}"
            line = (f'{{"id":"{eid}","ts":{t0 + i * (86400 // PER_DAY)},"probs":['
                    + ",".join(row_text(p[i, m]) for m in range(len(MEMBERS))) + "]")
            label = int(y_pool[idx[i]])
            if u[i] < LABEL_SHARE / 2:
                line += f',"label":{label}'
            elif u[i] < LABEL_SHARE:
                lab.write(json.dumps({"id": eid, "label": label}) + "\n")
            ev.write(line + "}\n")
    ev.close()
    lab.close()
    json.dump(plan, open(os.path.join(out, "plan.json"), "w"), indent=1)


if __name__ == "__main__":
    main()
