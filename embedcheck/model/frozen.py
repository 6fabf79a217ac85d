"""Pickling for our frozen dataclasses, whose mapping fields are read-only views
(`types.MappingProxyType`), which the standard pickler refuses. Worker processes
(`--processes`) need devices and patches, so both rebuild from plain dicts.

    >>> import pickle
    >>> from embedcheck.model.device import Device
    >>> dev = Device(name="pair", qubits=(0, 1), couplers=((0, 1),))
    >>> dev.live_couplers                      # cached on first use
    ((0, 1),)
    >>> pickle.loads(pickle.dumps(dev)) == dev
    True
"""
from __future__ import annotations

from dataclasses import fields
from types import MappingProxyType
from typing import Any

__all__ = ["reduce_frozen"]


def reduce_frozen(obj: Any) -> tuple[Any, ...]:
    """`__reduce__` for a frozen dataclass: its init fields, views turned into dicts;
    cached values (`functools.cached_property`, kept in the instance dict) are not
    pickled and are rebuilt on demand after unpickling."""
    kwargs = {}
    for f in fields(obj):
        if f.init:
            value = getattr(obj, f.name)
            kwargs[f.name] = dict(value) if isinstance(value, MappingProxyType) else value
    return _rebuild, (type(obj), kwargs)


def _rebuild(cls: type, kwargs: dict[str, Any]) -> Any:
    return cls(**kwargs)
