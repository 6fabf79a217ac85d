"""The package's shape, checked: data flows one way through the stages.

Every import inside `embedcheck` (at module level or inside a function) is read from the
source with `ast`; a module may import its own stage or earlier ones, the import graph
has no cycle, and no module (nor a test or bench script) reaches for another module's
`_private` name. See DEVELOPERS.md for the stages.
"""
import ast
import functools
from pathlib import Path

import pytest

from helpers import ROOT

PACKAGE = ROOT / "embedcheck"
# Import order: a module may import modules of its own stage or of an earlier one.
STAGES = ("version", "errors", "engine", "model", "io", "schemas", "place", "score", "audit",
          "repair", "pipeline", "sweep", "report", "cli", "plugins")
TOP = len(STAGES)          # embedcheck/__init__.py and __main__.py: the public face


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


MODULES = {_module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def _stage(module: str) -> int:
    parts = module.split(".")
    if len(parts) == 1 or parts[1] == "__main__":
        return TOP
    return STAGES.index(parts[1])


def _is_package(module: str) -> bool:
    return MODULES[module].name == "__init__.py"


@functools.lru_cache(maxsize=None)
def _tree(path: Path) -> ast.Module:
    return ast.parse(path.read_text())


def _imports(module: str):
    """(imported module, imported names, line) for every embedcheck import in `module`."""
    tree = _tree(MODULES[module])
    base = module if _is_package(module) else module.rsplit(".", 1)[0]
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.split(".")[0] == "embedcheck":
                    yield alias.name, (), node.lineno
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                parts = base.split(".")
                parts = parts[:len(parts) - node.level + 1]
                target = ".".join(parts + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if target.split(".")[0] != "embedcheck":
                continue
            names = tuple(a.name for a in node.names)
            subs = [f"{target}.{n}" for n in names if f"{target}.{n}" in MODULES]
            for sub in subs:                         # `from . import data`: a module
                yield sub, (), node.lineno
            rest = tuple(n for n in names if f"{target}.{n}" not in MODULES)
            if rest or not subs:
                yield target, rest, node.lineno


def _private(name: str) -> bool:
    return name.startswith("_") and not (name.startswith("__") and name.endswith("__"))


# The one exception to the stage order: notebook display hooks. A result's `_repr_html_`
# (or `_repr_svg_`) hands itself to `report.notebook`, which formats it; formatting belongs
# to `report`, and the hook is what Jupyter calls on the object (DEVELOPERS.md).
DISPLAY_HOOKS = {"_repr_html_", "_repr_svg_"}
DISPLAY_MODULE = "embedcheck.report.notebook"


def _display_hook_lines(module: str) -> set[int]:
    return {line for node in ast.walk(_tree(MODULES[module]))
            if isinstance(node, ast.FunctionDef) and node.name in DISPLAY_HOOKS
            for line in range(node.lineno, (node.end_lineno or node.lineno) + 1)}


@pytest.mark.parametrize("module", sorted(MODULES))
def test_a_module_imports_only_its_own_stage_or_earlier_ones(module):
    hooks = _display_hook_lines(module)
    late = [(target, line) for target, _, line in _imports(module)
            if target in MODULES and _stage(target) > _stage(module)
            and not (target == DISPLAY_MODULE and line in hooks)]
    assert not late, f"{module} imports later stages: {late}"


def test_the_display_module_imports_no_stage_below_it():
    # So the display hooks cannot close an import cycle: report.notebook formats by duck
    # typing and imports only report.svg, which imports nothing of ours.
    for module in (DISPLAY_MODULE, "embedcheck.report.svg"):
        assert {t for t, _, _ in _imports(module)} <= {"embedcheck.report.svg"}, module


def test_every_import_names_a_module_that_exists():
    missing = [(module, target, line) for module in MODULES
               for target, _, line in _imports(module) if target not in MODULES]
    assert not missing


def test_the_import_graph_has_no_cycle():
    graph = {m: sorted({t for t, _, _ in _imports(m) if t in MODULES and t != m})
             for m in MODULES}
    state: dict = {}
    stack: list = []

    def visit(m):
        state[m] = "open"
        stack.append(m)
        for t in graph[m]:
            if state.get(t) == "open":
                cycle = stack[stack.index(t):] + [t]
                raise AssertionError("import cycle: " + " -> ".join(cycle))
            if t not in state:
                visit(t)
        stack.pop()
        state[m] = "done"

    for m in sorted(graph):
        if m not in state:
            visit(m)


def _private_uses(path: Path, own: str | None = None):
    """`from x import _y` and `x._y` (x an imported embedcheck module or test helper) in a file."""
    tree = _tree(path)
    aliases = {}
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for a in node.names:
                if a.name.startswith("embedcheck"):
                    aliases[a.asname or a.name.split(".")[0]] = a.name
        elif isinstance(node, ast.ImportFrom) and (node.level == 0 or own):
            source = node.module or ""
            if node.level:
                source = f"{own}:{node.level}:{source}"
            if node.level == 0 and not (source.startswith("embedcheck") or source.startswith(
                    ("test_", "helpers"))):
                continue
            for a in node.names:
                if _private(a.name):
                    yield f"line {node.lineno}: from {source} import {a.name}"
                elif f"{node.module}.{a.name}" in MODULES:
                    aliases[a.asname or a.name] = f"{node.module}.{a.name}"
    for node in ast.walk(tree):
        if isinstance(node, ast.Attribute) and _private(node.attr):
            root = node.value
            while isinstance(root, ast.Attribute):
                root = root.value
            if isinstance(root, ast.Name) and root.id in aliases:
                yield f"line {node.lineno}: {ast.unparse(node)}"


@pytest.mark.parametrize("module", sorted(MODULES))
def test_no_module_reaches_for_another_modules_private_names(module):
    assert not list(_private_uses(MODULES[module], own=module))


@pytest.mark.parametrize("path", sorted(p.relative_to(ROOT).as_posix() for folder in (
    "tests", "bench") for p in (ROOT / folder).rglob("*.py")))
def test_tests_and_benchmarks_use_only_public_names(path):
    assert not list(_private_uses(ROOT / path))


NO_ALL_YET = {"embedcheck.__main__"}


def test_every_module_says_what_it_exports():
    missing = [m for m, p in MODULES.items()
               if "__all__" not in {t.id for node in _tree(p).body
                                    if isinstance(node, (ast.Assign, ast.AnnAssign))
                                    for t in (node.targets if isinstance(node, ast.Assign)
                                              else [node.target]) if isinstance(t, ast.Name)}
               and m not in NO_ALL_YET]
    assert not missing


def test_the_public_api_names_resolve_and_list_themselves():
    import embedcheck
    assert embedcheck.__all__[0] == "__version__" and len(set(embedcheck.__all__)) == len(
        embedcheck.__all__)
    for name in embedcheck.__all__:
        assert getattr(embedcheck, name) is not None, name
    assert set(embedcheck.__all__) <= set(dir(embedcheck))
    with pytest.raises(AttributeError):
        embedcheck.no_such_name  # noqa: B018


def test_help_and_import_load_no_heavy_library():
    # Cheap start-up: the command line builds every parser, and `import embedcheck`
    # finishes, without importing the scientific stack (bench/startup.py times it).
    import subprocess
    import sys
    heavy = ("numpy", "qiskit", "stim", "jsonschema", "openqasm3", "matplotlib", "rustworkx",
             "networkx", "yaml")
    code = ("import sys, embedcheck\nfrom embedcheck.cli.app import build_parser\n"
            "build_parser().format_help()\n"
            f"print(','.join(m for m in {heavy!r} if m in sys.modules))")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True, cwd=ROOT)
    assert done.stdout.strip() == ""
