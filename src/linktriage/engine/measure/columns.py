"""Named numpy columns of equal length: the table the engine's stages hand each other.

A pandas DataFrame would serve, but the engine only ever reads whole columns; importing
pandas costs a third of a second, more than answering a one-port file takes. The engine
path (snapshot, window, measures, features, physics, guards, model, diagnosis) therefore
never imports pandas; :meth:`Columns.frame` makes one where a caller wants it.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
import numpy.typing as npt

if TYPE_CHECKING:
    import pandas as pd


class Columns(Mapping[str, npt.NDArray[Any]]):
    """Columns by name, in the order given, each a 1-D array with one value per row."""

    __slots__ = ("_data", "rows")

    def __init__(self, data: Mapping[str, npt.ArrayLike]) -> None:
        arrays = {name: np.asarray(values) for name, values in data.items()}
        lengths = {a.shape for a in arrays.values()}
        if len(lengths) > 1 or any(len(shape) != 1 for shape in lengths):
            raise ValueError(f"columns must be 1-D and of one length, not {sorted(lengths)}")
        self._data = arrays
        self.rows = next(iter(lengths))[0] if lengths else 0

    def __getitem__(self, name: str) -> npt.NDArray[Any]:
        return self._data[name]

    def __iter__(self) -> Iterator[str]:
        return iter(self._data)

    def __len__(self) -> int:
        return len(self._data)

    def row(self, i: int) -> dict[str, Any]:
        """Row ``i`` as plain Python values, by column name."""
        return {name: values[i].item() for name, values in self._data.items()}

    def matrix(self, dtype: npt.DTypeLike) -> npt.NDArray[Any]:
        """Every column side by side, rows by columns, C-contiguous."""
        if not self._data:
            return np.zeros((self.rows, 0), dtype)
        return np.ascontiguousarray(np.column_stack(list(self._data.values())), dtype)

    def frame(self) -> pd.DataFrame:
        """The columns as a pandas DataFrame (imports pandas: for callers that can afford it)."""
        import pandas as pd

        return pd.DataFrame(self._data, columns=list(self._data))
