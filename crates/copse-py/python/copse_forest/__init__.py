"""copse for Python: random forests and bagged trees from pandas, Arrow or numpy data.

The same engine and model files as the ``copse`` command: :func:`train` grows a
forest (the model file is byte-identical to ``copse train``'s for the same data,
source name and settings), :func:`load` reads a model file either wrote, and a
:class:`Model` scores new rows, evaluates itself on labelled rows, measures
held-out importance, and reports what it is. Reports are plain dicts and lists with
the keys of the command's ``--json`` reports; scored rows are a pandas DataFrame
(a dict of numpy arrays without pandas).

Example::

    import pandas as pd
    import copse_forest as copse

    mains = pd.read_csv("demo-data/water_mains.csv")
    model = copse.train(mains, target="failed_within_year", ignore="segment_id", trees=200)
    scored = model.score(pd.read_csv("demo-data/water_mains_to_score.csv"), keep="segment_id")
    model.oob["error"]

Validate models on your own data, and do not use them as the sole basis for
decisions about people or safety.
"""

from . import _native
from ._errors import BadInputError, CopseError, CopseWarning, DamagedModelError, UsageError
from ._model import DEFAULT_SOURCE, Model, load, merge, pool, train
from ._parts import Part, load_part

__version__: str = _native.COPSE_VERSION

__all__ = [
    "train",
    "load",
    "Model",
    "Part",
    "merge",
    "pool",
    "load_part",
    "CopseError",
    "BadInputError",
    "DamagedModelError",
    "UsageError",
    "CopseWarning",
    "DEFAULT_SOURCE",
    "__version__",
]
