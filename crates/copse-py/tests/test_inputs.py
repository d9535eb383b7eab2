"""Every kind of data in gives the same model; missing cells, categorical columns and
unseen categories are read as the command reads them."""

import warnings

import numpy as np
import pandas as pd
import pyarrow as pa
import pytest

import copse_forest as copse

SETTINGS = dict(target="species", trees=30, seed=7, source="iris.csv")


def model_bytes(data, **extra):
    return copse.train(data, **{**SETTINGS, **extra}).to_bytes()


def test_each_kind_of_data_gives_the_same_model(iris):
    """A DataFrame, an Arrow table, a dict of arrays and a 2-D array with names hold
    the same cells, so they must give the same model file."""
    expected = model_bytes(iris)
    assert model_bytes(pa.Table.from_pandas(iris, preserve_index=False)) == expected
    as_dict = {c: iris[c].to_numpy() for c in iris.columns}
    assert model_bytes(as_dict) == expected
    # A 2-D array of one dtype: the species become text cells of an object array.
    matrix = iris.to_numpy(dtype=object)
    assert model_bytes(matrix, names=list(iris.columns)) == expected
    # Lists work as dict values too.
    assert model_bytes({c: iris[c].tolist() for c in iris.columns}) == expected


def test_scores_are_the_same_from_each_kind_of_data(iris):
    model = copse.train(iris, **SETTINGS)
    inputs = iris.drop(columns="species")
    expected = model.score(inputs)
    assert list(expected.columns) == ["prediction", "prob_setosa", "prob_versicolor", "prob_virginica"]
    np.testing.assert_array_equal(model.score(pa.Table.from_pandas(inputs))["prob_virginica"], expected["prob_virginica"])
    np.testing.assert_array_equal(model.score(inputs.to_numpy())["prob_setosa"], expected["prob_setosa"])
    # Columns matched by name, in any order, extra columns ignored.
    shuffled = iris[["species", "petal_width", "sepal_length", "petal_length", "sepal_width"]]
    np.testing.assert_array_equal(model.score(shuffled)["prob_versicolor"], expected["prob_versicolor"])
    arr = shuffled.drop(columns="species").to_numpy()
    got = model.score(arr, names=["petal_width", "sepal_length", "petal_length", "sepal_width"])
    np.testing.assert_array_equal(got["prob_versicolor"], expected["prob_versicolor"])
    # Dict data and the row-by-row path (text columns) agree with the matrix path.
    as_text = {c: [repr(v) for v in inputs[c]] for c in inputs.columns}
    np.testing.assert_array_equal(model.score(as_text)["prob_virginica"], expected["prob_virginica"])
    assert (model.score(inputs)["prediction"] == iris["species"]).mean() > 0.95


def test_missing_cells_in_every_spelling_read_alike(penguins):
    """NaN, None and pd.NA in a DataFrame, nulls in Arrow, and the text "NA" are all
    missing cells, as the command reads NA in a file."""
    settings = dict(target="species", trees=20, seed=3, source="penguins.csv")
    expected = copse.train(penguins, **settings).to_bytes()
    nullable = penguins.convert_dtypes()  # Int64, Float64 and string columns holding pd.NA
    assert nullable["bill_length_mm"].isna().sum() == 2
    assert copse.train(nullable, **settings).to_bytes() == expected
    objects = penguins.astype(object).where(penguins.notna(), None)
    assert copse.train(objects, **settings).to_bytes() == expected
    texts = penguins.astype(object).where(penguins.notna(), "NA")
    texts = texts.astype(str)
    assert copse.train(texts, **settings).to_bytes() == expected
    assert copse.train(pa.Table.from_pandas(nullable, preserve_index=False), **settings).to_bytes() == expected


def test_scores_of_missing_cells(penguins):
    model = copse.train(penguins, target="species", trees=20, seed=3)
    rows = penguins.head(5).drop(columns="species")
    rows.loc[0, "bill_length_mm"] = np.nan
    rows.loc[1, "island"] = None
    scored = model.score(rows)
    assert scored.shape == (5, 4)
    assert np.allclose(scored[[c for c in scored.columns if c.startswith("prob_")]].sum(axis=1), 1.0)


def test_categorical_columns(penguins):
    """Text columns are categories; a numeric column is categorical when named in
    categorical= or when its dtype is pandas' category (read the same way)."""
    model = copse.train(penguins, target="species", trees=10, categorical="year")
    kinds = {d["name"]: d["kind"] for d in model.input_details}
    assert kinds == {
        "island": "categorical",
        "bill_length_mm": "numeric",
        "bill_depth_mm": "numeric",
        "flipper_length_mm": "numeric",
        "body_mass_g": "numeric",
        "sex": "categorical",
        "year": "categorical",
    }
    years = {d["name"]: d for d in model.input_details}["year"]["categories"]
    assert years == ["2007", "2008", "2009"]
    by_dtype = penguins.assign(year=penguins["year"].astype("category"))
    same = copse.train(by_dtype, target="species", trees=10)
    assert same.to_bytes() == model.to_bytes()


def test_unseen_categories_are_scored_as_missing_with_a_warning(penguins):
    model = copse.train(penguins, target="species", trees=20, seed=5)
    rows = penguins.drop(columns="species").head(6).copy()
    unseen = rows.copy()
    unseen["island"] = ["Atlantis"] * 6
    blank = rows.copy()
    blank["island"] = None
    with pytest.warns(copse.CopseWarning, match="6 cells of data frame hold categories the model never saw.*'Atlantis'"):
        got = model.score(unseen)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        expected = model.score(blank)
    pd.testing.assert_frame_equal(got, expected)


def test_notes_about_the_data_come_as_warnings(penguins):
    """The command's note on a column read as categorical because of a stray text."""
    odd = penguins.astype({"body_mass_g": object})
    odd.loc[4, "body_mass_g"] = "heavy"
    with pytest.warns(copse.CopseWarning, match=r"column 'body_mass_g' is read as categorical .*line 6 'heavy'"):
        model = copse.train(odd, target="species", trees=5)
    assert {d["name"]: d["kind"] for d in model.input_details}["body_mass_g"] == "categorical"


def test_a_numeric_target_with_two_values_is_two_classes():
    rng = np.random.default_rng(1)
    x = rng.normal(size=200)
    data = {"x": x, "y": (x > 0).astype(int)}
    with pytest.warns(copse.CopseWarning, match="only two distinct values"):
        model = copse.train(data, target="y", trees=10)
    assert model.classes == ["0", "1"]
    scored = model.score({"x": np.array([-2.0, 2.0])})
    assert isinstance(scored, pd.DataFrame)
    assert list(scored["prediction"]) == ["0", "1"]


def test_regression_scores(mains):
    data = mains.drop(columns=["segment_id", "failed_within_year"])
    model = copse.train(data, target="length_m", trees=20, seed=2)
    assert model.task == "regress" and model.classes == []
    scored = model.score(data.head(10), keep="material")
    assert list(scored.columns) == ["material", "prediction"]
    assert scored["prediction"].between(data["length_m"].min(), data["length_m"].max()).all()
