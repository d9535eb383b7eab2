"""The model object: pickling, files, properties and reports."""

import pickle

import numpy as np
import pytest

import copse_forest as copse

# The demo's rows to score hold one pipe longer than any in training; that warning is
# checked in test_cli_equality.py.
pytestmark = pytest.mark.filterwarnings("ignore:1 of 500 rows holds values outside:copse_forest.CopseWarning")


@pytest.fixture(scope="module")
def model(mains):
    return copse.train(mains, target="failed_within_year", ignore="segment_id", trees=40, seed=2)


def test_pickle_sends_the_model_file_bytes(model, mains_new):
    blob = pickle.dumps(model)
    again = pickle.loads(blob)
    assert again.to_bytes() == model.to_bytes()
    assert model.to_bytes() in blob
    np.testing.assert_array_equal(again.score(mains_new)["prob_yes"], model.score(mains_new)["prob_yes"])


def test_save_and_load(model, tmp_path):
    path = tmp_path / "m.copse"
    model.save(path)
    assert path.read_bytes() == model.to_bytes()
    back = copse.load(path)
    assert back.to_bytes() == model.to_bytes()
    assert back.training_report is None
    assert copse.Model.from_bytes(model.to_bytes()).inputs == model.inputs


def test_properties(model):
    assert model.task == "classify"
    assert model.target == "failed_within_year"
    assert model.classes == ["no", "yes"]
    assert model.trees == 40
    assert model.inputs == [
        "install_year", "material", "diameter_mm", "length_m", "pressure_kpa",
        "soil_corrosivity", "past_repairs", "valve_distance_m",
    ]
    assert model.settings["trees"] == 40 and model.settings["seed"] == 2
    assert model.data["rows_read"] == 2000 and model.data["source"] == "data frame"
    assert model.data["ignored"] == ["segment_id"]
    oob = model.oob
    assert oob["rows"] == 2000 and 0.0 < oob["error"] < 0.5
    assert sorted(d["feature"] for d in model.oob_importance) == sorted(model.inputs)
    assert "copse Model: 40 trees" in repr(model)


def test_inspect_a_tree(model):
    report = model.inspect(tree=3)
    assert report["tree"]["index"] == 3
    assert report["tree"]["rules"]
    assert report["sizes"]["trees"] == 40
    with pytest.raises(copse.UsageError, match="tree 40 is not in the model"):
        model.inspect(tree=40)


def test_scores_without_pandas_are_dicts_of_arrays(model, mains_new, monkeypatch):
    from copse_forest import _tables

    monkeypatch.setattr(_tables, "have_pandas", lambda: False)
    scored = model.score(mains_new, keep="segment_id")
    assert isinstance(scored, dict)
    assert list(scored) == ["segment_id", "prediction", "prob_no", "prob_yes"]
    assert set(scored["prediction"]) <= {"no", "yes"}
    assert len(scored["prob_yes"]) == len(mains_new)


def test_scores_keep_the_data_frame_index(model, mains_new):
    rows = mains_new.set_index("segment_id").head(7)
    scored = model.score(rows)
    assert list(scored.index) == list(rows.index)


def test_the_same_seed_gives_the_same_model(mains):
    a = copse.train(mains, target="failed_within_year", ignore="segment_id", trees=10, seed=5, threads=1)
    b = copse.train(mains, target="failed_within_year", ignore="segment_id", trees=10, seed=5, threads=2)
    c = copse.train(mains, target="failed_within_year", ignore="segment_id", trees=10, seed=6)
    assert a.to_bytes() == b.to_bytes() != c.to_bytes()


def test_every_public_name_has_a_docstring_and_a_stub():
    import ast
    from pathlib import Path

    stub = ast.parse(Path(copse.__file__).with_name("__init__.pyi").read_text())
    top = {}
    for node in stub.body:
        if isinstance(node, (ast.FunctionDef, ast.ClassDef)):
            top[node.name] = node
        elif isinstance(node, ast.AnnAssign):
            top[node.target.id] = node
    for name in copse.__all__:
        assert name in top, f"{name} has no stub"
        obj = getattr(copse, name)
        if callable(obj):
            assert obj.__doc__ and obj.__doc__.strip(), f"{name} has no docstring"
    stubbed = {n.name for n in top["Model"].body if isinstance(n, ast.FunctionDef)}
    for name in dir(copse.Model):
        if name.startswith("_"):
            continue
        assert name in stubbed, f"Model.{name} has no stub"
        assert getattr(copse.Model, name).__doc__, f"Model.{name} has no docstring"
