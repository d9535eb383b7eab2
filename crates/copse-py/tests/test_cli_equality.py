"""The package and the copse command are one engine: the same data and settings give
byte-identical model files, and a model saved by either is read by the other with the
same scores and reports."""

import json

import numpy as np
import pandas as pd
import pytest

import copse_forest as copse

MAINS = dict(target="failed_within_year", ignore=["segment_id"])


def cli_train(copse_cmd, folder, data, target, extra=()):
    copse_cmd(["train", "--data", data, "--target", target, "--out", "cli.copse", "--quiet", *extra], folder)
    return (folder / "cli.copse").read_bytes()


@pytest.mark.parametrize(
    "settings, flags",
    [
        (dict(trees=60, seed=1), ["--trees", "60", "--seed", "1"]),
        (
            dict(trees=40, seed=9, features_per_split="every", sampling="subsample:0.6", min_leaf=3, max_depth=6),
            ["--trees", "40", "--seed", "9", "--features-per-split", "every", "--sampling", "subsample:0.6", "--min-leaf", "3", "--max-depth", "6"],
        ),
        (dict(trees=30, balanced=True, impurity="entropy"), ["--trees", "30", "--balanced", "--impurity", "entropy"]),
    ],
)
def test_demo_data_models_are_byte_identical(copse_cmd, folder, mains, settings, flags):
    cli = cli_train(copse_cmd, folder, "water_mains.csv", "failed_within_year", ["--ignore", "segment_id", *flags])
    py = copse.train(mains, **MAINS, **settings, source="water_mains.csv").to_bytes()
    assert py == cli


def test_iris_and_penguins_models_are_byte_identical(copse_cmd, folder, iris, penguins):
    cli = cli_train(copse_cmd, folder, "iris.csv", "species", ["--trees", "50", "--seed", "4", "--keep-draws"])
    assert copse.train(iris, target="species", trees=50, seed=4, keep_draws=True, source="iris.csv").to_bytes() == cli
    cli = cli_train(copse_cmd, folder, "penguins.csv", "body_mass_g", ["--trees", "25", "--categorical", "year"])
    with pytest.warns(copse.CopseWarning, match="2 of 344 rows have no value for the target"):
        py = copse.train(penguins, target="body_mass_g", trees=25, categorical="year", source="penguins.csv")
    assert py.to_bytes() == cli
    assert py.task == "regress"


def test_a_model_saved_by_either_loads_in_the_other(copse_cmd, folder, mains, mains_new):
    cli_train(copse_cmd, folder, "water_mains.csv", "failed_within_year", ["--ignore", "segment_id", "--trees", "40"])
    from_cli = copse.load(folder / "cli.copse")
    assert from_cli.trees == 40 and from_cli.classes == ["no", "yes"]

    ours = copse.train(mains, **MAINS, trees=40, source="water_mains.csv")
    ours.save(folder / "py.copse")
    copse_cmd(["score", "--model", "py.copse", "--data", "water_mains_to_score.csv", "--keep", "segment_id", "--out", "scores.csv", "--quiet"], folder)
    cli_scores = pd.read_csv(folder / "scores.csv")
    with pytest.warns(copse.CopseWarning, match="1 of 500 rows holds values outside what the model was trained on"):
        py_scores = from_cli.score(mains_new, keep="segment_id")
    assert list(py_scores.columns) == list(cli_scores.columns)
    assert (py_scores["prediction"].astype(str) == cli_scores["prediction"]).all()
    # The command writes probabilities to a fixed number of decimals.
    np.testing.assert_allclose(py_scores["prob_yes"], cli_scores["prob_yes"], atol=5e-7)


def same_report(a, b, skip=("seconds", "threads", "model_file", "outputs", "source")):
    """Two reports with the same keys and values, but for timing and file names."""
    assert sorted(a) == sorted(b)
    for k in a:
        if k in skip:
            continue
        if isinstance(a[k], dict):
            same_report(a[k], b[k], skip)
        else:
            assert a[k] == b[k], k


def test_reports_have_the_command_keys_and_values(copse_cmd, folder, mains):
    settings = ["--ignore", "segment_id", "--trees", "30"]
    copse_cmd(["train", "--data", "water_mains.csv", "--target", "failed_within_year", "--out", "cli.copse", "--quiet", *settings], folder)
    trained = json.loads(copse_cmd(["train", "--data", "water_mains.csv", "--target", "failed_within_year", "--out", "x.copse", "--json", "--quiet", *settings], folder).stdout)
    model = copse.train(mains, **MAINS, trees=30, source="water_mains.csv")
    same_report(model.training_report, trained)
    assert model.oob == trained["oob"]
    assert model.oob_importance == trained["importance"]
    assert model.settings == trained["settings"]

    held = mains.sample(300, random_state=1)
    held.to_csv(folder / "held.csv", index=False)
    loaded = copse.load(folder / "cli.copse")
    evaluated = json.loads(copse_cmd(["evaluate", "--model", "cli.copse", "--data", "held.csv", "--json", "--quiet"], folder).stdout)
    with pytest.warns(copse.CopseWarning, match="were rows the model was trained on"):
        ours = loaded.evaluate(held, source="held.csv")
    same_report(ours, evaluated)
    assert ours["evaluation"]["source"] == "held.csv"
    imp = json.loads(copse_cmd(["importance", "--model", "cli.copse", "--data", "held.csv", "--repeats", "3", "--json", "--quiet"], folder).stdout)
    with pytest.warns(copse.CopseWarning):
        ours = loaded.importance(held, repeats=3, source="held.csv")
    same_report(ours, imp)
    inspected = json.loads(copse_cmd(["inspect", "--model", "cli.copse", "--json", "--quiet"], folder).stdout)
    same_report(loaded.inspect(), inspected)
    assert loaded.inspect()["model_file"] == str(folder / "cli.copse")


def test_rows_outside_the_training_data_are_flagged_as_the_command_flags_them(copse_cmd, folder, mains, mains_new):
    rows = mains_new.copy()
    rows.loc[[3, 10, 11], "install_year"] = 2150  # past the newest pipe of training
    rows.loc[[10, 20], "material"] = "bamboo"  # a material the model never saw
    rows.to_csv(folder / "odd.csv", index=False)
    model = copse.train(mains, **MAINS, trees=30, source="water_mains.csv")
    model.save(folder / "py.copse")
    p = copse_cmd(["score", "--model", "py.copse", "--data", "odd.csv", "--flag-unfamiliar", "--out", "odd_scores.csv", "--quiet"], folder)
    cli = pd.read_csv(folder / "odd_scores.csv")
    with pytest.warns(copse.CopseWarning) as caught:
        ours = model.score(rows, flag_unfamiliar=True)
    assert list(ours.columns) == list(cli.columns)
    assert list(ours["unfamiliar"]) == list(cli["unfamiliar"])
    # The demo's rows to score already hold one pipe beyond the training ranges.
    with pytest.warns(copse.CopseWarning, match="1 of 500 rows holds values outside"):
        before = set(np.flatnonzero(model.score(mains_new, flag_unfamiliar=True)["unfamiliar"]))
    assert set(np.flatnonzero(ours["unfamiliar"])) == before | {3, 10, 11, 20} != before
    # The same warnings as the command's, but for the data's name.
    messages = [str(w.message).replace("data frame", "odd.csv") for w in caught]
    for m in messages:
        assert m in p.stderr
    flagged = len(before | {3, 10, 11, 20})
    assert any(f"{flagged} of 500 rows hold values outside what the model was trained on" in m for m in messages)
    assert any("2 cells of odd.csv hold categories the model never saw" in m for m in messages)
