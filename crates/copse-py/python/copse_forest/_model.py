"""The trained model (:class:`Model`), and :func:`train` and :func:`load`, which make
one."""

from __future__ import annotations

import json
import os
import warnings
from typing import Any, Dict, Iterable, List, Optional, Sequence, Tuple, Union

import numpy as np

from . import _native
from ._columns import named_columns, numeric_matrix
from ._errors import CopseWarning, UsageError
from ._parts import Part
from ._tables import scores_table

__all__ = ["Model", "train", "load", "merge", "DEFAULT_SOURCE"]

#: The name in-memory data go by in messages and in the model card, unless a
#: ``source=`` is given.
DEFAULT_SOURCE = "data frame"

PathLike = Union[str, "os.PathLike[str]"]


def _warn(notes: Sequence[str]) -> None:
    for n in notes:
        warnings.warn(n, CopseWarning, stacklevel=3)


def _names(value: Union[None, str, Sequence[str]], what: str) -> List[str]:
    if value is None:
        return []
    if isinstance(value, str):
        return [value]
    try:
        return [str(v) for v in value]
    except TypeError:
        raise UsageError(f"{what}= takes a column name or a list of column names") from None


class Model:
    """A trained forest: the model file's contents, with copse's reports about it.

    Made by :func:`train` or :func:`load` (or unpickled). The same model file the
    copse command writes and reads: :meth:`save` writes one ``copse score`` reads, and
    :func:`load` reads one ``copse train`` wrote. Pickling sends the model file's
    bytes, so a model can be shipped to worker processes.
    """

    __slots__ = ("_native", "_path", "_training_report", "_inspected")

    def __init__(self, native: Any, path: Optional[str] = None, training_report: Optional[dict] = None):
        self._native = native
        self._path = path
        self._training_report = training_report
        self._inspected: Optional[dict] = None

    # -- the file ---------------------------------------------------------------

    def save(self, path: PathLike) -> None:
        """Writes the model file at ``path`` (whole or not at all); it is the same
        file ``copse train`` would write, and ``copse score --model`` reads it."""
        self._native.save(os.fspath(path))
        self._path = os.fspath(path)

    def to_bytes(self) -> bytes:
        """The model file's bytes."""
        return self._native.to_bytes()

    @classmethod
    def from_bytes(cls, data: bytes, name: str = "model bytes") -> "Model":
        """A model from the bytes of a model file; ``name`` names them in messages.

        Raises :class:`DamagedModelError` for bytes that are not a readable model."""
        return cls(_native.from_bytes(bytes(data), name))

    def __reduce__(self) -> Any:
        return (_from_file_bytes, (self.to_bytes(),))

    def __repr__(self) -> str:
        what = "classes " + ", ".join(self.classes) if self.classes else "numbers"
        return f"<copse Model: {self.trees} trees predicting '{self.target}' ({what}) from {len(self.inputs)} inputs>"

    # -- what the model is ------------------------------------------------------

    def _report(self) -> dict:
        if self._inspected is None:
            self._inspected = json.loads(self._native.inspect_json(self._path or ""))
        return self._inspected

    @property
    def task(self) -> str:
        """``"classify"`` or ``"regress"``."""
        return self._native.task

    @property
    def target(self) -> str:
        """The name of the column the model predicts."""
        return self._native.target

    @property
    def classes(self) -> List[str]:
        """The classes in the model's order (empty for a model of numbers)."""
        return list(self._native.classes)

    @property
    def inputs(self) -> List[str]:
        """The input columns in the model's order."""
        return list(self._native.inputs)

    @property
    def trees(self) -> int:
        """Trees in the model."""
        return self._native.trees

    @property
    def input_details(self) -> List[dict]:
        """Each input: its name, kind, and its categories or value bins (the ``inputs``
        of the ``--json`` reports)."""
        return self._report()["inputs"]

    @property
    def settings(self) -> dict:
        """How the model was trained (the ``settings`` of the ``--json`` reports)."""
        return self._report()["settings"]

    @property
    def data(self) -> dict:
        """The training data: source, rows, class counts, missing tokens (the ``data``
        of the ``--json`` reports)."""
        return self._report()["data"]

    @property
    def notes(self) -> List[str]:
        """The notes about the training data kept in the model."""
        return self._report()["model_notes"]

    @property
    def oob(self) -> dict:
        """The out-of-bag summary: error and its measures on the training rows, each
        judged only by the trees that did not draw it (the ``oob`` of the reports)."""
        return self._report()["oob"]

    @property
    def oob_importance(self) -> List[dict]:
        """The out-of-bag permutation importance measured while training, one entry
        per input by rank (the ``importance`` of the train and inspect reports, the
        ``oob_importance`` of the importance report; empty when the model has none)."""
        return self._report()["importance"]

    @property
    def pooled(self) -> Optional[dict]:
        """For a model made by :func:`pool`: that it is not the model of one run on all
        rows, how its score is made, and each partition's model with its own
        out-of-bag figures and importance (the ``pooled`` of the reports); None for a
        model of one run."""
        return self._report().get("pooled")

    @property
    def training_report(self) -> Optional[dict]:
        """The report of the training run (the keys of ``copse train --json``) for a
        model trained in this process; None for a loaded model."""
        return self._training_report

    def inspect(self, tree: Optional[int] = None) -> dict:
        """The model report of ``copse inspect --json``: summary, sizes, impurity
        importance, and with ``tree`` the rules and nodes of that tree (from 0)."""
        if tree is None:
            return dict(self._report())
        return json.loads(self._native.inspect_json(self._path or "", tree))

    # -- using it ---------------------------------------------------------------

    def score(
        self,
        data: Any,
        keep: Union[None, str, Sequence[str]] = None,
        *,
        flag_unfamiliar: bool = False,
        interval: Optional[float] = None,
        names: Optional[Sequence[str]] = None,
        threads: Optional[int] = None,
        source: str = DEFAULT_SOURCE,
    ) -> Any:
        """Scores new rows: one output row per row of ``data``, in order.

        The columns are those of ``copse score``: the ``keep`` columns copied from
        ``data``, ``prediction`` (the class, or the number), and for classes one
        ``prob_<class>`` column per class. A pandas DataFrame (with ``data``'s index
        when it is one) when pandas is installed, else a dict of numpy arrays.

        Inputs are matched by name (any order; extra columns are ignored); a 2-D array
        without ``names`` is taken to hold the model's inputs in order. Categories
        the model never saw are scored as missing, with a :class:`CopseWarning`; rows
        holding values outside what the model was trained on get a warning too, and
        with ``flag_unfamiliar`` a last column ``unfamiliar`` (1 for such a row, else 0).
        With ``interval=C`` (a coverage such as 0.9), a model of numbers trained with
        ``keep_leaf_rows=True`` adds ``low_<C>`` and ``high_<C>`` (``low_90``,
        ``high_90``): the range expected to hold that share of outcomes, as ``copse
        score --interval``.
        Runs on ``threads`` of copse's own threads (None: one per core) with the
        interpreter released.
        """
        kept_names = _names(keep, "keep")
        inputs = self.inputs
        matrix = None
        if not any(self._native.categorical):
            matrix = numeric_matrix(data, names, inputs)
        result = None
        if matrix is not None:
            result = _native.score_matrix(self._native, matrix, threads)
        if result is None:
            if names is None and isinstance(data, np.ndarray):
                names = inputs
            needed = named_columns(data, names).subset(inputs)
            result = _native.score_columns(self._native, source, needed.names, needed.values, threads)
        (outputs, codes, unfamiliar), notes = result
        _warn(notes)
        kept: Dict[str, Any] = {}
        index = getattr(data, "index", None) if type(data).__module__.startswith("pandas") else None
        if kept_names:
            kept = _kept(data, kept_names, names if names is not None else inputs)
        flags = unfamiliar.astype(np.int64) if flag_unfamiliar else None
        table = scores_table(kept, outputs, codes, self.classes, index, flags)
        if interval is None:
            return table
        if isinstance(interval, bool) or not isinstance(interval, (int, float, np.floating)):
            raise UsageError(f"interval={interval!r} must be a coverage strictly between 0 and 1, such as 0.9")
        if names is None and isinstance(data, np.ndarray):
            names = inputs
        needed = named_columns(data, names).subset(inputs)
        ranges = _native.outcome_ranges(self._native, source, needed.names, needed.values, float(interval), threads)
        percent = f"{100 * float(interval):.6f}".rstrip("0").rstrip(".")
        width = len(table.columns) if hasattr(table, "columns") else len(table)
        at = width - 1 if flag_unfamiliar else width
        if hasattr(table, "insert"):
            table.insert(at, f"low_{percent}", ranges[:, 0])
            table.insert(at + 1, f"high_{percent}", ranges[:, 1])
            return table
        items = list(table.items())
        items[at:at] = [(f"low_{percent}", ranges[:, 0]), (f"high_{percent}", ranges[:, 1])]
        return dict(items)

    def evaluate(self, data: Any, *, names: Optional[Sequence[str]] = None, threads: Optional[int] = None, source: str = DEFAULT_SOURCE) -> dict:
        """Measures the model on labelled rows it has not seen (``data`` must hold the
        target column): the report of ``copse evaluate --json``, with intervals,
        no-skill baselines, decision tables and a check that the rows were not
        training rows. Warnings (categories never seen, rows that were training rows)
        come as :class:`CopseWarning`."""
        cols = named_columns(data, names)
        text, notes = _native.evaluate_json(self._native, self._path or "", source, cols.names, cols.values, threads)
        _warn(notes)
        return json.loads(text)

    def importance(self, data: Any, repeats: int = 10, *, seed: int = 1, names: Optional[Sequence[str]] = None, threads: Optional[int] = None, source: str = DEFAULT_SOURCE) -> dict:
        """Permutation importance on labelled rows the model has not seen: each input
        shuffled ``repeats`` times (shuffles drawn from ``seed``), the rise in error
        with its standard error and tests; the report of ``copse importance --json``."""
        if not isinstance(repeats, int) or not 1 <= repeats <= 10_000:
            raise UsageError(f"repeats={repeats!r} is out of range; use 1 to 10000")
        cols = named_columns(data, names)
        text, notes = _native.importance_json(self._native, self._path or "", source, cols.names, cols.values, repeats, int(seed), threads)
        _warn(notes)
        return json.loads(text)


def _kept(data: Any, wanted: List[str], given: Optional[Sequence[str]]) -> Dict[str, Any]:
    """The ``keep`` columns of ``data`` as they are there."""
    module = type(data).__module__
    out: Dict[str, Any] = {}
    if module.startswith("pandas"):
        label = {str(c): c for c in data.columns}
        for w in wanted:
            if w not in label:
                raise UsageError(f"keep= names the column '{w}', but the data has no such column")
            out[w] = data[label[w]].to_numpy()
        return out
    if isinstance(data, dict):
        keyed = {str(k): v for k, v in data.items()}
        for w in wanted:
            if w not in keyed:
                raise UsageError(f"keep= names the column '{w}', but the data has no such column")
            out[w] = np.asarray(keyed[w])
        return out
    if module.startswith("pyarrow"):
        for w in wanted:
            if w not in data.column_names:
                raise UsageError(f"keep= names the column '{w}', but the data has no such column")
            out[w] = data.column(w).to_numpy(zero_copy_only=False)
        return out
    if isinstance(data, np.ndarray):
        at = {str(n): j for j, n in enumerate(given or [])}
        for w in wanted:
            if w not in at:
                raise UsageError(f"keep= names the column '{w}', but the data has no such column")
            out[w] = data[:, at[w]]
        return out
    return out


def _from_file_bytes(data: bytes) -> Model:
    """Unpickles a model from its file bytes."""
    return Model.from_bytes(data, "pickled model")


def load(path: PathLike) -> Model:
    """Reads the model file at ``path`` (written by :meth:`Model.save` or by
    ``copse train``).

    Raises :class:`DamagedModelError` for a file that is not a readable copse model
    and :class:`BadInputError` for one that cannot be opened."""
    p = os.fspath(path)
    return Model(_native.load(p), path=p)


def train(
    data: Any,
    target: str,
    *,
    trees: int = 500,
    features_per_split: Union[int, str, None] = None,
    sampling: Optional[str] = None,
    balanced: bool = False,
    min_leaf: int = 1,
    max_depth: Optional[int] = None,
    seed: int = 1,
    threads: Optional[int] = None,
    ignore: Union[None, str, Sequence[str]] = None,
    categorical: Union[None, str, Sequence[str]] = None,
    numeric: Union[None, str, Sequence[str]] = None,
    task: Optional[str] = None,
    impurity: str = "gini",
    bins: int = 255,
    keep_draws: bool = False,
    allow_large: bool = False,
    cuts: str = "best",
    keep_leaf_rows: bool = False,
    weights: Optional[str] = None,
    group: Optional[str] = None,
    tree_range: Optional[Tuple[int, int]] = None,
    names: Optional[Sequence[str]] = None,
    source: str = DEFAULT_SOURCE,
) -> Any:
    """Trains a forest to predict the column ``target`` of ``data`` from its other
    columns (less those in ``ignore``), as ``copse train`` does with the same
    settings.

    ``data`` is a pandas DataFrame, a pyarrow Table, a dict of 1-D arrays by column
    name, or a 2-D numpy array with ``names``. Column kinds follow the command's
    rules; notes about the data come as :class:`CopseWarning`. ``source`` names the
    data in messages and in the model file; with the file's name as ``source``, the
    same data and settings give a model file byte-identical to ``copse train``'s.

    Settings, with the command's defaults: ``trees``; ``features_per_split`` (inputs
    tried at each split: a count, a share such as ``"33%"``, ``"root"``, ``"log"``,
    ``"every"``, or None for the default rule); ``sampling`` (``"bootstrap"``,
    ``"subsample:F"``, ``"none"``, or None for the command's choice); ``balanced``
    (the same number of rows from every class for each tree); ``min_leaf``; ``max_depth`` (None: no limit);
    ``seed`` (the same seed, data and settings give the same model); ``impurity``
    (``"gini"`` or ``"entropy"``); ``bins`` (most value bins per numeric input);
    ``keep_draws`` (keep each tree's row draws, for standard errors);
    ``allow_large`` (train even when the command's estimate says the model would not
    fit in the memory available; else that is a :class:`UsageError`). Roles:
    ``ignore``, ``categorical`` and ``numeric`` name columns; ``task`` is
    ``"classify"``, ``"regress"`` or None (read from the target). ``cuts``:
    ``"best"`` (every cut of an input is scored) or ``"random"`` (one cut drawn per
    input; without a ``sampling`` given, every tree then sees every row, as with the
    command); ``keep_leaf_rows`` keeps the training rows of every leaf, for outcome
    ranges (as ``copse train --keep-leaf-rows``; numbers only); ``weights`` names a
    column of case weights and ``group`` a column of row groups (resampling draws
    whole groups), as ``--weights`` and ``--group``.

    With ``tree_range=(a, b)``, grows only trees ``a..b`` (counting from 0, ``b`` left
    out) of the ``trees``-tree forest and returns a :class:`Part` (as ``copse train
    --tree-range``); :func:`merge` joins the parts into the model one run makes, byte
    for byte.

    Training runs on ``threads`` of copse's own threads (None: one per core) with the
    interpreter released; Ctrl-C stops it within about one tree per thread and raises
    ``KeyboardInterrupt``.
    """
    if not isinstance(target, str):
        raise UsageError("target= takes the name of the column to predict")
    cols = named_columns(data, names)
    for key, value in (("trees", trees), ("min_leaf", min_leaf), ("bins", bins), ("seed", seed)):
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 0:
            raise UsageError(f"{key}={value!r} must be a whole number of at least 0")
    if max_depth is not None and (isinstance(max_depth, bool) or not isinstance(max_depth, (int, np.integer)) or max_depth < 0):
        raise UsageError(f"max_depth={max_depth!r} must be a whole number of at least 1, or None")
    if threads is not None and (isinstance(threads, bool) or not isinstance(threads, (int, np.integer)) or threads < 0):
        raise UsageError(f"threads={threads!r} must be a whole number of at least 1, or None")
    forced = _names(categorical, "categorical")
    roles = [target, weights, group] + _names(ignore, "ignore")
    forced += [n for n in cols.forced if n not in forced and n not in roles]
    if task is None and target in cols.forced:
        # A target whose own type says it holds categories is a class target.
        task = "classify"
    settings = {
        "target": target,
        "ignore": _names(ignore, "ignore"),
        "categorical": forced,
        "numeric": _names(numeric, "numeric"),
        "task": task,
        "trees": int(trees),
        "features_per_split": "default" if features_per_split is None else str(features_per_split),
        "sampling": None if sampling is None else str(sampling),
        "balanced": bool(balanced),
        "impurity": str(impurity),
        "min_leaf": int(min_leaf),
        "max_depth": None if max_depth is None else int(max_depth),
        "bins": int(bins),
        "seed": int(seed),
        "keep_draws": bool(keep_draws),
        "threads": None if threads is None else int(threads),
        "allow_large": bool(allow_large),
        "cuts": str(cuts),
        "keep_leaf_rows": bool(keep_leaf_rows),
        "weights": None if weights is None else str(weights),
        "group": None if group is None else str(group),
    }
    if tree_range is not None:
        try:
            start, end = (int(v) for v in tree_range)
        except (TypeError, ValueError):
            raise UsageError(f"tree_range={tree_range!r} must be a pair of whole numbers (a, b) with a < b") from None
        if start < 0 or end < 0:
            raise UsageError(f"tree_range={tree_range!r} must be a pair of whole numbers (a, b) with a < b")
        native_part, notes = _native.train_part(source, cols.names, cols.values, settings, start, end)
        _warn(notes)
        return Part(native_part)
    native, notes, report = _native.train(source, cols.names, cols.values, settings)
    _warn(notes)
    return Model(native, training_report=json.loads(report))


def merge(
    parts: Iterable[Part],
    data: Any,
    *,
    names: Optional[Sequence[str]] = None,
    threads: Optional[int] = None,
) -> Any:
    """Merges parts of one forest, in any order, into the model one run of all its
    trees makes, byte for byte (as ``copse merge``). ``data`` is the training data the
    parts were grown on (as given to :func:`train`): the out-of-bag figures are
    computed from it again, and the parts' settings, seed, rows and ranges are checked
    against each other and against it.

    Raises :class:`UsageError` for parts of different forests, ranges that overlap or
    leave gaps, and :class:`BadInputError` for data that are not the parts' data."""
    natives = []
    for p in parts:
        if not isinstance(p, Part):
            raise UsageError(f"merge() takes Part objects (from train(..., tree_range=...)); got {type(p).__name__}")
        natives.append(p._native)
    if not natives:
        raise UsageError("no parts to merge; give one or more")
    cols = named_columns(data, names)
    native = _native.merge(natives, DEFAULT_SOURCE, cols.names, cols.values, threads)
    return Model(native)


def pool(models: Iterable[Model], *, names: Optional[Sequence[str]] = None) -> Model:
    """Pools models each trained on one partition of the rows (same columns, kinds,
    outcome, classes and settings; the seed and number of trees may differ) into one
    model whose score is the mean over all their trees, so the tree-count weighted
    mean of their scores (as ``copse pool``). Category dictionaries are joined. The
    pooled model keeps each partition's own out-of-bag figures (:attr:`Model.pooled`)
    and has none of its own: it is not the model one run on all rows would make.
    ``names`` name the models in messages and in the record (default ``model 1``,
    ``model 2``, ...).

    Raises :class:`UsageError` for models that cannot be pooled, naming what differs."""
    natives = []
    for m in models:
        if not isinstance(m, Model):
            raise UsageError(f"pool() takes Model objects; got {type(m).__name__}")
        natives.append(m._native)
    if names is None:
        names = [f"model {k + 1}" for k in range(len(natives))]
    names = [str(n) for n in names]
    if len(names) != len(natives):
        raise UsageError(f"{len(names)} names for {len(natives)} models; give one name per model")
    return Model(_native.pool_models(natives, names))
