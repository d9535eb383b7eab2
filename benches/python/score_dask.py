"""Scoring rows per second through 2 Dask workers against one process: the cost of the
engine (task scheduling, pickling the model and the partitions, moving the results
back), as a ratio. Figures are printed, never asserted.

Run from the repository root, in an environment with copse_forest, dask and
distributed installed:

    python benches/python/score_dask.py [rows] [partitions]

Both sides give copse one thread per worker: the single process scores the whole frame
with threads=1; the cluster has 2 worker processes of 1 thread each, and each
partition is scored with threads=1. On a machine with 2 or more free cores the ideal
ratio is 2 (twice the rows per second); what falls short of it is the engine's
overhead. The result is checked equal to the single process's before any figure is
shown.

Data: invented, twonorm-like (20 normal inputs shifted by +-a per class, a =
2/sqrt(20); Breiman 1996, "Bias, variance and arcing classifiers"); 100 trees grown on
20,000 rows.
"""

import sys
import time
import warnings

import numpy as np
import pandas as pd

import copse_forest as copse

INPUTS = 20


def twonorm(rows, seed):
    rng = np.random.default_rng(seed)
    cls = rng.integers(0, 2, size=rows)
    a = 2 / np.sqrt(INPUTS)
    x = rng.normal(size=(rows, INPUTS)) + np.where(cls == 1, a, -a)[:, None]
    frame = pd.DataFrame(x, columns=[f"x{j}" for j in range(INPUTS)])
    frame["class"] = np.where(cls == 1, "one", "two")
    return frame


def score_piece(piece, model, run):
    # `run` only makes each timed run's tasks new to the scheduler (results of an
    # earlier run with the same task names could otherwise be reused).
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", copse.CopseWarning)
        return model.score(piece, threads=1)


def best_of(n, work):
    best = float("inf")
    for _ in range(n):
        t = time.perf_counter()
        out = work()
        best = min(best, time.perf_counter() - t)
    return best, out


def main():
    import dask
    import dask.dataframe as dd
    from distributed import Client, LocalCluster

    dask.config.set({"dataframe.convert-string": False})

    warnings.simplefilter("ignore", copse.CopseWarning)
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    partitions = int(sys.argv[2]) if len(sys.argv) > 2 else 8
    model = copse.train(twonorm(20_000, 1), target="class", trees=100, seed=1)
    new = twonorm(rows, 2).drop(columns="class")

    one_s, whole = best_of(3, lambda: model.score(new, threads=1))

    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None)
    client = Client(cluster)
    try:
        frame = dd.from_pandas(new, npartitions=partitions).persist()
        meta = whole.iloc[:0]
        [shipped] = client.scatter([model], broadcast=True)

        runs = iter(range(1_000_000))

        def through_dask():
            return frame.map_partitions(score_piece, shipped, next(runs), meta=meta).compute()

        through_dask()  # workers warm: the model unpickled, the code loaded
        dask_s, scored = best_of(3, through_dask)
    finally:
        client.close()
        cluster.close()
    pd.testing.assert_frame_equal(scored, whole, check_exact=True)
    print(f"rows {rows}, partitions {partitions}, 100 trees, 20 inputs")
    print(f"one process, 1 thread      {rows / one_s:12.0f} rows/s  ({one_s:.3f} s)")
    print(f"2 Dask workers, 1 thread   {rows / dask_s:12.0f} rows/s  ({dask_s:.3f} s)")
    print(f"ratio (Dask / one process) {one_s / dask_s:12.2f}   (2 would be no overhead)")


if __name__ == "__main__":
    main()
