"""Pickling for our frozen dataclasses, whose mapping fields are read-only views
(`types.MappingProxyType`), which the standard pickler refuses. Worker processes
(`--processes`) need devices and patches, so both rebuild from plain dicts."""
from __future__ import annotations

from dataclasses import fields
from types import MappingProxyType


def reduce_frozen(obj):
    """`__reduce__` for a frozen dataclass: its init fields, views turned into dicts;
    cached values (kept in the instance dict) are rebuilt on demand after unpickling."""
    kwargs = {}
    for f in fields(obj):
        if f.init:
            value = getattr(obj, f.name)
            kwargs[f.name] = dict(value) if isinstance(value, MappingProxyType) else value
    return _rebuild, (type(obj), kwargs)


def _rebuild(cls, kwargs):
    return cls(**kwargs)
