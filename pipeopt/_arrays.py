"""Input-kind handling shared by the vectorized functions.

The public functions accept scalars, lists, numpy arrays and pandas Series, broadcast them like
numpy, and give back the same kind: a plain ``float`` when every input was a scalar, a
``pandas.Series`` (keeping the first Series' index and name) when any input was a Series, and an
``numpy.ndarray`` otherwise (lists come back as arrays, as numpy itself does).

A :class:`pint.Quantity` is converted to the SI base units of its dimension (``420 m^3/h``
becomes 0.11667 m³/s, ``15 degC`` becomes 288.15 K): the functions work in SI, so a Quantity
in any unit gives the right answer instead of having its unit stripped.

pandas is not imported here: an input can only be a Series if pandas is already loaded, so the
check looks it up in :data:`sys.modules` (importing pipeopt stays cheap).
"""

from __future__ import annotations

import sys
from typing import Any

import numpy as np


def series_type() -> type | tuple:
    """``pandas.Series`` if pandas is loaded, else ``()`` (``isinstance(x, ())`` is False)."""
    pd = sys.modules.get("pandas")
    return pd.Series if pd is not None else ()


def as_float_arrays(*values: Any) -> tuple[tuple[np.ndarray, ...], Any]:
    """Broadcast inputs to float64 arrays and remember how to give the result back.

    Returns the broadcast arrays and a *template* for :func:`restore`: ``None`` for all-scalar
    input, the first Series for Series input, or ``"array"``.
    """
    template: Any = None
    any_array = False
    converted = []
    series = series_type()
    for v in values:
        if hasattr(v, "to_base_units") and hasattr(v, "magnitude"):  # a pint Quantity
            v = v.to_base_units().magnitude
        if isinstance(v, series):
            if template is None or template == "array":
                template = v
            converted.append(v.to_numpy(dtype=float))
        else:
            a = np.asarray(v, dtype=float)
            if a.ndim > 0:
                any_array = True
            converted.append(a)
    if template is None and any_array:
        template = "array"
    arrays = np.broadcast_arrays(*converted)
    return tuple(arrays), template


def restore(result: np.ndarray, template: Any) -> Any:
    """Give ``result`` back in the kind recorded by :func:`as_float_arrays`."""
    if template is None:
        return float(np.asarray(result).reshape(()))
    if isinstance(template, series_type()):
        return type(template)(np.asarray(result).reshape(len(template)), index=template.index,
                         name=template.name)
    return np.asarray(result)


#: Up to this many entries on the last axis, :func:`last_axis_sum` adds them one by one: numpy's
#: own sum over such a short axis adds them in the same order (its pairwise summation starts at
#: eight), so the bits are the same; it is the reduction's set-up that costs.
_SHORT_AXIS = 8


def _last_axis(x: Any, ufunc: np.ufunc) -> np.ndarray:
    """``ufunc.reduce(x, axis=-1)``, slice by slice when the last axis is short."""
    x = np.asarray(x)
    n = x.shape[-1]
    if n == 0 or n >= _SHORT_AXIS:
        return ufunc.reduce(x, axis=-1)
    out = np.array(x[..., 0])
    for k in range(1, n):
        ufunc(out, x[..., k], out=out)
    return out


def last_axis_sum(x: Any) -> np.ndarray:
    """``x.sum(axis=-1)``, bit for bit, fast when the last axis is short (duty points).

    numpy's reductions over a short innermost axis pay their set-up per output element (about
    450 µs for a (231, 41, 2) array against 11 µs for the elementwise form); adding the
    slices one after another gives the same sum in the same order.
    """
    return _last_axis(x, np.add)


def last_axis_max(x: Any) -> np.ndarray:
    """``x.max(axis=-1)`` (NaN propagating as numpy's), fast when the last axis is short."""
    return _last_axis(x, np.maximum)
