"""Parts of a forest (:class:`Part`), with the words of the command: ``train(...,
tree_range=(a, b))`` grows trees ``a..b`` of a forest as ``copse train --tree-range``
does, and ``merge`` (in ``_model``) joins parts into the model one run of all the trees makes,
byte for byte, as ``copse merge`` does. A part is the part file's bytes, so it is
saved, loaded, pickled and shipped between processes like a model."""

from __future__ import annotations

import os
from typing import Any, Tuple, Union

from . import _native

__all__ = ["Part", "load_part"]

PathLike = Union[str, "os.PathLike[str]"]


class Part:
    """Trees ``a..b`` of a forest, grown by ``train(..., tree_range=(a, b))`` (or read
    by :func:`load_part`): the same part file ``copse train --tree-range`` writes.

    Pickling sends the part file's bytes, so parts grown on worker processes come back
    whole to be merged."""

    __slots__ = ("_native",)

    def __init__(self, native: Any):
        self._native = native

    def save(self, path: PathLike) -> None:
        """Writes the part file at ``path`` (whole or not at all); ``copse merge``
        reads it."""
        self._native.save(os.fspath(path))

    def to_bytes(self) -> bytes:
        """The part file's bytes."""
        return self._native.to_bytes()

    @classmethod
    def from_bytes(cls, data: bytes, name: str = "part bytes") -> "Part":
        """A part from the bytes of a part file; ``name`` names them in messages.

        Raises :class:`DamagedModelError` for bytes that are not a readable part."""
        return cls(_native.part_from_bytes(bytes(data), name))

    @classmethod
    def of_model(cls, model: Any, name: str = "model") -> "Part":
        """A trained model taken as the first trees of a larger forest, so that
        :func:`merge` grows it (as ``copse merge MODEL PART...`` does)."""
        return cls(_native.part_of_model(model._native, name))

    @property
    def tree_range(self) -> Tuple[int, int]:
        """The first tree and one past the last (counting from 0)."""
        return tuple(self._native.tree_range)  # type: ignore[return-value]

    @property
    def forest_trees(self) -> int:
        """Trees in the whole forest the part belongs to."""
        return self._native.forest_trees

    def __reduce__(self) -> Any:
        return (_from_part_bytes, (self.to_bytes(),))

    def __repr__(self) -> str:
        a, b = self.tree_range
        return f"<copse Part: trees {a}..{b} of {self.forest_trees}>"


def _from_part_bytes(data: bytes) -> Part:
    """Unpickles a part from its file bytes."""
    return Part.from_bytes(data, "pickled part")


def load_part(path: PathLike) -> Part:
    """Reads the part file at ``path`` (written by :meth:`Part.save` or by ``copse
    train --tree-range``)."""
    return Part(_native.load_part(os.fspath(path)))
