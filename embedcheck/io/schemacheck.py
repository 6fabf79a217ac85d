"""A fast yes/no check of data against our JSON Schemas, to spare big files the full validator.

jsonschema explains errors well but costs about 50-80 microseconds per value on our
machines: a 10 MB chip file (1.6 million values) took about 50 s. Almost every file is
valid, so `compile_schema` turns a schema into nested Python closures that only say
"valid" or where the first failure is (the instance path and the sub-schema that
failed there, in file order). `yamlfile` runs it first and asks jsonschema for the
message only when it fails, and then only on the failing part of a big file.

Only the keywords our schemas use are supported (an unknown keyword is an error when
compiling, so a schema edit cannot silently widen what passes); their meaning follows
JSON Schema draft 2020-12 as jsonschema implements it (an integral float is an
integer; booleans are neither integers nor numbers; `pattern` is a search). The tests
hold it to jsonschema's verdict on the shipped samples and on thousands of mutated
documents.

One more thing it does that jsonschema does not: JSON Schema counts 3.0 as an integer,
and Python code slicing or counting with it fails, so a valid integral float in a place
that asks for an integer is replaced by the int (in the checked data, in place).

    >>> check = compile_schema({"type": "object", "required": ["a"],
    ...                         "properties": {"a": {"type": "integer", "minimum": 0}}})
    >>> check({"a": 3}) is None, check({"a": -1})[0], check({})[0]
    (True, ('a',), ())
    >>> data = {"a": 3.0}
    >>> check(data), data
    (None, {'a': 3})
"""
from __future__ import annotations

import re
from typing import Any, Callable

__all__ = ["compile_schema"]

Failure = tuple            # (instance path, sub-schema that failed there)
Check = Callable[[Any], "Failure | None"]

_ANNOTATIONS = {"$schema", "$id", "$comment", "title", "description", "default", "examples",
                "$defs"}
_TYPES = {
    "object": lambda v: isinstance(v, dict),
    "array": lambda v: isinstance(v, list),
    "string": lambda v: isinstance(v, str),
    "boolean": lambda v: isinstance(v, bool),
    "null": lambda v: v is None,
    "number": lambda v: isinstance(v, (int, float)) and not isinstance(v, bool),
    "integer": lambda v: (isinstance(v, int) and not isinstance(v, bool))
    or (isinstance(v, float) and v.is_integer()),
}


def compile_schema(schema: dict, root: dict | None = None) -> Check:
    """A function returning None when `instance` is valid, else (path, sub-schema)."""
    root = schema if root is None else root
    cache: dict[str, Check] = {}
    return _compile(schema, root, cache)


def _compile(schema: dict | bool, root: dict, cache: dict) -> Check:
    if schema is True or schema == {}:
        return lambda value: None
    if schema is False:
        return lambda value: ((), {"not": {}})
    unknown = set(schema) - _ANNOTATIONS - set(_KEYWORDS)
    if unknown:
        raise ValueError(f"schemacheck does not support the keyword(s) {sorted(unknown)}")
    checks = [_KEYWORDS[k](schema[k], schema, root, cache) for k in _ORDER if k in schema]
    checks = [c for c in checks if c is not None]

    def check(value):
        for one in checks:
            failure = one(value)
            if failure is not None:
                path, sub = failure
                return path, (schema if sub is None else sub)
        return None
    return check


def _here(ok: Callable[[Any], bool]) -> Check:
    """A keyword that either holds at this instance or fails here (sub-schema filled in later)."""
    return lambda value: None if ok(value) else ((), None)


def _type(want, schema, root, cache):
    tests = [_TYPES[t] for t in (want if isinstance(want, list) else [want])]
    return _here(lambda v: any(t(v) for t in tests))


def _equal(a, b) -> bool:
    if isinstance(a, bool) or isinstance(b, bool):
        return type(a) is type(b) and a == b
    if isinstance(a, (list, dict)) or isinstance(b, (list, dict)):
        return type(a) is type(b) and a == b
    return a == b


def _enum(values, schema, root, cache):
    return _here(lambda v: any(_equal(v, x) for x in values))


def _const(value, schema, root, cache):
    return _here(lambda v: _equal(v, value))


def _number(test):
    def keyword(bound, schema, root, cache):
        return _here(lambda v: not _TYPES["number"](v) or test(v, bound))
    return keyword


def _sized(kind, test):
    def keyword(bound, schema, root, cache):
        return _here(lambda v: not isinstance(v, kind) or test(len(v), bound))
    return keyword


def _pattern(text, schema, root, cache):
    regex = re.compile(text)
    return _here(lambda v: not isinstance(v, str) or regex.search(v) is not None)


def _required(keys, schema, root, cache):
    return _here(lambda v: not isinstance(v, dict) or all(k in v for k in keys))


def _wants_int(schema, root) -> bool:
    """Whether a valid value here that is an integral float should become an int."""
    if not isinstance(schema, dict):
        return False
    if "$ref" in schema and schema["$ref"].startswith("#/"):
        node = root
        for part in schema["$ref"][2:].split("/"):
            node = node[part]
        return _wants_int(node, root)
    kind = schema.get("type")
    if kind == "integer" or (isinstance(kind, list) and "integer" in kind
                             and "number" not in kind):
        return True
    return any(_wants_int(s, root) for s in schema.get("oneOf", []) + schema.get("anyOf", []))


def _as_int(container, key, item):
    if isinstance(item, float) and item.is_integer():
        container[key] = int(item)


def _properties(props, schema, root, cache):
    compiled = {k: _compile(s, root, cache) for k, s in props.items()}
    integral = {k for k, s in props.items() if _wants_int(s, root)}

    def check(value):
        if not isinstance(value, dict):
            return None
        for key, item in value.items():
            sub = compiled.get(key)
            if sub is not None:
                failure = sub(item)
                if failure is not None:
                    return (key,) + failure[0], failure[1]
                if key in integral:
                    _as_int(value, key, item)
        return None
    return check


def _additional(extra, schema, root, cache):
    known = set(schema.get("properties", {}))
    if extra is False:
        return _here(lambda v: not isinstance(v, dict) or all(k in known for k in v))
    sub = _compile(extra, root, cache)
    integral = _wants_int(extra, root)

    def check(value):
        if not isinstance(value, dict):
            return None
        for key, item in value.items():
            if key not in known:
                failure = sub(item)
                if failure is not None:
                    return (key,) + failure[0], failure[1]
                if integral:
                    _as_int(value, key, item)
        return None
    return check


def _property_names(names, schema, root, cache):
    sub = _compile(names, root, cache)
    return _here(lambda v: not isinstance(v, dict) or all(sub(k) is None for k in v))


def _items(items, schema, root, cache):
    sub = _compile(items, root, cache)
    integral = _wants_int(items, root)

    def check(value):
        if not isinstance(value, list):
            return None
        for i, item in enumerate(value):
            failure = sub(item)
            if failure is not None:
                return (i,) + failure[0], failure[1]
            if integral and type(item) is float:
                _as_int(value, i, item)
        return None
    return check


def _unique(flag, schema, root, cache):
    if not flag:
        return None
    return _here(lambda v: not isinstance(v, list) or len({_canonical(x) for x in v}) == len(v))


def _canonical(value) -> Any:
    """A hashable stand-in for a JSON value: equal (as JSON Schema compares) iff equal."""
    if isinstance(value, bool):
        return ("bool", value)
    if isinstance(value, (int, float)):
        return ("number", value)
    if isinstance(value, list):
        return ("array", tuple(_canonical(x) for x in value))
    if isinstance(value, dict):
        return ("object", frozenset((k, _canonical(x)) for k, x in value.items()))
    return (type(value).__name__, value)


def _one_of(options, schema, root, cache):
    subs = [_compile(s, root, cache) for s in options]
    return _here(lambda v: sum(sub(v) is None for sub in subs) == 1)


def _any_of(options, schema, root, cache):
    subs = [_compile(s, root, cache) for s in options]
    return _here(lambda v: any(sub(v) is None for sub in subs))


def _ref(target, schema, root, cache):
    if not target.startswith("#/"):
        raise ValueError(f"schemacheck follows only local references, not {target}")
    if target not in cache:
        node = root
        for part in target[2:].split("/"):
            node = node[part]
        cache[target] = None                          # a recursive reference resolves late
        cache[target] = _compile(node, root, cache)

    def check(value):
        return cache[target](value)
    return check


_KEYWORDS = {
    "type": _type, "enum": _enum, "const": _const,
    "minimum": _number(lambda v, b: v >= b), "maximum": _number(lambda v, b: v <= b),
    "exclusiveMinimum": _number(lambda v, b: v > b),
    "exclusiveMaximum": _number(lambda v, b: v < b),
    "minItems": _sized(list, lambda n, b: n >= b), "maxItems": _sized(list, lambda n, b: n <= b),
    "minLength": _sized(str, lambda n, b: n >= b), "maxLength": _sized(str, lambda n, b: n <= b),
    "minProperties": _sized(dict, lambda n, b: n >= b), "uniqueItems": _unique,
    "pattern": _pattern, "required": _required, "additionalProperties": _additional,
    "propertyNames": _property_names, "properties": _properties, "items": _items,
    "oneOf": _one_of, "anyOf": _any_of, "$ref": _ref,
}
# Checks on the instance itself first (a missing key at the top is reported before an
# error deep inside), then its parts in file order.
_ORDER = ("$ref", "type", "enum", "const", "minimum", "maximum", "exclusiveMinimum",
          "exclusiveMaximum", "minItems", "maxItems", "minLength", "maxLength", "minProperties",
          "uniqueItems", "pattern", "required", "additionalProperties", "propertyNames",
          "oneOf", "anyOf", "properties", "items")
