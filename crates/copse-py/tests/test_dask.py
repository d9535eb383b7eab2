"""copse on a real cluster engine: Dask's distributed scheduler with a local cluster
of 2 worker processes (1 thread each). Scoring a partitioned DataFrame with
``map_partitions`` (the model shipped by pickle) gives exactly the rows and values of
one process, in order; tree parts grown on the workers merge into the model file of
one run, byte for byte. Skipped when dask or distributed are not installed."""

import sys

import pandas as pd
import pytest

import copse_forest as copse

dask = pytest.importorskip("dask")
dd = pytest.importorskip("dask.dataframe")
distributed = pytest.importorskip("distributed")

# Dask turns text columns into Arrow strings by default; kept as they are, the scored
# frame compares cell for cell and type for type with the single process's.
dask.config.set({"dataframe.convert-string": False})

# The worker processes cannot import this test file: its functions travel by value.
cloudpickle = pytest.importorskip("cloudpickle")
cloudpickle.register_pickle_by_value(sys.modules[__name__])


@pytest.fixture(scope="module")
def client():
    cluster = distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
    )
    c = distributed.Client(cluster)
    yield c
    c.close()
    cluster.close()


def _score_piece(piece, model):
    # One copse thread per worker: the worker's own thread is the only one it gets.
    return model.score(piece, keep="segment_id", threads=1)


def test_map_partitions_scores_like_one_process(client, mains, mains_new):
    model = copse.train(mains, target="failed_within_year", ignore="segment_id", trees=40, seed=3)
    whole = model.score(mains_new, keep="segment_id", threads=1)
    frame = dd.from_pandas(mains_new, npartitions=5)
    meta = whole.iloc[:0]
    assert len(client.scheduler_info()["workers"]) == 2
    scored = frame.map_partitions(_score_piece, model, meta=meta).compute()
    assert list(scored.columns) == list(whole.columns)
    assert scored.index.equals(whole.index)
    pd.testing.assert_frame_equal(scored, whole, check_exact=True)


def _grow(data, start, end, settings):
    return copse.train(data, tree_range=(start, end), **settings)


def test_parts_grown_on_workers_merge_into_the_model_of_one_run(client, mains):
    settings = dict(target="failed_within_year", ignore="segment_id", trees=30, seed=7, threads=1)
    [shipped] = client.scatter([mains], broadcast=True)
    futures = [client.submit(_grow, shipped, a, b, settings, pure=False) for a, b in [(0, 10), (10, 20), (20, 30)]]
    parts = client.gather(futures)
    assert {p.tree_range for p in parts} == {(0, 10), (10, 20), (20, 30)}
    merged = copse.merge(parts[::-1], mains, threads=1)
    whole = copse.train(mains, **settings)
    assert merged.to_bytes() == whole.to_bytes()


def _train_partition(path, seed, settings):
    # The worker reads its own partition: only the file's name travels.
    return copse.train(pd.read_csv(path), seed=seed, **settings)


def test_partitions_trained_on_workers_pool_on_the_client(client, mains, tmp_path):
    settings = dict(target="failed_within_year", ignore="segment_id", trees=20, threads=1)
    shuffled = mains.sample(frac=1.0, random_state=3)
    paths = []
    for k in range(3):
        path = tmp_path / f"rows{k}.csv"
        shuffled.iloc[k::3].to_csv(path, index=False)
        paths.append(str(path))
    futures = [client.submit(_train_partition, p, 7 + k, settings, pure=False) for k, p in enumerate(paths)]
    models = client.gather(futures)
    pooled = copse.pool(models, names=paths)
    # The same as training the partitions in this process and pooling them.
    here = [_train_partition(p, 7 + k, settings) for k, p in enumerate(paths)]
    assert pooled.to_bytes() == copse.pool(here, names=paths).to_bytes()
    assert [p["source"] for p in pooled.pooled["partitions"]] == [copse.DEFAULT_SOURCE] * 3
