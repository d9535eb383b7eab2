"""Type stubs of copse_forest: random forests and bagged trees with the copse
command's engine and model files."""

import os
from typing import Any, Dict, Iterable, List, Mapping, Optional, Sequence, Tuple, Union, overload

import numpy as np

__version__: str
DEFAULT_SOURCE: str

#: What the functions read: a pandas DataFrame, a pyarrow Table (or RecordBatch), a
#: dict of 1-D arrays or lists by column name, or a 2-D numpy array with ``names=``.
Data = Any
PathLike = Union[str, "os.PathLike[str]"]
Names = Union[None, str, Sequence[str]]
#: A report: the keys and values of the command's ``--json`` output.
Report = Dict[str, Any]
#: Scored rows: a pandas DataFrame, or a dict of numpy arrays without pandas.
Table = Any

class CopseError(Exception):
    """Base class of every error raised by copse."""

class BadInputError(CopseError, ValueError):
    """The data cannot be used (cells, columns, rows); the message names line and column."""

class DamagedModelError(CopseError):
    """Model bytes or a model file that cannot be read as a copse model."""

class UsageError(CopseError, ValueError):
    """A setting out of range, or settings contradicting each other or the data."""

class CopseWarning(UserWarning):
    """A note about the data or the rows scored."""

class Model:
    """A trained forest: the model file's contents, with copse's reports about it."""

    def save(self, path: PathLike) -> None:
        """Writes the model file at ``path``."""
    def to_bytes(self) -> bytes:
        """The model file's bytes."""
    @classmethod
    def from_bytes(cls, data: bytes, name: str = ...) -> "Model":
        """A model from the bytes of a model file."""
    @property
    def task(self) -> str:
        """``"classify"`` or ``"regress"``."""
    @property
    def target(self) -> str:
        """The column the model predicts."""
    @property
    def classes(self) -> List[str]:
        """The classes in the model's order (empty for numbers)."""
    @property
    def inputs(self) -> List[str]:
        """The input columns in the model's order."""
    @property
    def trees(self) -> int:
        """Trees in the model."""
    @property
    def input_details(self) -> List[Dict[str, Any]]:
        """Each input's kind and categories or bins."""
    @property
    def settings(self) -> Dict[str, Any]:
        """How the model was trained."""
    @property
    def data(self) -> Dict[str, Any]:
        """The training data's source, rows and class counts."""
    @property
    def notes(self) -> List[str]:
        """The notes about the training data kept in the model."""
    @property
    def oob(self) -> Dict[str, Any]:
        """The out-of-bag summary."""
    @property
    def pooled(self) -> Optional[Dict[str, Any]]:
        """A pooled model's partitions and their own out-of-bag figures, or None."""
    @property
    def oob_importance(self) -> List[Dict[str, Any]]:
        """The out-of-bag permutation importance by rank."""
    @property
    def training_report(self) -> Optional[Report]:
        """The ``copse train --json`` report of a model trained in this process."""
    def inspect(self, tree: Optional[int] = None) -> Report:
        """The ``copse inspect --json`` report."""
    def score(
        self,
        data: Data,
        keep: Names = None,
        *,
        flag_unfamiliar: bool = False,
        interval: Optional[float] = None,
        names: Optional[Sequence[str]] = None,
        threads: Optional[int] = None,
        source: str = ...,
    ) -> Table:
        """Scores new rows: kept columns, ``prediction``, ``prob_<class>``."""
    def evaluate(
        self,
        data: Data,
        *,
        names: Optional[Sequence[str]] = None,
        threads: Optional[int] = None,
        source: str = ...,
    ) -> Report:
        """The ``copse evaluate --json`` report on labelled rows."""
    def importance(
        self,
        data: Data,
        repeats: int = 10,
        *,
        seed: int = 1,
        names: Optional[Sequence[str]] = None,
        threads: Optional[int] = None,
        source: str = ...,
    ) -> Report:
        """The ``copse importance --json`` report on labelled rows."""

def load(path: PathLike) -> Model:
    """Reads a model file written by :meth:`Model.save` or ``copse train``."""

@overload
def train(
    data: Data,
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
    ignore: Names = None,
    categorical: Names = None,
    numeric: Names = None,
    task: Optional[str] = None,
    impurity: str = "gini",
    bins: int = 255,
    keep_draws: bool = False,
    allow_large: bool = False,
    cuts: str = "best",
    keep_leaf_rows: bool = False,
    weights: Optional[str] = None,
    group: Optional[str] = None,
    tree_range: None = None,
    names: Optional[Sequence[str]] = None,
    source: str = ...,
) -> Model:
    """Trains a forest to predict ``target`` from the other columns of ``data``."""
@overload
def train(
    data: Data,
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
    ignore: Names = None,
    categorical: Names = None,
    numeric: Names = None,
    task: Optional[str] = None,
    impurity: str = "gini",
    bins: int = 255,
    keep_draws: bool = False,
    allow_large: bool = False,
    cuts: str = "best",
    keep_leaf_rows: bool = False,
    weights: Optional[str] = None,
    group: Optional[str] = None,
    tree_range: Tuple[int, int],
    names: Optional[Sequence[str]] = None,
    source: str = ...,
) -> "Part":
    """Grows trees ``a..b`` of the forest as a :class:`Part` (``copse train --tree-range``)."""

class Part:
    """Trees ``a..b`` of a forest: the part file's contents (pickled as its bytes)."""

    def save(self, path: PathLike) -> None:
        """Writes the part file at ``path``."""
    def to_bytes(self) -> bytes:
        """The part file's bytes."""
    @classmethod
    def from_bytes(cls, data: bytes, name: str = ...) -> "Part":
        """A part from the bytes of a part file."""
    @classmethod
    def of_model(cls, model: Model, name: str = ...) -> "Part":
        """A model taken as the first trees of a larger forest."""
    @property
    def tree_range(self) -> Tuple[int, int]:
        """The first tree and one past the last."""
    @property
    def forest_trees(self) -> int:
        """Trees in the whole forest."""

def merge(
    parts: Iterable[Part],
    data: Data,
    *,
    names: Optional[Sequence[str]] = None,
    threads: Optional[int] = None,
) -> Model:
    """Merges parts of one forest into the model one run makes (``copse merge``)."""

def pool(models: Iterable[Model], *, names: Optional[Sequence[str]] = ...) -> Model:
    """Pools models each trained on one partition of the rows (``copse pool``)."""

def load_part(path: PathLike) -> Part:
    """Reads a part file written by :meth:`Part.save` or ``copse train --tree-range``."""
