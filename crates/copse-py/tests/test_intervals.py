"""Outcome ranges from Python with the command's words: score(interval=0.9) on a model
trained with keep_leaf_rows=True gives the columns and values of ``copse score
--interval 0.9`` for the same model file and rows. Data: Palmer penguins (Gorman,
Williams & Fraser 2014), body mass from the other measurements."""

import numpy as np
import pandas as pd
import pytest

import copse_forest as copse


def test_score_interval_matches_the_command(penguins, folder, copse_cmd):
    s = dict(target="body_mass_g", ignore=["species", "island", "sex", "year"], trees=30, seed=4,
             keep_leaf_rows=True, source="penguins.csv")
    model = copse.train(penguins, **s)
    model.save(folder / "m.copse")
    rows = penguins.dropna(subset=["body_mass_g"]).reset_index(drop=True)
    ours = model.score(rows, interval=0.9)
    assert list(ours.columns) == ["prediction", "low_90", "high_90"]
    assert (ours["low_90"] <= ours["high_90"]).all()
    copse_cmd(["score", "--model", "m.copse", "--data", "penguins.csv", "--interval", "0.9",
               "--out", "s.csv", "-q"], cwd=folder)
    theirs = pd.read_csv(folder / "s.csv")
    known = penguins["body_mass_g"].notna().to_numpy()
    for col in ["low_90", "high_90"]:
        assert np.allclose(ours[col].to_numpy(), theirs[col].to_numpy()[known], rtol=1e-9, atol=1e-9)


def test_interval_needs_a_model_of_numbers_with_its_leaf_rows(mains, penguins):
    classes = copse.train(mains, target="failed_within_year", ignore="segment_id", trees=5)
    with pytest.raises(copse.UsageError, match="classes"):
        classes.score(mains, interval=0.9)
    plain = copse.train(penguins, target="body_mass_g", ignore=["species", "island", "sex", "year"], trees=5)
    with pytest.raises(copse.UsageError, match="keep_leaf_rows"):
        plain.score(penguins, interval=0.9)
