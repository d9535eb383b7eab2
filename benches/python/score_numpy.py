"""Scoring 1,000,000 rows from a numpy array: copse_forest's Model.score against the
same call in Rust (benches/python/score_matrix.rs, the bench `score_matrix` of
copse-forest), on the same model file and the same rows. Figures are printed, never
asserted; the aim is at most 10% more time through Python.

Run from the repository root, in an environment with copse_forest installed:

    python benches/python/score_numpy.py [rows]

Data: invented, twonorm-like (20 normal inputs shifted by +-a per class, a = 2/sqrt(20);
Breiman 1996, "Bias, variance and arcing classifiers"); 100 trees grown on 100,000 rows.
"""

import os
import subprocess
import sys
import tempfile
import time
import warnings

import numpy as np

import copse_forest as copse

INPUTS = 20


def twonorm(rows, seed):
    rng = np.random.default_rng(seed)
    cls = rng.integers(0, 2, size=rows)
    a = 2 / np.sqrt(INPUTS)
    x = rng.normal(size=(rows, INPUTS)) + np.where(cls == 1, a, -a)[:, None]
    return x, np.where(cls == 1, "one", "two")


def main():
    # A few hundred of a million normal rows lie past the training ranges; the warning
    # saying so is part of the work timed, not of the figures shown.
    warnings.simplefilter("ignore", copse.CopseWarning)
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    runs = 3
    names = [f"x{j}" for j in range(INPUTS)]
    x, y = twonorm(100_000, 1)
    data = {n: x[:, j] for j, n in enumerate(names)}
    data["y"] = y
    model = copse.train(data, target="y", trees=100, seed=1)
    new, _ = twonorm(rows, 2)
    new = np.ascontiguousarray(new)

    # The two sides take turns, so a load that comes and goes on a shared machine
    # weighs on both alike; the fastest run of each is kept.
    python_seconds = rust_seconds = float("inf")
    with tempfile.TemporaryDirectory() as d:
        model.save(os.path.join(d, "bench.copse"))
        new.astype("<f8").tofile(os.path.join(d, "rows.f64"))
        env = dict(
            os.environ,
            COPSE_SCORE_MODEL=os.path.join(d, "bench.copse"),
            COPSE_SCORE_MATRIX=os.path.join(d, "rows.f64"),
            COPSE_SCORE_INPUTS=str(INPUTS),
            COPSE_SCORE_RUNS="1",
        )
        for _ in range(runs):
            t = time.perf_counter()
            scored = model.score(new)
            python_seconds = min(python_seconds, time.perf_counter() - t)
            out = subprocess.run(
                ["cargo", "bench", "--quiet", "-p", "copse-forest", "--bench", "score_matrix"],
                env=env, capture_output=True, text=True, check=True,
            ).stdout
            line = next(l for l in out.splitlines() if l.startswith("rust_seconds"))
            fields = line.split()
            rust_seconds = min(rust_seconds, float(fields[1]))
    class_sum = int(fields[fields.index("class_sum") + 1])
    # Same rows, same model: the same predicted classes.
    assert class_sum == int((scored["prediction"] == "two").sum()), "the two sides disagree"
    print(f"rows {rows}, {model.trees} trees, threads {fields[fields.index('threads') + 1]}, fastest of {runs}")
    print(f"rust   predict, classes, ranges   {rust_seconds:.3f} s  ({rows / rust_seconds:,.0f} rows/s)")
    print(f"python Model.score -> DataFrame    {python_seconds:.3f} s  ({rows / python_seconds:,.0f} rows/s)")
    print(f"python / rust: {python_seconds / rust_seconds:.3f} (aim: at most 1.10)")


if __name__ == "__main__":
    main()
