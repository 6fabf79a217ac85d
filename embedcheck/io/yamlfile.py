"""Strict YAML reading: line numbers for every value, JSON Schema validation, one-line errors.

`read_yaml(path, schema_name)` returns a `Document`: the plain data plus the line of
every key path, so the loaders can point at the offending line even for checks the
schema cannot express (a coupler naming a missing qubit, say). Schemas live in
`embedcheck/schemas/*.schema.json` (JSON Schema draft 2020-12).
"""
from __future__ import annotations

import json
import math
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from pathlib import Path
from typing import Any

import jsonschema
import yaml

from ..errors import InputError, did_you_mean
from .files import read_input

__all__ = ["Document", "key_name", "parse_yaml", "read_yaml", "schema"]

KeyPath = tuple  # of str keys and int list indices


@dataclass(frozen=True)
class Document:
    """Parsed YAML data with the 1-based line of every key path."""

    file: str
    data: Any
    lines: dict

    def line(self, path: KeyPath) -> int | None:
        """The line of `path`, or of its nearest ancestor that has one."""
        path = tuple(path)
        while path and path not in self.lines:
            path = path[:-1]
        return self.lines.get(path)

    def error(self, path: KeyPath, message: str) -> InputError:
        """An InputError pointing at `path` in this document."""
        return InputError(message, file=self.file, line=self.line(path), key=key_name(path))


def key_name(path: KeyPath) -> str | None:
    """`('couplers', 3, 'coupler')` -> `'couplers[3].coupler'`."""
    out = ""
    for part in path:
        out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out else str(part))
    return out or None


@lru_cache(maxsize=None)
def schema(name: str) -> dict:
    """The packaged JSON Schema `name` (e.g. 'chip')."""
    text = resources.files("embedcheck.schemas").joinpath(f"{name}.schema.json").read_text()
    return json.loads(text)


def read_yaml(path: str | Path, schema_name: str) -> Document:
    """Read and validate one YAML file; raise InputError on the first problem."""
    file = str(path)
    text = read_input(path)
    return parse_yaml(text, file, schema_name)


def parse_yaml(text: str, file: str, schema_name: str) -> Document:
    """Parse YAML text (named `file` in messages) and validate it against a schema."""
    try:
        node = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        problem = getattr(exc, "problem", None) or str(exc).splitlines()[0]
        raise InputError(f"YAML syntax error: {problem}", file=file,
                         line=mark.line + 1 if mark else None) from None
    if node is None:
        raise InputError("file is empty", file=file)
    _refuse_alias_bombs(node, file)
    lines: dict = {}
    budget = [_MAX_NODES]
    data = _to_python(node, (), lines, file, budget)
    doc = Document(file, data, lines)
    _check_kind(doc, schema_name)
    _validate(doc, schema(schema_name))
    return doc


def _check_kind(doc: Document, schema_name: str) -> None:
    """A clear message when the file is not a mapping, or is another kind of file."""
    if not isinstance(doc.data, dict):
        raise InputError(f"a {schema_name} file must be a mapping of keys, found "
                         f"{type(doc.data).__name__}", file=doc.file, line=1)
    key = f"embedcheck_{schema_name}"
    if key in doc.data:
        if doc.data[key] != 1 or isinstance(doc.data[key], bool):
            got = doc.data[key]
            hint = " (write the number 1, not a string)" if got == "1" else \
                " (this embedcheck reads version 1)"
            raise doc.error((key,), f"format version {got!r} is not supported{hint}")
        return
    other = [k for k in doc.data if k.startswith("embedcheck_")]
    if other:
        raise InputError(f"this is a {other[0][len('embedcheck_'):]} file, but a {schema_name} "
                         f"file was expected here", file=doc.file, line=doc.line((other[0],)))
    raise InputError(f"missing the version key '{key}: 1' (is this a {schema_name} file?)",
                     file=doc.file, line=1)


_MAX_NODES = 1_000_000      # values after expanding aliases; refuses "billion laughs" files
_PLAIN_TAGS = {f"tag:yaml.org,2002:{t}" for t in
               ("map", "seq", "str", "int", "float", "bool", "null", "timestamp")}


def _children(node: Any) -> list[Any]:
    """The value nodes `_to_python` visits below `node` (mapping values, sequence items)."""
    if isinstance(node, yaml.MappingNode):
        return [value for _, value in node.value]
    if isinstance(node, yaml.SequenceNode):
        return list(node.value)
    return []


def _refuse_alias_bombs(root: Any, file: str) -> None:
    """Refuse, before building anything, a file that expands past `_MAX_NODES` values.

    An alias repeats a node, so the expanded size is counted once per distinct node
    (memoised); the error names the line of the value at which the count passes the
    limit, in the order `_to_python` visits values. Time: one pass over the distinct
    nodes, however many values the aliases would make.
    """
    sizes: dict[int, int] = {}
    order: list[Any] = []                  # distinct nodes, parents before children
    stack, seen = [root], set()
    while stack:
        node = stack.pop()
        if id(node) in seen:
            continue
        seen.add(id(node))
        order.append(node)
        stack.extend(_children(node))
    for node in reversed(order):           # children before parents (the graph is acyclic)
        sizes[id(node)] = 1 + sum(sizes.get(id(c), 0) for c in _children(node))
    if sizes[id(root)] <= _MAX_NODES:
        return
    node, left = root, _MAX_NODES
    while True:                            # walk down to the value that passes the limit
        left -= 1
        if left < 0:
            break
        for child in _children(node):
            if sizes[id(child)] <= left:
                left -= sizes[id(child)]
                continue
            node = child
            break
    raise InputError(f"the file expands to more than {_MAX_NODES} values (through YAML "
                     "aliases?); refusing to read it", file=file, line=node.start_mark.line + 1)


def _to_python(node, path, lines, file, budget):
    """Turn a composed YAML node into plain data, recording lines; reject duplicate keys.

    Only plain YAML types are built: a tag such as `!!python/object` is an error (never
    constructed), and a file that expands past `_MAX_NODES` values through aliases is
    refused. Timestamps stay the strings they were written as.
    """
    budget[0] -= 1
    if budget[0] < 0:
        raise InputError(f"the file expands to more than {_MAX_NODES} values (through YAML "
                         "aliases?); refusing to read it", file=file, line=node.start_mark.line + 1)
    if node.tag not in _PLAIN_TAGS:
        raise InputError(f"YAML tag '{node.tag}' is not allowed: only plain values, lists and "
                         "mappings", file=file, line=node.start_mark.line + 1)
    lines.setdefault(path, node.start_mark.line + 1)
    if isinstance(node, yaml.MappingNode):
        out = {}
        for key_node, value_node in node.value:
            if not isinstance(key_node, yaml.ScalarNode) or key_node.tag not in _PLAIN_TAGS:
                raise InputError("a key must be a plain value", file=file,
                                 line=key_node.start_mark.line + 1)
            key = str(_scalar(key_node))
            if key in out:
                raise InputError(f"duplicate key '{key}'", file=file,
                                 line=key_node.start_mark.line + 1, key=key_name(path + (key,)))
            lines[path + (key,)] = key_node.start_mark.line + 1
            out[key] = _to_python(value_node, path + (key,), lines, file, budget)
        return out
    if isinstance(node, yaml.SequenceNode):
        return [_to_python(item, path + (i,), lines, file, budget)
                for i, item in enumerate(node.value)]
    value = node.value if node.tag.endswith(":timestamp") else _scalar(node)
    if isinstance(value, float) and not math.isfinite(value):
        raise InputError(f"{node.value} is not a finite number", file=file,
                         line=node.start_mark.line + 1, key=key_name(path))
    if isinstance(value, str) and node.style in ("|", ">"):
        # Block scalars start on the line after their indicator; remember that offset
        # so OpenQASM written inline can report lines of the YAML file.
        lines[path + ("<text>",)] = node.start_mark.line + 2
    return value


def _scalar(node):
    return yaml.SafeLoader.construct_object(yaml.SafeLoader(""), node)


def _validate(doc: Document, the_schema: dict) -> None:
    validator = jsonschema.Draft202012Validator(the_schema)
    errors = list(validator.iter_errors(doc.data))
    if not errors:
        return
    # Report the error that comes first in the file, deepest first at equal lines.
    errors.sort(key=lambda e: (doc.line(tuple(e.absolute_path)) or 0, -len(e.absolute_path)))
    raise _explain(doc, errors[0])


def _explain(doc: Document, err: jsonschema.ValidationError) -> InputError:
    path = tuple(err.absolute_path)
    if err.validator == "additionalProperties":
        known = list(err.schema.get("properties", {}))
        extra = sorted(set(err.instance) - set(known))
        unknown = extra[0] if extra else "?"
        key_path = path + (unknown,)
        return InputError(f"unknown key '{unknown}'{did_you_mean(unknown, known)}",
                          file=doc.file, line=doc.line(key_path), key=key_name(key_path))
    if err.validator == "required":
        missing = err.message.split("'")[1] if "'" in err.message else err.message
        return doc.error(path, f"missing required key '{missing}'")
    if err.validator == "enum":
        choices = ", ".join(repr(c) for c in err.validator_value)
        return doc.error(path, f"{err.instance!r} is not one of {choices}"
                               f"{did_you_mean(err.instance, err.validator_value)}")
    if err.validator in ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum"):
        bound = {"minimum": ">=", "maximum": "<=", "exclusiveMinimum": ">",
                 "exclusiveMaximum": "<"}[err.validator]
        hint = " (a probability must lie in [0, 1])" if path and "error" in str(path[-1]) else ""
        return doc.error(path, f"{err.instance!r} must be {bound} {err.validator_value}{hint}")
    if err.validator == "type":
        want = err.validator_value
        want = " or ".join(want) if isinstance(want, list) else want
        return doc.error(path, f"{err.instance!r} should be of type {want}")
    if err.validator == "const":
        return doc.error(path, f"must be {err.validator_value!r}, got {err.instance!r}")
    if err.validator == "oneOf" or err.validator == "anyOf":
        return doc.error(path, f"{err.instance!r} is not valid here: expected "
                               + err.schema.get("description", "another form"))
    return doc.error(path, err.message)
