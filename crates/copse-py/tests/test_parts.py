"""Parts of a forest from Python, with the command's words: train(..., tree_range=(a,
b)) grows trees a..b as ``copse train --tree-range`` does, and merge() joins parts into
the model file of one run, byte for byte (the engine's promise: each tree's draws come
only from the seed and its index). Parts pickle as their file bytes, the command merges
parts Python grew, and parts that cannot make one forest are refused."""

import pickle

import pytest

import copse_forest as copse

SETTINGS = dict(target="failed_within_year", ignore="segment_id", trees=24, seed=5, threads=2)


def test_parts_merge_into_the_model_of_one_run(mains):
    parts = [copse.train(mains, tree_range=r, **SETTINGS) for r in [(0, 7), (7, 16), (16, 24)]]
    assert [p.tree_range for p in parts] == [(0, 7), (7, 16), (16, 24)]
    assert all(p.forest_trees == 24 for p in parts)
    # Through pickle, as parts come back from worker processes, and in any order.
    shipped = [pickle.loads(pickle.dumps(p)) for p in reversed(parts)]
    merged = copse.merge(shipped, mains)
    whole = copse.train(mains, **SETTINGS)
    assert merged.to_bytes() == whole.to_bytes()
    assert merged.oob == whole.oob


def test_a_model_grows_by_a_merge(mains):
    small = copse.train(mains, **dict(SETTINGS, trees=10))
    more = copse.train(mains, tree_range=(10, 24), **SETTINGS)
    grown = copse.merge([copse.Part.of_model(small), more], mains)
    assert grown.to_bytes() == copse.train(mains, **SETTINGS).to_bytes()


def test_parts_with_weights_groups_and_random_cuts(mains):
    data = mains.assign(w=[i % 3 + 1 for i in range(len(mains))], grp=[i // 4 for i in range(len(mains))])
    s = dict(SETTINGS, weights="w", group="grp", cuts="random", sampling="bootstrap", trees=12)
    parts = [copse.train(data, tree_range=r, **s) for r in [(0, 5), (5, 12)]]
    assert copse.merge(parts, data).to_bytes() == copse.train(data, **s).to_bytes()


def test_the_command_merges_parts_grown_in_python(mains, folder, copse_cmd):
    s = dict(SETTINGS, source="water_mains.csv")
    for i, r in enumerate([(0, 12), (12, 24)]):
        copse.train(mains, tree_range=r, **s).save(folder / f"p{i}.copsepart")
    copse_cmd(["merge", "p1.copsepart", "p0.copsepart", "--out", "m.copse", "-q"], cwd=folder)
    assert (folder / "m.copse").read_bytes() == copse.train(mains, **s).to_bytes()
    # And Python reads the command's part files.
    copse_cmd(
        ["train", "--data", "water_mains.csv", "--target", "failed_within_year", "--ignore", "segment_id",
         "--trees", "24", "--seed", "5", "--tree-range", "0..12", "--out", "c0.copsepart", "-q"],
        cwd=folder,
    )
    part = copse.load_part(folder / "c0.copsepart")
    assert part.to_bytes() == (folder / "p0.copsepart").read_bytes()


def test_parts_that_cannot_make_one_forest_are_refused(mains):
    a = copse.train(mains, tree_range=(0, 12), **SETTINGS)
    b = copse.train(mains, tree_range=(12, 24), **dict(SETTINGS, seed=6))
    with pytest.raises(copse.UsageError, match="seed"):
        copse.merge([a, b], mains)
    with pytest.raises(copse.UsageError, match="no part holds trees 12..24"):
        copse.merge([a], mains)
    with pytest.raises(copse.BadInputError):
        copse.merge([a, copse.train(mains, tree_range=(12, 24), **SETTINGS)], mains.iloc[::-1].reset_index(drop=True))
    with pytest.raises(copse.UsageError, match="tree_range"):
        copse.train(mains, tree_range=(20, 30), **SETTINGS)
    with pytest.raises(copse.UsageError):
        copse.merge([], mains)
