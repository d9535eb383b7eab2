"""Tables out: a pandas DataFrame when pandas is installed, else a dict of numpy
arrays by column name (the same columns, in the same order)."""

from __future__ import annotations

from typing import Any, Dict, List, Optional, Sequence

import numpy as np

__all__ = ["have_pandas", "scores_table"]


def have_pandas() -> bool:
    """Whether pandas can be imported."""
    try:
        import pandas  # noqa: F401
    except ImportError:
        return False
    return True


def scores_table(
    kept: Dict[str, Any],
    outputs: np.ndarray,
    codes: Optional[np.ndarray],
    classes: Sequence[str],
    index: Any,
    unfamiliar: Optional[np.ndarray] = None,
) -> Any:
    """The scored rows: the kept columns, ``prediction``, for classes one
    ``prob_<class>`` column per class, and ``unfamiliar`` when given (the columns of
    ``copse score``)."""
    columns: Dict[str, Any] = dict(kept)
    pandas = have_pandas()
    if codes is not None:
        labels: List[str] = list(classes)
        if pandas:
            import pandas as pd

            columns["prediction"] = pd.Categorical.from_codes(codes, categories=labels)
        else:
            columns["prediction"] = np.asarray(labels, dtype=object)[codes]
        for j, c in enumerate(labels):
            columns[f"prob_{c}"] = outputs[:, j]
    else:
        columns["prediction"] = outputs[:, 0]
    if unfamiliar is not None:
        columns["unfamiliar"] = unfamiliar
    if pandas:
        import pandas as pd

        return pd.DataFrame(columns, index=index)
    return columns
