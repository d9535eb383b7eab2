"""Data in: pandas DataFrames, pyarrow Tables, dicts of arrays and 2-D numpy arrays
with names, turned into named columns for the engine.

Each column becomes either numbers (a float64 array, NaN for a missing cell) or texts
(a list of str, None for a missing cell). The engine then reads the columns exactly
as the copse command reads the CSV file they would make, so column kinds, notes and
messages follow the command's rules: a column is numeric when every cell that is not
missing is a finite number; texts such as "NA" are missing cells; a column whose
dtype is categorical (pandas ``category``, Arrow ``dictionary``) is always read as
categories, as if named in ``categorical=``.
"""

from __future__ import annotations

import math
from typing import Any, Dict, List, Optional, Sequence, Tuple

import numpy as np

from ._errors import BadInputError, UsageError

__all__ = ["Columns", "named_columns", "numeric_matrix"]


class Columns:
    """Named columns ready for the engine.

    ``values`` holds float64 arrays or lists of optional texts; ``forced`` names the
    columns whose own type says they are categories; ``index`` is the row labels of
    a DataFrame (kept for the scores), else None.
    """

    def __init__(self, names: List[str], values: List[Any], forced: List[str], index: Any, rows: int):
        self.names = names
        self.values = values
        self.forced = forced
        self.index = index
        self.rows = rows

    def subset(self, wanted: Sequence[str]) -> "Columns":
        """The columns among ``wanted`` that exist, in the order of ``wanted``."""
        at = {n: i for i, n in enumerate(self.names)}
        keep = [at[n] for n in wanted if n in at]
        return Columns(
            [self.names[i] for i in keep],
            [self.values[i] for i in keep],
            [n for n in self.forced if n in wanted],
            self.index,
            self.rows,
        )


def _is_missing(v: Any) -> bool:
    if v is None:
        return True
    if isinstance(v, float) and math.isnan(v):
        return True
    try:
        import pandas as pd

        if v is pd.NA or v is pd.NaT:
            return True
    except ImportError:
        pass
    return isinstance(v, np.floating) and bool(np.isnan(v))


def _text(v: Any) -> Optional[str]:
    """A cell as the text a CSV file would hold (None for missing)."""
    if _is_missing(v):
        return None
    if isinstance(v, str):
        return v
    if isinstance(v, (bool, np.bool_)):
        return "True" if v else "False"
    if isinstance(v, bytes):
        return v.decode("utf-8", errors="replace")
    if isinstance(v, (float, np.floating)):
        return repr(float(v))
    return str(v)


def _texts(values: Any) -> List[Optional[str]]:
    return [_text(v) for v in values]


def _from_array(name: str, a: np.ndarray) -> Tuple[Any, bool]:
    """One 1-D array as numbers or texts; True when it is forced categorical."""
    kind = a.dtype.kind
    if kind in "iuf":
        return np.ascontiguousarray(a, dtype=np.float64), False
    if kind == "b":
        return _texts(a.tolist()), False
    if kind in "OUS":
        return _texts(a.tolist()), False
    if kind in "mM":
        raise BadInputError(
            f"column '{name}' holds dates or times, which copse does not read; turn them "
            "into numbers (for example days since a date) or into text first"
        )
    raise BadInputError(
        f"column '{name}' holds values of type {a.dtype}, which copse does not read; turn "
        "them into numbers or text first"
    )


def _from_pandas(df: Any) -> Columns:
    import pandas as pd
    from pandas.api import types as pt

    names: List[str] = []
    values: List[Any] = []
    forced: List[str] = []
    for label in df.columns:
        name = str(label)
        col = df[label]
        if isinstance(col, pd.DataFrame):
            raise BadInputError(
                f"the data frame has more than one column named '{name}'; give each column its own name"
            )
        dtype = col.dtype
        if isinstance(dtype, pd.CategoricalDtype):
            values.append(_texts(col.astype(object).tolist()))
            forced.append(name)
        elif pt.is_bool_dtype(dtype):
            values.append(_texts(col.astype(object).tolist()))
        elif pt.is_numeric_dtype(dtype) and not pt.is_complex_dtype(dtype):
            values.append(col.to_numpy(dtype=np.float64, na_value=np.nan))
        elif pt.is_datetime64_any_dtype(dtype) or pt.is_timedelta64_dtype(dtype):
            raise BadInputError(
                f"column '{name}' holds dates or times, which copse does not read; turn them "
                "into numbers (for example days since a date) or into text first"
            )
        else:
            values.append(_texts(col.astype(object).tolist()))
        names.append(name)
    return Columns(names, values, forced, df.index, len(df))


def _from_arrow(table: Any) -> Columns:
    import pyarrow as pa

    names: List[str] = []
    values: List[Any] = []
    forced: List[str] = []
    for name, col in zip(table.column_names, table.columns):
        t = col.type
        if pa.types.is_integer(t) or pa.types.is_floating(t) or pa.types.is_decimal(t):
            # Nulls become NaN, the engine's missing number.
            values.append(np.asarray(col.cast(pa.float64()).to_numpy(zero_copy_only=False), dtype=np.float64))
        elif pa.types.is_dictionary(t):
            values.append(_texts(col.to_pylist()))
            forced.append(name)
        elif pa.types.is_temporal(t):
            raise BadInputError(
                f"column '{name}' holds dates or times, which copse does not read; turn them "
                "into numbers (for example days since a date) or into text first"
            )
        else:
            values.append(_texts(col.to_pylist()))
        names.append(str(name))
    return Columns(names, values, forced, None, table.num_rows)


def _from_dict(d: Dict[Any, Any]) -> Columns:
    names: List[str] = []
    values: List[Any] = []
    rows = None
    for key, v in d.items():
        name = str(key)
        a = np.asarray(v)
        if a.ndim != 1:
            raise BadInputError(f"column '{name}' is not one-dimensional; give one array per column")
        col, _ = _from_array(name, a)
        names.append(name)
        values.append(col)
        rows = len(a) if rows is None else rows
    return Columns(names, values, [], None, rows or 0)


def _from_matrix(a: np.ndarray, names: Optional[Sequence[str]]) -> Columns:
    if a.ndim != 2:
        raise BadInputError(f"an array of data must have two dimensions (rows by columns); this one has {a.ndim}")
    if names is None:
        raise UsageError("a 2-D array has no column names; give them with names=[...]")
    names = [str(n) for n in names]
    if len(names) != a.shape[1]:
        raise UsageError(f"names= gives {len(names)} names for the array's {a.shape[1]} columns")
    values = [_from_array(n, a[:, j])[0] for j, n in enumerate(names)]
    return Columns(names, values, [], None, a.shape[0])


def named_columns(data: Any, names: Optional[Sequence[str]] = None) -> Columns:
    """The named columns of ``data``: a pandas DataFrame, a pyarrow Table, a dict of
    1-D arrays (or lists) by column name, or a 2-D numpy array with ``names``."""
    if isinstance(data, np.ndarray):
        return _from_matrix(data, names)
    if names is not None:
        raise UsageError("names= is for a 2-D numpy array; other data carry their column names")
    if isinstance(data, dict):
        return _from_dict(data)
    module = type(data).__module__
    if module.startswith("pandas"):
        import pandas as pd

        if isinstance(data, pd.DataFrame):
            return _from_pandas(data)
    if module.startswith("pyarrow"):
        import pyarrow as pa

        if isinstance(data, pa.Table):
            return _from_arrow(data)
        if isinstance(data, pa.RecordBatch):
            return _from_arrow(pa.Table.from_batches([data]))
    raise UsageError(
        f"copse reads a pandas DataFrame, a pyarrow Table, a dict of arrays by column name or "
        f"a 2-D numpy array with names=; this is a {type(data).__name__}"
    )


def numeric_matrix(data: Any, names: Optional[Sequence[str]], inputs: Sequence[str]) -> Optional[np.ndarray]:
    """The model's ``inputs`` of ``data`` as a rows-by-inputs float64 matrix, without
    a copy when the data already is one; None when some input is absent or not
    numeric in ``data`` (then the named-columns path reads it, with its messages)."""
    inputs = list(inputs)
    if isinstance(data, np.ndarray):
        if data.ndim != 2 or data.dtype.kind not in "iuf":
            return None
        given = inputs if names is None else [str(n) for n in names]
        if given == inputs:
            return data if data.dtype == np.float64 else data.astype(np.float64)
        at = {n: j for j, n in enumerate(given)}
        if len(at) != len(given) or not all(n in at for n in inputs):
            return None
        return np.asarray(data[:, [at[n] for n in inputs]], dtype=np.float64)
    module = type(data).__module__
    if module.startswith("pandas"):
        import pandas as pd
        from pandas.api import types as pt

        if not isinstance(data, pd.DataFrame):
            return None
        cols = [str(c) for c in data.columns]
        if len(set(cols)) != len(cols) or not all(n in cols for n in inputs):
            return None
        label = {str(c): c for c in data.columns}
        for n in inputs:
            d = data[label[n]].dtype
            if isinstance(d, pd.CategoricalDtype) or pt.is_bool_dtype(d) or not pt.is_numeric_dtype(d) or pt.is_complex_dtype(d):
                return None
        return data[[label[n] for n in inputs]].to_numpy(dtype=np.float64, na_value=np.nan)
    if module.startswith("pyarrow"):
        import pyarrow as pa

        if not isinstance(data, pa.Table) or not all(n in data.column_names for n in inputs):
            return None
        cols = [data.column(n) for n in inputs]
        if not all(pa.types.is_integer(c.type) or pa.types.is_floating(c.type) for c in cols):
            return None
        # Nulls become NaN, the engine's missing number.
        return np.column_stack([c.cast(pa.float64()).to_numpy(zero_copy_only=False) for c in cols])
    if isinstance(data, dict):
        keyed = {str(k): v for k, v in data.items()}
        if not all(n in keyed for n in inputs):
            return None
        arrays = [np.asarray(keyed[n]) for n in inputs]
        if not all(a.ndim == 1 and a.dtype.kind in "iuf" for a in arrays):
            return None
        return np.column_stack([a.astype(np.float64, copy=False) for a in arrays]) if arrays else None
    return None
