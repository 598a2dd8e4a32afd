"""A tour of the knotpath Python module, in notebook-style cells (run it as
plain `python3 examples/python_tour.py`; see python_tour.md).

The data are invented here from a fixed seed: 300 weekly readings of a
bakery's oven line, with the share of loaves rejected as the response and
twelve recorded conditions, of which four drive it."""

# %% The data: a DataFrame whose column names flow into every output
import sys

import numpy as np
import pandas as pd

import knotpath

rng = np.random.default_rng(20261204)
names = ["oven_temp_c", "proof_minutes", "flour_protein_pct", "hydration_pct", "belt_speed", "ambient_c",
         "humidity_pct", "shift_hours", "dough_batch_kg", "steam_seconds", "salt_pct", "yeast_pct"]
readings = pd.DataFrame(rng.standard_normal((300, len(names))), columns=names)
truth = {"oven_temp_c": 1.5, "proof_minutes": -1.0, "hydration_pct": 0.8, "steam_seconds": -0.6}
readings["reject_share"] = sum(w * readings[n] for n, w in truth.items()) + rng.standard_normal(300)

# %% Trace the whole path: exact knots, one per event
path = knotpath.trace(readings, "reject_share")
print(path.audit())
table = path.knot_table()
print(table[["step", "penalty", "mu", "event", "predictor", "active", "r_squared"]].head(6))

# %% Coefficients anywhere on the path, one point or many (exact, not a grid)
print(path.coefficients_at(mu=0.5).loc[list(truth)])
print(path.coefficients_at(relative_budget=[0.25, 0.5, 1.0])[list(truth)])

# %% Choose a penalty by exact 10-fold cross-validation, then predict
cv = knotpath.cross_validate(readings, "reject_share", folds=10)
lean = cv["parsimonious"]
print(f"parsimonious choice: mu {lean['mu']:.4g}, CV error {lean['error']:.4g}")
chosen = cv["path"].coefficients_at(penalty=lean["penalty"])
print("kept:", [n for n in names if chosen[n] != 0])
new_weeks = readings[names].tail(3)
print(cv["path"].predict(new_weeks, penalty=lean["penalty"]))

# %% Save the path exactly (the knotpath program reads the same file)
import tempfile, os
with tempfile.TemporaryDirectory() as folder:
    file = os.path.join(folder, "oven.kpath")
    cv["path"].save(file, choices={"parsimonious": lean["penalty"]})
    again = knotpath.load(file)
    assert np.array_equal(again.knots["coefficients"], cv["path"].knots["coefficients"])

# The four conditions of the generating model should be the first to enter.
entered = [p for p, e in zip(path.knots["predictor"], path.knots["event"]) if e == "enter"]
if set(entered[:4]) != set(truth):
    sys.exit(f"unexpected entry order: {entered}")
print("the four driving conditions entered first:", entered[:4])
