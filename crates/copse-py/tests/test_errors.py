"""Errors raise a CopseError subclass per kind, with copse's messages."""

import numpy as np
import pandas as pd
import pytest

import copse_forest as copse


def test_the_exception_classes():
    assert issubclass(copse.BadInputError, copse.CopseError)
    assert issubclass(copse.BadInputError, ValueError)
    assert issubclass(copse.UsageError, copse.CopseError)
    assert issubclass(copse.DamagedModelError, copse.CopseError)
    assert issubclass(copse.CopseWarning, UserWarning)


def test_bad_input_names_the_line_and_column(iris):
    bad = iris.astype({"petal_width": object})
    bad.loc[3, "petal_width"] = "wide"
    with pytest.raises(copse.BadInputError, match=r"flowers line 5, column 'petal_width': 'wide' is not a finite number"):
        copse.train(bad, target="species", numeric=["petal_width"], trees=5, source="flowers")
    model = copse.train(iris, target="species", trees=5)
    with pytest.raises(copse.BadInputError, match=r"data frame line 3, column 'sepal_width': 'x' is not a finite number"):
        model.score({"sepal_length": [5.0, 6.0], "sepal_width": ["3", "x"], "petal_length": [1.0, 4.0], "petal_width": [0.2, 1.3]})
    with pytest.raises(copse.BadInputError, match=r"line 2, column 'petal_length': 'inf' is not a finite number"):
        model.score(iris.drop(columns="species").assign(petal_length=np.inf).head(2))


def test_absent_columns_and_targets(iris):
    with pytest.raises(copse.BadInputError, match="no such column; did you mean 'species'"):
        copse.train(iris, target="specie", trees=5)
    model = copse.train(iris, target="species", trees=5)
    with pytest.raises(copse.BadInputError, match=r"has no column 'petal_width', which the model needs"):
        model.score(iris.drop(columns=["petal_width"]))
    with pytest.raises(copse.BadInputError, match=r"'species'"):
        model.evaluate(iris.drop(columns=["species"]))
    unknown = iris.head(3).assign(species=["setosa", "rose", "setosa"])
    with pytest.raises(copse.BadInputError, match="rose"):
        model.evaluate(unknown)


def test_usage_errors(iris):
    with pytest.raises(copse.UsageError, match="trees=0 is out of range"):
        copse.train(iris, target="species", trees=0)
    with pytest.raises(copse.UsageError, match="subsample"):
        copse.train(iris, target="species", sampling="half")
    with pytest.raises(copse.UsageError, match="write it as a percentage, '50%'"):
        copse.train(iris, target="species", features_per_split="0.5")
    with pytest.raises(copse.UsageError, match="more than the 4 inputs"):
        copse.train(iris, target="species", features_per_split=9)
    with pytest.raises(copse.UsageError, match="keep_draws is for standard errors"):
        copse.train(iris, target="species", keep_draws=True, balanced=True)
    with pytest.raises(copse.UsageError, match="needs a class target"):
        copse.train(iris, target="sepal_length", balanced=True)
    with pytest.raises(copse.UsageError, match="threads must be at least 1"):
        copse.train(iris, target="species", threads=0)
    with pytest.raises(copse.UsageError, match="give them with names="):
        copse.train(iris.to_numpy(), target="species")
    with pytest.raises(copse.UsageError, match="this is a str"):
        copse.train("iris.csv", target="species")


def test_dates_are_refused(iris):
    dated = iris.assign(when=pd.Timestamp("2020-01-01"))
    with pytest.raises(copse.BadInputError, match="column 'when' holds dates or times"):
        copse.train(dated, target="species")


def test_damaged_models(tmp_path, iris):
    model = copse.train(iris, target="species", trees=5)
    data = bytearray(model.to_bytes())
    data[len(data) // 2] ^= 0xFF
    with pytest.raises(copse.DamagedModelError):
        copse.Model.from_bytes(bytes(data), "flipped")
    (tmp_path / "cut.copse").write_bytes(model.to_bytes()[:100])
    with pytest.raises(copse.DamagedModelError, match="cut.copse"):
        copse.load(tmp_path / "cut.copse")
    (tmp_path / "text.copse").write_text("species,petal_width\n")
    with pytest.raises(copse.DamagedModelError):
        copse.load(tmp_path / "text.copse")
    with pytest.raises(copse.BadInputError, match="no such file"):
        copse.load(tmp_path / "absent.copse")
