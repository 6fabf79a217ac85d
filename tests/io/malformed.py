"""A generator of malformed input files, for fuzzing every reader of embedcheck.

`mutants(seeds, count, seed)` takes valid files (chip, patch, OpenQASM, stim, project)
and returns `count` broken copies, each made by one or two random mutations:
truncations, deleted, repeated or swapped lines (duplicate keys, dangling references),
type swaps on the parsed YAML, huge and odd numbers (10^12, 50 digits, 1e400, NaN,
inf, negative probabilities), deep nesting, binary junk and invalid UTF-8, Unicode
oddities (byte-order marks, zero-width spaces, line separators, right-to-left marks),
wrong version keys, YAML aliases, tags and tabs, and format-specific damage for
OpenQASM (indices, register sizes, recursive gates, angles, missing semicolons) and
stim (REPEAT counts, probabilities, targets). Every mutant is deterministic in `seed`.

Run on its own, it fuzzes the command line at scale and prints what it saw:

    python tests/io/malformed.py --count 2000 --seed 1

(`tests/io/test_fuzz_inputs.py` runs a smaller, fixed sample in the suite.) Not a test
module itself.
"""
from __future__ import annotations

import random
import re
from dataclasses import dataclass

import yaml


@dataclass(frozen=True)
class Mutant:
    name: str            # e.g. "chip-17-swap_lines"
    kind: str            # chip, patch (YAML, .qasm or .stim) or project
    suffix: str          # .yaml, .qasm or .stim
    data: bytes


ODD_NUMBERS = ["1e400", "-1", "0", "1000000000000", "9" * 50, ".nan", ".inf", "-.inf", "-0.5",
               "1.5", "0x10", "1_000", "nan", "inf", "true", "null", "[]", "{}", "''", "1e-400",
               "2147483648", "-0", "007", "1:20", "3.0", "~"]
ODD_TEXT = ["\x00", "\x1b[31m", "\ufeff", "\u200b", "\u2028", "\u202e", "\x85", "\u00e9",
            "\uff11\uff12", "\t", "\r", "\\", "'", '"', "{", "}", "[", "]", ":", "#", "&a", "*a",
            "!!python/object:os.system", "%YAML 1.1", "---", "..."]
ODD_VALUES = [None, True, False, "text", 7, -3, 1e300, -1e-300, [], {}, [1, 2], {"a": 1},
              [[[[]]]], "0" * 40, 10 ** 12, "round[99]:c[0]", "nowhere.qasm", "/dev/zero", "."]
QASM_EDITS = [
    (r"\[(\d+)\]", lambda m, r: f"[{r.choice(['0', '99', '100000000', '-1', '9' * 30])}]"),
    (r";", lambda m, r: r.choice(["", ";;", " ;\n;", "{"])),
    (r"\b(cx|h|measure|reset)\b", lambda m, r: r.choice(["cxx", "gate", "U", "ccx", "swap",
                                                        "barrier", "if", "qreg"])),
    (r"\n", lambda m, r: r.choice(["\ngate g a { g a; }\ng d[0];\n", "\nrz(1e400) d[0];\n",
                                   "\nrz(0/0) d[0];\n", "\nqreg big[100000000];\n",
                                   "\nh d;\n" * 3, "\n/* open comment\n", "\n}\n", "\n" * 3])),
]
STIM_EDITS = [
    (r"REPEAT (\d+)", lambda m, r: f"REPEAT {r.choice(['0', '1', '1000000000', '9' * 25])}"),
    (r"\((0\.\d+)\)", lambda m, r: f"({r.choice(['-0.1', '1.5', '1e400', 'nan', ''])})"),
    (r"rec\[-(\d+)\]", lambda m, r: f"rec[-{r.choice(['1', '999', '0'])}]"),
    (r" (\d+)", lambda m, r: f" {r.choice(['0', '99999999999', '-1', 'x', '4000000'])}"),
    (r"\n", lambda m, r: r.choice(["\nREPEAT 2 {\n", "\n}\n", "\nMPP X0*X1\n", "\nFOO 1\n"])),
]


def mutants(seeds: dict[str, tuple[str, str, str]], count: int, seed: int) -> list[Mutant]:
    """`count` broken copies of the seed files {name: (kind, suffix, text)}."""
    rng = random.Random(seed)
    names = sorted(seeds)
    out = []
    for i in range(count):
        base = names[i % len(names)]
        kind, suffix, text = seeds[base]
        data: str | bytes = text
        labels = []
        for _ in range(rng.choice((1, 1, 2))):
            operator = rng.choice(_operators(suffix))
            data = operator(data if isinstance(data, str) else data.decode("utf-8", "replace"),
                            rng)
            labels.append(operator.__name__.lstrip("_"))
        raw = data if isinstance(data, bytes) else data.encode("utf-8", "surrogatepass")
        out.append(Mutant(f"{base}-{i}-{'+'.join(labels)}", kind, suffix, raw))
    return out


def _operators(suffix):
    common = [_truncate, _delete_line, _repeat_line, _swap_lines, _insert_odd_text,
              _odd_number, _swap_words, _binary_junk, _invalid_utf8]
    if suffix == ".yaml":
        return common + [_deep_nesting, _version, _alias, _tab_indent, _type_swap, _delete_key,
                         _type_swap, _delete_key]
    if suffix == ".qasm":
        return common + [_qasm_edit] * 4
    return common + [_stim_edit] * 4


def _lines(text):
    return text.split("\n")


def _truncate(text, rng):
    return text[:rng.randrange(len(text) + 1)]


def _delete_line(text, rng):
    lines = _lines(text)
    del lines[rng.randrange(len(lines))]
    return "\n".join(lines)


def _repeat_line(text, rng):
    lines = _lines(text)
    k = rng.randrange(len(lines))
    lines.insert(k, lines[k])
    return "\n".join(lines)


def _swap_lines(text, rng):
    lines = _lines(text)
    a, b = rng.randrange(len(lines)), rng.randrange(len(lines))
    lines[a], lines[b] = lines[b], lines[a]
    return "\n".join(lines)


def _insert_odd_text(text, rng):
    k = rng.randrange(len(text) + 1)
    return text[:k] + rng.choice(ODD_TEXT) + text[k:]


def _odd_number(text, rng):
    spots = [m.span() for m in re.finditer(r"(?<![\w.])-?\d+(\.\d+)?(?![\w.])", text)]
    if not spots:
        return _insert_odd_text(text, rng)
    a, b = rng.choice(spots)
    return text[:a] + rng.choice(ODD_NUMBERS) + text[b:]


def _swap_words(text, rng):
    words = [m.span() for m in re.finditer(r"[A-Za-z_][A-Za-z0-9_]*", text)]
    if len(words) < 2:
        return text
    (a, b), (c, d) = rng.choice(words), rng.choice(words)
    return text[:a] + text[c:d] + text[b:]


def _binary_junk(text, rng):
    k = rng.randrange(len(text) + 1)
    junk = bytes(rng.randrange(256) for _ in range(rng.randrange(1, 64)))
    return text[:k].encode() + junk + text[k:].encode()


def _invalid_utf8(text, rng):
    k = rng.randrange(len(text) + 1)
    return text[:k].encode() + rng.choice([b"\xff", b"\xc3", b"\xed\xa0\x80", b"\xe9t\xe9"]) \
        + text[k:].encode()


def _deep_nesting(text, rng):
    depth = rng.choice((70, 500, 5000))
    lines = _lines(text)
    keyed = [i for i, line in enumerate(lines) if re.match(r"^\s*[A-Za-z_]+:\s*\S", line)]
    if not keyed:
        return text
    k = rng.choice(keyed)
    key = lines[k].split(":", 1)[0]
    lines[k] = f"{key}: " + "[" * depth + "1" + "]" * depth
    return "\n".join(lines)


def _version(text, rng):
    return re.sub(r"(embedcheck_\w+):\s*1", lambda m: f"{m.group(1)}: "
                  + rng.choice(["2", "'1'", "1.0", "true", "0", "~", "[1]"]), text, count=1)


def _alias(text, rng):
    lines = _lines(text)
    k = rng.randrange(len(lines))
    lines.insert(k, rng.choice(["x: &a [*a]", "description: *nowhere", "name: &n x\nname2: *n",
                                "<<: {a: 1}", "description: !!binary aGk="]))
    return "\n".join(lines)


def _tab_indent(text, rng):
    lines = _lines(text)
    indented = [i for i, line in enumerate(lines) if line.startswith("  ")]
    if not indented:
        return text
    k = rng.choice(indented)
    lines[k] = "\t" + lines[k].lstrip()
    return "\n".join(lines)


def _paths(data, path=()):
    yield path
    if len(path) > 20:                 # a list that contains itself (an alias) never ends
        return
    if isinstance(data, dict):
        for key, value in data.items():
            yield from _paths(value, path + (key,))
    elif isinstance(data, list):
        for i, value in enumerate(data):
            yield from _paths(value, path + (i,))


def mutate_data(data, rng) -> bool:
    """Swap the type of one value of parsed YAML, or delete it, in place (False: no value)."""
    paths = [p for p in _paths(data) if p]
    if not paths:
        return False
    path = rng.choice(paths)
    parent = data
    for part in path[:-1]:
        parent = parent[part]
    if rng.random() < 0.5:
        parent[path[-1]] = rng.choice(ODD_VALUES)
    else:
        del parent[path[-1]]
    return True


def _structural(text, rng):
    try:
        data = yaml.load(text, Loader=getattr(yaml, "CSafeLoader", yaml.SafeLoader))
    except (yaml.YAMLError, RecursionError, ValueError):   # already broken beyond reading
        return text
    if not mutate_data(data, rng):
        return text
    try:
        return yaml.safe_dump(data, sort_keys=False)
    except (yaml.YAMLError, RecursionError):
        return text


def _type_swap(text, rng):
    return _structural(text, rng)


def _delete_key(text, rng):
    return _structural(text, rng)


def _regex_edit(text, rng, edits):
    pattern, replace = rng.choice(edits)
    spots = list(re.finditer(pattern, text))
    if not spots:
        return text
    m = rng.choice(spots)
    return text[:m.start()] + replace(m, rng) + text[m.end():]


def _qasm_edit(text, rng):
    return _regex_edit(text, rng, QASM_EDITS)


def _stim_edit(text, rng):
    return _regex_edit(text, rng, STIM_EDITS)


if __name__ == "__main__":
    import argparse
    import sys
    from pathlib import Path

    here = Path(__file__).resolve().parent
    sys.path[:0] = [str(here), str(here.parent)]          # tests/io and tests (helpers)
    from test_fuzz_inputs import fuzz, summary

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--count", type=int, default=1000)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--commands", default="validate,show,find,audit,draw,repair,check")
    parser.add_argument("--folder", default=None, help="where to write the mutants and runs")
    args = parser.parse_args()
    print(summary(fuzz(args.count, args.seed, args.commands.split(","), args.folder)))
