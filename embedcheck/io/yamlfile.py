"""Strict YAML reading: line numbers for every value, JSON Schema validation, one-line errors.

`read_yaml(path, schema_name)` returns a `Document`: the plain data plus the line of
every key path, so the loaders can point at the offending line even for checks the
schema cannot express (a coupler naming a missing qubit, say). Schemas live in
`embedcheck/schemas/*.schema.json` (JSON Schema draft 2020-12). `plain_yaml` is the
reader underneath: plain values only, nesting and alias expansion bounded.

    >>> data, lines = plain_yaml("a: [1, 2]\\nb: x\\n", "t.yaml")
    >>> data, lines[("b",)]
    ({'a': [1, 2], 'b': 'x'}, 2)
"""
from __future__ import annotations

import json
import math
import re
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from pathlib import Path
from typing import Any

import jsonschema
import yaml

from ..errors import InputError, did_you_mean, without_quotes
from .files import read_input
from .limits import MAX_ALIAS_VALUES, MAX_YAML_DEPTH
from .schemacheck import compile_schema

__all__ = ["Document", "file_kind", "key_name", "parse_yaml", "plain_yaml", "read_yaml",
           "schema"]

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


def file_kind(path: str | Path) -> str:
    """'chip', 'patch', 'project' or 'sweep', from a YAML file's version key.

    A file without one is refused with the reason a loader would give (it is empty, not
    YAML, nested too deep, not a mapping), or else for its missing version key.
    """
    file = str(path)
    text = read_input(path)
    m = _VERSION_KEY.search(text)
    if m:
        return m.group(1)
    data, _ = plain_yaml(text, file)
    if not isinstance(data, dict):
        raise InputError("a chip or patch file must be a mapping of keys, found "
                         f"{type(data).__name__}", file=file, line=1)
    raise InputError("not a chip or patch file: it needs a version key 'embedcheck_chip: 1' "
                     "or 'embedcheck_patch: 1'", file=file, line=1)


_VERSION_KEY = re.compile(r"^embedcheck_(chip|patch|project|sweep)\s*:", re.M)


def parse_yaml(text: str, file: str, schema_name: str) -> Document:
    """Parse YAML text (named `file` in messages) and validate it against a schema."""
    data, lines = plain_yaml(text, file)
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
            if isinstance(got, (int, float)) and not isinstance(got, bool):
                raise doc.error((key,), f"format version {got} is not supported (this "
                                        "embedcheck reads version 1)")
            hint = " (write the number 1, without quotes)" if got == "1" else ""
            raise doc.error((key,), f"the format version must be the number 1, not "
                                    f"{shown(got)}{hint}")
        return
    other = [k for k in doc.data if k.startswith("embedcheck_")]
    if other:
        raise InputError(f"this is a {other[0][len('embedcheck_'):]} file, but a {schema_name} "
                         f"file was expected here", file=doc.file, line=doc.line((other[0],)))
    raise InputError(f"missing the version key '{key}: 1' (is this a {schema_name} file?)",
                     file=doc.file, line=1)


_PLAIN_TAGS = {f"tag:yaml.org,2002:{t}" for t in
               ("map", "seq", "str", "int", "float", "bool", "null", "timestamp")}
_LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)      # libyaml when installed
_RESOLVER = yaml.resolver.Resolver()
_CONSTRUCTOR = yaml.constructor.SafeConstructor()
_DECIMAL = re.compile(r"[-+]?(?:0|[1-9][0-9]{0,17})")        # YAML 1.1 reads these as int()
_DOTTED = re.compile(r"[-+]?[0-9]{1,30}\.[0-9]{0,30}")       # ... and these as float()


class _Open:
    """A mapping or list being filled while the events stream by."""

    __slots__ = ("value", "path", "key", "anchor", "size", "line", "is_list")

    def __init__(self, value, path, anchor, line):
        self.value, self.path, self.anchor, self.line = value, path, anchor, line
        self.is_list = isinstance(value, list)
        self.key = None                 # a mapping's key waiting for its value
        self.size = 1                   # values in it, itself included


_NOT_A_KEY = "a key must be a plain value (a word or a number), not a list, a mapping or an alias"


def plain_yaml(text: str, file: str) -> tuple[Any, dict]:
    """Plain data and the line of every key path, from YAML text, without recursion.

    The parser's events are assembled on an explicit stack, so that nesting is refused
    at `MAX_YAML_DEPTH` before anything deep is built (a recursive composer overflows
    the stack on a 20000-deep list). Only plain YAML types are built: a tag such as
    `!!python/object` is an error (never constructed). An alias shares the value of
    its anchor; the values aliases add are counted as they appear, and past
    `MAX_ALIAS_VALUES` the file is refused at once ("billion laughs"), before any
    expansion. Duplicate keys, merge keys (`<<`) and non-scalar keys are errors.
    Timestamps stay the strings they were written as. A list item on the line where
    its list starts gets no line of its own (`Document.line` falls back to the list's):
    that keeps the table small for the couplers of a big chip.
    """
    lines: dict = {}
    anchors: dict = {}                  # name -> (value, size)
    stack: list[_Open] = []
    root: list = []
    documents = 0
    added = 0                           # values added through aliases
    words: dict = {}                    # plain scalar text -> value, for repeated words
    scalar_event, alias_event = yaml.ScalarEvent, yaml.AliasEvent
    starts = (yaml.MappingStartEvent, yaml.SequenceStartEvent)
    ends = (yaml.MappingEndEvent, yaml.SequenceEndEvent)

    def fail(message, event, key=None):
        return InputError(message, file=file, line=event.start_mark.line + 1, key=key)

    def put(top, value, size, line, event, scalar):
        """Add a finished value to the open container `top` (or make it the root)."""
        if top is None:
            root.append(value)
            lines.setdefault((), line)
            return
        top.size += size
        if top.is_list:
            if line != top.line:
                lines[top.path + (len(top.value),)] = line
            top.value.append(value)
        elif top.key is None:
            if not scalar:
                raise fail(_NOT_A_KEY, event)
            key = str(value)
            if key in top.value:
                raise fail(f"duplicate key '{key}'", event, key_name(top.path + (key,)))
            lines[top.path + (key,)] = line
            top.key = key
        else:
            top.value[top.key] = value
            top.key = None

    loader = _LOADER(text)
    try:
        while True:
            event = loader.get_event()
            kind = type(event)
            if kind is scalar_event:
                top = stack[-1] if stack else None
                text_ = event.value
                if event.tag is None and event.implicit[0] and not event.style \
                        and event.anchor is None:
                    value = words.get(text_, words)
                    if value is words:
                        value = _scalar(event, file, top)
                        if isinstance(value, str) and len(text_) < 64:
                            words[text_] = value
                else:
                    value = _scalar(event, file, top)
                    if event.anchor is not None:
                        anchors[event.anchor] = (value, 1)
                line = event.start_mark.line + 1
                if event.style in ("|", ">") and top is not None and \
                        (top.is_list or top.key is not None):
                    # Block scalars start on the line after their indicator; remember
                    # that offset so inline OpenQASM can report lines of the YAML file.
                    path = top.path + ((len(top.value),) if top.is_list else (top.key,))
                    lines.setdefault(path, line)
                    lines[path + ("<text>",)] = line + 1
                put(top, value, 1, line, event, True)
            elif kind in starts:
                if event.tag not in (None, "!") and event.tag not in _PLAIN_TAGS:
                    raise fail(f"YAML tag '{event.tag}' is not allowed: only plain values, "
                               "lists and mappings", event)
                if len(stack) >= MAX_YAML_DEPTH:
                    raise fail(f"lists and mappings nested more than {MAX_YAML_DEPTH} deep; "
                               "refusing to read further", event)
                line = event.start_mark.line + 1
                top = stack[-1] if stack else None
                if top is None:
                    path = ()
                elif top.is_list:
                    path = top.path + (len(top.value),)
                elif top.key is None:
                    raise fail(_NOT_A_KEY, event)
                else:
                    path = top.path + (top.key,)
                lines.setdefault(path, line)
                stack.append(_Open({} if kind is starts[0] else [], path, event.anchor, line))
            elif kind in ends:
                done = stack.pop()
                if done.anchor is not None:
                    anchors[done.anchor] = (done.value, done.size)
                put(stack[-1] if stack else None, done.value, done.size, done.line, event,
                    False)
            elif kind is alias_event:
                if event.anchor not in anchors:
                    if any(o.anchor == event.anchor for o in stack):
                        raise fail("an alias refers to a value that contains it", event)
                    raise fail("an alias refers to an anchor that is not defined before it",
                               event)
                value, size = anchors[event.anchor]
                added += size
                if added > MAX_ALIAS_VALUES:
                    raise fail(f"YAML aliases expand the file by more than {MAX_ALIAS_VALUES:,} "
                               "values; refusing to read it", event)
                put(stack[-1] if stack else None, value, size, event.start_mark.line + 1,
                    event, False)
            elif kind is yaml.DocumentStartEvent:
                documents += 1
                if documents > 1:
                    raise fail("a second YAML document ('---'): give one document per file",
                               event)
            elif kind is yaml.StreamEndEvent or event is None:
                break
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        problem = _yaml_problem(exc)
        if "nesting depth" in problem:       # newer PyYAML parsers stop deep nesting first
            raise InputError(f"lists and mappings nested more than {MAX_YAML_DEPTH} deep; "
                             "refusing to read further", file=file,
                             line=mark.line + 1 if mark else None) from None
        raise InputError(f"YAML syntax error: {problem}", file=file,
                         line=mark.line + 1 if mark else None) from None
    finally:
        loader.dispose()
    if not root:
        raise InputError("file is empty", file=file)
    return root[0], lines


def _scalar(event, file, top):
    """The plain value of a scalar event, as PyYAML's safe loader builds it."""
    value = event.value
    tag = event.tag
    if tag in (None, "!"):
        if event.implicit[0] and not event.style:
            if _DECIMAL.fullmatch(value):
                return int(value)
            if _DOTTED.fullmatch(value):
                return float(value)
        tag = _RESOLVER.resolve(yaml.ScalarNode, value, event.implicit)
    line = event.start_mark.line + 1
    if tag == "tag:yaml.org,2002:merge":
        raise InputError("YAML merge keys ('<<') are not supported: write the keys out",
                         file=file, line=line)
    if tag not in _PLAIN_TAGS:
        raise InputError(f"YAML tag '{tag}' is not allowed: only plain values, lists and "
                         "mappings", file=file, line=line)
    if tag.endswith((":str", ":timestamp")):
        return value
    key = None
    if top is not None and (top.is_list or top.key is not None):
        key = key_name(top.path + ((len(top.value),) if top.is_list else (top.key,)))
    if tag.endswith(":int") and len(value) > 40:
        raise InputError(f"a number of {len(value)} digits is too large", file=file,
                         line=line, key=key)
    node = yaml.ScalarNode(tag, value, event.start_mark, event.end_mark, event.style)
    value = _CONSTRUCTOR.yaml_constructors[tag](_CONSTRUCTOR, node)
    if isinstance(value, float) and not math.isfinite(value):
        raise InputError(f"{event.value} is not a finite number", file=file, line=line, key=key)
    return value


def _yaml_problem(exc) -> str:
    """The parser's description of a syntax error, without any text of the file.

    PyYAML and libyaml quote the offending characters in some messages ("found
    character '%' that cannot start any token"); CI logs are public, so quoted text is
    left out: the line number says where to look.
    """
    problem = getattr(exc, "problem", None) or str(exc).splitlines()[0]
    return without_quotes(problem)


_FULL_EXPLAIN_VALUES = 50_000    # below this many values, jsonschema explains the whole file


@lru_cache(maxsize=None)
def _fast_check(name: str):
    return compile_schema(schema(name))


def _validate(doc: Document, the_schema: dict) -> None:
    """Raise the InputError of the first schema error in the file, if any.

    The fast check decides; jsonschema writes the message. On a big file it is asked
    only about the part that failed (with the sub-schema that failed there), because
    it is too slow for a million values.
    """
    name = the_schema.get("$id", "").split("/")[-1].split(".")[0]
    failure = _fast_check(name)(doc.data) if name and schema(name) is the_schema else ((), None)
    if failure is None:
        return
    path, sub = failure
    if sub is None or len(doc.lines) < _FULL_EXPLAIN_VALUES:
        path, sub = (), the_schema
    part = {**sub, "$defs": the_schema.get("$defs", {})}
    errors = list(jsonschema.Draft202012Validator(part).iter_errors(_at(doc.data, path)))
    if not errors and path:
        path = ()
        errors = list(jsonschema.Draft202012Validator(the_schema).iter_errors(doc.data))
    if not errors:
        return
    # Report the error that comes first in the file, deepest first at equal lines.
    found = [(path + tuple(e.absolute_path), e) for e in errors]
    found.sort(key=lambda pe: (doc.line(pe[0]) or 0, -len(pe[0])))
    raise _explain(doc, *found[0])


def _at(data, path):
    for part in path:
        data = data[part]
    return data


def _explain(doc: Document, path: KeyPath, err: jsonschema.ValidationError) -> InputError:
    """One line for a schema error. Keys, numbers and the schema's own words are named;
    strings from the file are not (see `shown`)."""
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
        got = "" if isinstance(err.instance, str) else f", not {shown(err.instance)}"
        return doc.error(path, f"must be one of {choices}{got}"
                               f"{did_you_mean(err.instance, err.validator_value)}")
    if err.validator in ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum"):
        bound = {"minimum": ">=", "maximum": "<=", "exclusiveMinimum": ">",
                 "exclusiveMaximum": "<"}[err.validator]
        hint = " (a probability must lie in [0, 1])" if path and "error" in str(path[-1]) else ""
        return doc.error(path, f"{shown(err.instance)} must be {bound} "
                               f"{err.validator_value}{hint}")
    if err.validator == "type":
        want = err.validator_value
        want = " or ".join(_TYPE_NAMES.get(str(w), str(w))
                           for w in (want if isinstance(want, list) else [want]))
        return doc.error(path, f"should be {want}, not {shown(err.instance)}")
    if err.validator == "const":
        return doc.error(path, f"must be {err.validator_value!r}, not {shown(err.instance)}")
    if err.validator == "oneOf" or err.validator == "anyOf":
        deeper = [e for e in err.context if e.relative_path]
        if deeper:          # the branch of the right shape failed inside: say where and why
            inner = max(deeper, key=lambda e: len(e.relative_path))
            return _explain(doc, path + tuple(inner.relative_path), inner)
        return doc.error(path, f"{shown(err.instance)} is not valid here: expected "
                               + err.schema.get("description", "another form"))
    if err.validator == "pattern":
        owner = _at(doc.data, path)
        if isinstance(owner, dict) and err.instance in owner:        # a key (propertyNames)
            return doc.error(path + (err.instance,), f"the name '{err.instance}' does not "
                                                     f"match the pattern {err.validator_value}")
        return doc.error(path, f"does not match the pattern {err.validator_value}")
    if err.validator in ("minItems", "maxItems"):
        word = "at least" if err.validator == "minItems" else "at most"
        return doc.error(path, f"needs {word} {err.validator_value} item(s), has "
                               f"{len(err.instance)}")
    if err.validator == "minLength":
        return doc.error(path, f"needs at least {err.validator_value} character(s)")
    if err.validator == "minProperties":
        return doc.error(path, f"needs at least {err.validator_value} key(s)")
    return doc.error(path, without_quotes(err.message))


_TYPE_NAMES = {"integer": "a whole number", "number": "a number", "string": "a string",
               "array": "a list", "object": "a mapping", "boolean": "true or false",
               "null": "empty"}


def shown(value) -> str:
    """How an error names a value from a file: numbers as they are, anything else by its
    kind, so that no text of the file reaches a (possibly public) log.

    >>> shown(0.5), shown(True), shown("hunter2"), shown([1, 2])
    ('0.5', 'true', 'a string', 'a list of 2 item(s)')
    """
    if isinstance(value, bool):
        return "true" if value else "false"
    if value is None:
        return "an empty value"
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, str):
        return "a string"
    if isinstance(value, list):
        return f"a list of {len(value)} item(s)"
    if isinstance(value, dict):
        return "a mapping"
    return type(value).__name__
