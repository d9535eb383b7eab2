"""Training and scoring let the interpreter go, run on copse's own threads sized by
threads=, and Ctrl-C stops a long training cleanly."""

import _thread
import os
import threading
import time

import numpy as np
import pytest

import copse_forest as copse


def big(rows=4000, seed=0):
    """Invented data for a training that lasts a while."""
    rng = np.random.default_rng(seed)
    x = rng.normal(size=(rows, 8))
    y = np.where(x[:, 0] + x[:, 1] * x[:, 2] + rng.normal(size=rows) > 0, "up", "down")
    data = {f"x{j}": x[:, j] for j in range(8)}
    data["y"] = y
    return data


def test_another_python_thread_runs_during_training():
    """A thread that counts while training runs: with the interpreter held it could
    not count at all until training ended."""
    ticks = []
    done = threading.Event()

    def count():
        while not done.is_set():
            ticks.append(time.perf_counter())
            time.sleep(0.001)

    t = threading.Thread(target=count)
    t.start()
    time.sleep(0.05)
    start = time.perf_counter()
    copse.train(big(), target="y", trees=150, threads=1)
    end = time.perf_counter()
    done.set()
    t.join()
    during = [s for s in ticks if start < s < end]
    # With the interpreter held for the whole call, the counting thread could not run
    # between its start and its end: no tick at all. Let go, it ticks about once a
    # millisecond of a training that grows 150 trees on 4,000 rows.
    assert len(during) >= 5, (len(during), end - start)


def pool_threads(n):
    """Names of this process's threads in copse's pool of n threads (Linux)."""
    names = []
    for tid in os.listdir("/proc/self/task"):
        with open(f"/proc/self/task/{tid}/comm") as f:
            names.append(f.read().strip())
    return sorted(x for x in names if x.startswith(f"copse-t{n}-"))


@pytest.mark.skipif(not os.path.isdir("/proc/self/task"), reason="thread names are read from /proc")
def test_threads_are_honoured(iris):
    model = copse.train(iris, target="species", trees=20, threads=3)
    assert pool_threads(3) == ["copse-t3-0", "copse-t3-1", "copse-t3-2"]
    assert model.training_report["threads"] == 3
    model.score(iris, threads=1)
    assert pool_threads(1) == ["copse-t1-0"]


def test_ctrl_c_stops_training_cleanly():
    data = big(rows=6000, seed=1)
    timer = threading.Timer(0.3, _thread.interrupt_main)
    timer.start()
    with pytest.raises(KeyboardInterrupt) as caught:
        # Thousands of trees: minutes on one thread, unless interrupted.
        copse.train(data, target="y", trees=20000, threads=1)
    timer.join()
    # The engine stopped unfinished (an interruption noticed only after the call
    # would come without this cause, at the end of the whole training).
    cause = caught.value.__cause__
    assert isinstance(cause, copse.CopseError), cause
    assert "training was stopped before it finished" in str(cause)
    # The package is still usable afterwards.
    assert copse.train(data, target="y", trees=3, threads=1).trees == 3
