"""Type stubs of the native half of copse_forest (used through the package, not
directly)."""

from typing import Any, Dict, List, Optional, Sequence, Tuple, Union

import numpy as np

COPSE_VERSION: str

#: A column handed to the engine: float64 numbers (NaN: missing) or optional texts.
Column = Union[np.ndarray, List[Optional[str]]]
#: Outputs, predicted class indexes (classes only), and rows outside the training data.
Scored = Tuple[np.ndarray, Optional[np.ndarray], np.ndarray]

class NativeModel:
    """A trained forest held by the engine."""

    task: str
    classes: List[str]
    inputs: List[str]
    categorical: List[bool]
    target: str
    trees: int
    is_classifier: bool
    def to_bytes(self) -> bytes:
        """The model file's bytes."""
    def save(self, path: str) -> None:
        """Writes the model file."""
    def inspect_json(self, model_file: str, tree: Optional[int] = None) -> str:
        """The ``copse inspect --json`` report as text."""
    @staticmethod
    def threads_for(threads: Optional[int] = None) -> int:
        """Threads a call would use."""

def train(source: str, names: Sequence[str], columns: Sequence[Column], settings: Dict[str, Any]) -> Tuple[NativeModel, List[str], str]:
    """Trains; returns the model, the notes, and the ``copse train --json`` report."""

def load(path: str) -> NativeModel:
    """Reads a model file."""

def from_bytes(data: bytes, name: str) -> NativeModel:
    """Reads model file bytes."""

def score_matrix(model: NativeModel, x: np.ndarray, threads: Optional[int] = None) -> Optional[Tuple[Scored, List[str]]]:
    """Scores a matrix of the model's numeric inputs in order, with the warnings (None: infinite cells)."""

def score_columns(model: NativeModel, source: str, names: Sequence[str], columns: Sequence[Column], threads: Optional[int] = None) -> Tuple[Scored, List[str]]:
    """Scores named columns; returns the scores and the warnings."""

def evaluate_json(model: NativeModel, model_file: str, source: str, names: Sequence[str], columns: Sequence[Column], threads: Optional[int] = None) -> Tuple[str, List[str]]:
    """The ``copse evaluate --json`` report and the warnings."""

def importance_json(model: NativeModel, model_file: str, source: str, names: Sequence[str], columns: Sequence[Column], repeats: int, seed: int, threads: Optional[int] = None) -> Tuple[str, List[str]]:
    """The ``copse importance --json`` report and the warnings."""

class NativePart:
    """Trees a..b of a forest held by the engine."""

    tree_range: Tuple[int, int]
    forest_trees: int
    name: str
    is_model: bool
    def to_bytes(self) -> bytes:
        """The part file's bytes."""
    def save(self, path: str) -> None:
        """Writes the part file."""

def train_part(source: str, names: Sequence[str], columns: Sequence[Column], settings: Dict[str, Any], start: int, end: int) -> Tuple[NativePart, List[str]]:
    """Grows trees start..end; returns the part and the notes."""

def pool_models(models: Sequence[NativeModel], names: Sequence[str]) -> NativeModel:
    """Pools models each trained on one partition of the rows."""

def merge(parts: Sequence[NativePart], source: str, names: Sequence[str], columns: Sequence[Column], threads: Optional[int] = None) -> NativeModel:
    """Merges parts with their training data into the model."""

def load_part(path: str) -> NativePart:
    """Reads a part file."""

def part_from_bytes(data: bytes, name: str) -> NativePart:
    """Reads part file bytes."""

def part_of_model(model: NativeModel, name: str) -> NativePart:
    """A model taken as the first trees of a larger forest."""

def outcome_ranges(model: NativeModel, source: str, names: Sequence[str], columns: Sequence[Column], coverage: float, threads: Optional[int] = None) -> np.ndarray:
    """Each row's outcome range (low, high) covering ``coverage`` of outcomes."""
