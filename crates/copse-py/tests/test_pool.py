"""Models trained on separate partitions of the rows, pooled by ``copse.pool``: the
pooled probabilities are the tree-count weighted mean of the partitions' own, when
the partitions saw different categories; the pooled model keeps each partition's own
out-of-bag figures and claims none of its own; it is the same file ``copse pool``
writes from the same models; models that cannot pool are refused.

Data: Palmer penguins (Gorman, Williams & Fraser 2014; tests/data/penguins.csv): the
first partition holds every Torgersen bird, the others none, so their island
categories differ."""

import warnings

import numpy as np
import pytest

import copse_forest as copse


def _parts(penguins):
    import pandas as pd

    torgersen = penguins[penguins.island == "Torgersen"]
    others = penguins[penguins.island != "Torgersen"].sample(frac=1.0, random_state=11)
    third = len(others) // 3
    rest = others.iloc[third:]
    half = len(rest) // 2
    return [pd.concat([torgersen, others.iloc[:third]]), rest.iloc[:half], rest.iloc[half:]]


def _trained(penguins, trees=(20, 30, 40)):
    return [
        copse.train(part, target="species", trees=t, seed=21 + k, threads=1)
        for k, (part, t) in enumerate(zip(_parts(penguins), trees))
    ]


def test_pooled_probabilities_are_the_tree_weighted_mean(penguins):
    models = _trained(penguins)
    pooled = copse.pool(models, names=["a", "b", "c"])
    assert pooled.trees == 90
    islands = [d for d in pooled.input_details if d["name"] == "island"][0]["categories"]
    assert islands == ["Biscoe", "Dream", "Torgersen"]
    assert "Torgersen" not in [d for d in models[1].input_details if d["name"] == "island"][0]["categories"]
    columns = [f"prob_{c}" for c in pooled.classes]
    got = pooled.score(penguins, threads=1)[columns].to_numpy()
    want = np.zeros_like(got)
    with warnings.catch_warnings():
        # Torgersen is a category partitions 2 and 3 never saw: scored as missing.
        warnings.simplefilter("ignore", copse.CopseWarning)
        for m in models:
            want += m.trees / 90 * m.score(penguins, threads=1)[columns].to_numpy()
    # The same leaf values summed in another order: at most 90 terms in [0, 1].
    assert np.max(np.abs(got - want)) < 1e-12
    record = pooled.pooled
    assert [p["trees"] for p in record["partitions"]] == [20, 30, 40]
    assert all(p["oob"]["error"] is not None for p in record["partitions"])
    assert "not the same model" in record["about"]
    assert pooled.oob["error"] is None
    assert models[0].pooled is None
    # Pickled as its file's bytes, like any model.
    import pickle

    assert pickle.loads(pickle.dumps(pooled)).to_bytes() == pooled.to_bytes()


def test_the_command_writes_the_same_pooled_model(penguins, folder, copse_cmd):
    models = _trained(penguins)
    names = [f"p{k}.copse" for k in range(3)]
    for m, n in zip(models, names):
        m.save(folder / n)
    copse_cmd(["pool", *names, "--out", "pooled.copse", "-q"], cwd=folder)
    assert (folder / "pooled.copse").read_bytes() == copse.pool(models, names=names).to_bytes()


def test_models_that_cannot_pool_are_refused(penguins):
    a, b, _ = _trained(penguins, trees=(5, 5, 5))
    with pytest.raises(copse.UsageError, match="same rows"):
        copse.pool([a, a])
    with pytest.raises(copse.UsageError, match="two or more"):
        copse.pool([a])
    leafy = copse.train(_parts(penguins)[1], target="species", trees=5, min_leaf=4, threads=1)
    with pytest.raises(copse.UsageError, match="tree rules"):
        copse.pool([a, leafy])
    mass = copse.train(_parts(penguins)[1], target="body_mass_g", trees=5, threads=1)
    with pytest.raises(copse.UsageError, match="predicts"):
        copse.pool([a, mass])
    with pytest.raises(copse.UsageError, match="names"):
        copse.pool([a, b], names=["one"])
    with pytest.raises(copse.UsageError, match="pooled model"):
        copse.Part.of_model(copse.pool([a, b]))
