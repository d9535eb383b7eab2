"""The README's Spark recipe: scoring a Spark DataFrame with ``mapInPandas`` (the model
shipped to the executors by pickling, one copse thread per task) gives the rows and
values of one process. Runs only where pyspark and a Java runtime are installed (the
project's CI installs neither); skipped with a note otherwise."""

import shutil

import pytest

import copse_forest as copse

pyspark = pytest.importorskip("pyspark", reason="pyspark is not installed; the Spark recipe is not tested here")
if shutil.which("java") is None:
    pytest.skip("no Java runtime on PATH; the Spark recipe is not tested here", allow_module_level=True)


def test_map_in_pandas_scores_like_one_process(mains, mains_new):
    from pyspark.sql import SparkSession

    spark = SparkSession.builder.master("local[2]").appName("copse-recipe").getOrCreate()
    try:
        model = copse.train(mains, target="failed_within_year", ignore="segment_id", trees=30, seed=3)
        whole = model.score(mains_new, keep="segment_id", threads=1)
        schema = "segment_id string, prediction string, prob_no double, prob_yes double"
        rows = spark.createDataFrame(mains_new.astype({"segment_id": str})).repartition(3)

        def score_batches(batches):
            for piece in batches:
                yield model.score(piece, keep="segment_id", threads=1)

        scored = rows.mapInPandas(score_batches, schema).toPandas()
        # Spark does not keep row order across a repartition: compare by segment.
        got = scored.set_index("segment_id").sort_index()
        want = whole.astype({"segment_id": str}).set_index("segment_id").sort_index()
        assert list(got.columns) == list(want.columns)
        assert (got["prediction"] == want["prediction"]).all()
        assert (got[["prob_no", "prob_yes"]].to_numpy() == want[["prob_no", "prob_yes"]].to_numpy()).all()
    finally:
        spark.stop()
