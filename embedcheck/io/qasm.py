"""Read OpenQASM 2 or 3 text into `Operation`s on patch qubit names, keeping source lines.

qiskit's importers drop source lines, so we walk the syntax tree of the `openqasm3`
parser (which also accepts OpenQASM 2 statements) ourselves and keep each statement's
line. Register qubit `d[2]` is patch qubit `d2`; a scalar `qubit a;` is patch qubit `a`.

Gates on two or more qubits are unrolled to CNOTs with qiskit's standard
decompositions (`transpile(..., basis_gates=["cx", "u"], optimization_level=0)`),
cached per gate name, so the count of two-qubit gates is a count of CNOT
equivalents: `swap` is 3, `ccx` is 6, `cz` is 1. User `gate` definitions are expanded
in place. Gates inside `if` blocks count (they may run) and are marked conditional.

Reading is bounded (see `embedcheck.io.limits`): declared qubits, operations after
unrolling (a gate definition's unrolled size is known before it is expanded, so ten
nested definitions that would give 10^9 CNOTs are refused at once) and parameters
(finite numbers). The openqasm3 parser needs several kilobytes and about a millisecond
per statement, so the plain statements that make up nearly every large file
(declarations, gate calls on `q[3]`-style operands with numeric parameters, measure,
reset, barrier) are read by our own patterns into the same syntax-tree nodes, and only
the rest (gate and subroutine definitions, `if` blocks, anything unusual) goes through
the parser, a run of statements at a time. Syntax errors name the line, never the text.

    >>> ops = read_qasm('OPENQASM 2.0; include "qelib1.inc"; qreg q[2]; swap q[0], q[1];')
    >>> [(o.name, o.qubits, o.written) for o in ops if o.kind == "2q"][0]
    ('cx', ('q0', 'q1'), 'swap')
"""
from __future__ import annotations

import contextlib
import io
import math
import re
from functools import lru_cache

import openqasm3
from openqasm3 import ast

from ..errors import InputError, without_quotes
from ..model.patch import Operation
from .limits import check_count, max_operations, max_qubits

__all__ = ["COMMON_GATE_PARAMETERS", "declared_qubits", "qasm_version", "read_qasm"]

# Classical declarations (IODeclaration exists in newer openqasm3 versions only).
_DECLARATIONS: tuple[type[ast.ClassicalDeclaration], ...] = tuple(
    t for t in (ast.ClassicalDeclaration, getattr(ast, "IODeclaration", None)) if t is not None)

_ONE_QUBIT = {"id", "x", "y", "z", "h", "s", "sdg", "t", "tdg", "sx", "sxdg", "rx", "ry",
              "rz", "p", "u", "u1", "u2", "u3", "U", "r", "phase", "gphase"}
_KEEP = {"cx", "CX"}   # already one CNOT; everything else goes through qiskit
_BUILTIN = {"U", "CX", "gphase"}          # gates that need no include
_LIBRARIES = {"qelib1.inc": 2, "stdgates.inc": 3}
# Gate names the two standard libraries define (OpenQASM 2 qelib1.inc as qiskit reads
# it; OpenQASM 3 stdgates.inc from the language specification).
_LIBRARY_GATES = {
    "qelib1.inc": set("u3 u2 u1 cx id u0 u p x y z h s sdg t tdg rx ry rz sx sxdg cz cy swap ch "
                      "ccx cswap crx cry crz cu1 cp cu3 csx cu rxx rzz rccx rc3x c3x c3sqrtx "
                      "c4x".split()),
    "stdgates.inc": set("p x y z h s sdg t tdg sx rx ry rz cx cy cz cp crx cry crz ch swap ccx "
                        "cswap cu CX phase cphase id u1 u2 u3".split()),
}
_UNSUPPORTED = {"ForInLoop": "for loops", "WhileLoop": "while loops", "Box": "box blocks"}


def qasm_version(text: str) -> int:
    """2 or 3, from the OPENQASM header (3 when there is none)."""
    m = re.search(r"^\s*OPENQASM\s+(\d)", text, re.M)
    return int(m.group(1)) if m else 3


def read_qasm(text: str, *, file: str | None = None, first_line: int = 1) -> list[Operation]:
    """Operations of an OpenQASM 2/3 program; lines are `first_line`-based in `file`."""
    m = re.search(r"^\s*OPENQASM\s+([0-9.]+)", text, re.M)
    if m and m.group(1).split(".")[0] not in ("2", "3"):
        line = text[:m.start(1)].count("\n") + first_line
        raise InputError(f"OPENQASM {m.group(1)[:10]} is not supported (versions 2 and 3 are)",
                         file=file, line=line)
    walker = _Walker(_source_lines(text), file, first_line)
    for stmt in _statements(text, file, first_line):
        walker.statement(stmt, conditional=False)
    return walker.ops


def _source_lines(text: str) -> list[str]:
    """Lines as the parser counts them (only a line feed ends a line)."""
    return text.split("\n")


class _Walker:
    def __init__(self, lines, file, first_line):
        self.lines, self.file, self.offset = lines, file, first_line - 1
        self.registers: dict[str, int | None] = {}
        self.qubit_names: dict[str, tuple[str, ...]] = {}    # register -> its patch qubits
        self.declared = 0
        self.texts: dict[tuple, str] = {}        # (first, last line) -> source text, shared
        self.costs: dict[str, int] = {}          # gate definition -> operations it unrolls to
        self.max_ops = max_operations()
        self.max_qubits = max_qubits()
        self.classical: dict[str, int | None] = {}
        self.definitions: dict[str, ast.QuantumGateDefinition] = {}
        self.subroutines: dict[str, ast.SubroutineDefinition] = {}
        self.bind: dict[str, str] = {}           # subroutine qubit parameter -> patch qubit
        self.call_stmt = None                    # the call being inlined, for lines
        self.call_clbit: str | None = None
        self.library = False
        self.library_gates: set[str] = set()
        self.ops: list[Operation] = []

    def fail(self, node, message):
        return InputError(message, file=self.file, line=self.line_of(node))

    def line_of(self, node):
        return node.span.start_line + self.offset if node.span else None

    def check_finite(self, expr, stmt):
        """A gate parameter must be a finite number (1e400 is read as infinity)."""
        try:
            value = _constant(expr)
        except RecursionError:
            raise self.fail(stmt, "a gate parameter is nested too deeply") from None
        if value is not None and not math.isfinite(value):
            raise self.fail(stmt, "a gate parameter is not a finite number")

    def block(self, statements, conditional):
        for stmt in statements:
            self.statement(stmt, conditional)

    def quantum_gate(self, stmt, conditional):
        """A gate call: no modifiers, a known gate, finite angles; then its operations."""
        if stmt.modifiers:
            raise self.fail(stmt, "gate modifiers (ctrl @, inv @, pow @) are not supported")
        self.check_gate_call(stmt)
        for arg in stmt.arguments:
            self.check_finite(arg, stmt)
        self.gate(stmt, stmt.name.name, [self.operand(q, stmt) for q in stmt.qubits],
                  conditional, stmt.name.name)

    def statement(self, stmt, conditional):
        if type(stmt) is ast.QuantumGate:         # most statements: straight to the gate
            self.quantum_gate(stmt, conditional)
        elif isinstance(stmt, ast.Include):
            if stmt.filename not in _LIBRARIES:
                raise self.fail(stmt, f"include \"{stmt.filename}\" is not supported: only the "
                                      "standard libraries qelib1.inc and stdgates.inc (write other "
                                      "gate definitions in the file)")
            self.library = True
            self.library_gates |= _LIBRARY_GATES[stmt.filename]
        elif isinstance(stmt, ast.QubitDeclaration):
            size = None if stmt.size is None else _integer(stmt.size)
            if stmt.size is not None and size is None:
                raise self.fail(stmt, "a register size must be a whole number written out")
            if stmt.qubit.name in self.registers or stmt.qubit.name in self.classical:
                raise self.fail(stmt, f"register '{stmt.qubit.name}' is declared twice")
            self.check_register_name(stmt, stmt.qubit.name)
            self.declared += 1 if size is None else size
            check_count(self.declared, self.max_qubits, what="qubits declared",
                        setting="EMBEDCHECK_MAX_QUBITS", file=self.file,
                        line=self.line_of(stmt), detail=f"register '{stmt.qubit.name}': ")
            names = (stmt.qubit.name,) if size is None else \
                tuple(f"{stmt.qubit.name}{i}" for i in range(size))
            taken = self.__dict__.setdefault("names", {})
            for n in names:
                if n in taken:
                    raise self.fail(stmt, f"registers '{taken[n]}' and '{stmt.qubit.name}' both "
                                          f"give a qubit named '{n}'; rename one")
                taken[n] = stmt.qubit.name
            self.registers[stmt.qubit.name] = size
            self.qubit_names[stmt.qubit.name] = names
        elif isinstance(stmt, _DECLARATIONS):
            name = stmt.identifier.name
            if self.call_stmt is not None:          # a local inside an inlined subroutine
                return
            if name in self.registers or name in self.classical:
                raise self.fail(stmt, f"register '{name}' is declared twice")
            self.check_register_name(stmt, name)
            size = getattr(getattr(stmt, "type", None), "size", None)
            width = _integer(size) if size is not None else None
            self.classical[name] = width
            if width is not None and width > self.max_ops:
                check_count(width, self.max_ops, what="bits",
                            setting="EMBEDCHECK_MAX_OPERATIONS", file=self.file,
                            line=self.line_of(stmt), detail=f"register '{name}': ")
        elif isinstance(stmt, ast.SubroutineDefinition):
            self.subroutines[stmt.name.name] = stmt
        elif isinstance(stmt, ast.ClassicalAssignment) and \
                isinstance(stmt.rvalue, ast.FunctionCall):
            self.call(stmt, stmt.rvalue, conditional, _bit_name(stmt.lvalue))
        elif isinstance(stmt, ast.ExpressionStatement) and \
                isinstance(stmt.expression, ast.FunctionCall):
            self.call(stmt, stmt.expression, conditional, None)
        elif isinstance(stmt, ast.QuantumGateDefinition):
            for inner in stmt.body:
                for arg in getattr(inner, "arguments", None) or ():
                    self.check_finite(arg, inner)
            self.definitions[stmt.name.name] = stmt
            self.costs.clear()                 # a redefinition changes what others unroll to
        elif isinstance(stmt, ast.QuantumGate):
            self.quantum_gate(stmt, conditional)
        elif isinstance(stmt, ast.QuantumMeasurementStatement):
            qubits = self.operand(stmt.measure.qubit, stmt)
            bits: list = [None] * len(qubits)
            if self.call_stmt is not None:
                bits = [self.call_clbit] * len(qubits)
            elif stmt.target is not None:
                target = stmt.target.name if isinstance(stmt.target, ast.Identifier) \
                    else stmt.target.name.name
                if target not in self.classical:
                    raise self.fail(stmt, f"classical register '{target}' is not declared")
                if isinstance(stmt.target, ast.Identifier) and self.classical[target]:
                    bits = [f"{target}[{k}]" for k in range(len(qubits))]
                else:
                    bits = [_bit_name(stmt.target)] * len(qubits)
            for q, bit in zip(qubits, bits, strict=False):
                self.emit(stmt, "measure", (q,), "measure", conditional, "measure", clbit=bit)
        elif isinstance(stmt, ast.QuantumReset):
            for q in self.operand(stmt.qubits, stmt):
                self.emit(stmt, "reset", (q,), "reset", conditional, "reset")
        elif isinstance(stmt, ast.QuantumBarrier):
            held = tuple(q for operand in stmt.qubits for q in self.operand(operand, stmt))
            self.emit(stmt, "barrier", held, "barrier", conditional, "barrier")
        elif isinstance(stmt, ast.BranchingStatement):
            self.block(stmt.if_block, True)
            self.block(stmt.else_block, True)
        elif type(stmt).__name__ in _UNSUPPORTED:
            raise self.fail(stmt, f"{_UNSUPPORTED[type(stmt).__name__]} are not supported yet: "
                                  "write the circuit out without them")
        # Includes, classical declarations and assignments carry no quantum operation.

    def check_register_name(self, stmt, name):
        """A register may not take a gate's name (qiskit's importers refuse it too)."""
        if name in self.definitions or name in self.library_gates:
            raise self.fail(stmt, f"register '{name}' has the name of a gate; rename it")

    def check_gate_call(self, stmt):
        """The gate exists (defined, built in, or from an included library) with its parameters."""
        name = stmt.name.name
        if name in self.definitions:
            want = len(self.definitions[name].arguments)
        elif name in _BUILTIN:
            want = {"U": 3, "CX": 0, "gphase": 1}[name]
        else:
            if not self.library:
                raise self.fail(stmt, f"gate '{name}' is not defined: include the standard library "
                                      "(include \"qelib1.inc\"; for OpenQASM 2, include "
                                      "\"stdgates.inc\"; for OpenQASM 3)")
            known = _standard_parameters(name)
            if known is None:
                raise self.fail(stmt, f"unknown gate '{name}'")
            want = known
        if len(stmt.arguments) != want:
            raise self.fail(stmt, f"gate '{name}' takes {want} parameter(s), got "
                                  f"{len(stmt.arguments)}")

    def call(self, stmt, call, conditional, clbit):
        """Inline a subroutine call (such as the `mr` measure-and-reset stim writes)."""
        name = call.name.name
        if name not in self.subroutines:
            raise self.fail(stmt, f"subroutine '{name}' is not defined")
        if self.call_stmt is not None:
            raise self.fail(stmt, "nested subroutine calls are not supported")
        definition = self.subroutines[name]
        if len(call.arguments) != len(definition.arguments):
            raise self.fail(stmt, f"subroutine '{name}' takes {len(definition.arguments)} "
                                  f"argument(s), got {len(call.arguments)}")
        bind = {}
        for formal, actual in zip(definition.arguments, call.arguments, strict=False):
            if isinstance(formal, ast.QuantumArgument):
                names = self.operand(actual, stmt)
                if len(names) != 1:
                    raise self.fail(stmt, f"subroutine '{name}' needs one qubit per argument")
                bind[formal.name.name] = names[0]
        self.bind, self.call_stmt, self.call_clbit = bind, stmt, clbit
        try:
            self.block(definition.body, conditional)
        finally:
            self.bind, self.call_stmt, self.call_clbit = {}, None, None

    def operand(self, node, stmt) -> tuple[str, ...]:
        """Patch qubit names an operand stands for (a whole register broadcasts)."""
        if isinstance(node, ast.IndexExpression) and isinstance(node.collection, ast.Identifier):
            node = ast.IndexedIdentifier(name=node.collection, indices=[node.index])
        if isinstance(node, ast.Identifier) and node.name in self.bind:
            return (self.bind[node.name],)
        if isinstance(node, ast.Identifier):
            name = node.name
            if name not in self.registers:
                raise self.fail(stmt, f"qubit register '{name}' is not declared")
            return self.qubit_names[name]
        if isinstance(node, ast.IndexedIdentifier):
            name = node.name.name
            if name not in self.registers:
                raise self.fail(stmt, f"qubit register '{name}' is not declared")
            size = self.registers[name]
            out = []
            for index_group in node.indices:
                for expr in (index_group if isinstance(index_group, list) else [index_group]):
                    i = _integer(expr)
                    if i is None:
                        raise self.fail(stmt, "only integer qubit indices are supported")
                    if size is None or not 0 <= i < size:
                        raise self.fail(stmt, f"index {i} is outside register '{name}'")
                    out.append(self.qubit_names[name][i])
            return tuple(out)
        raise self.fail(stmt, "unsupported qubit operand")

    def gate(self, stmt, name, operands, conditional, written, depth=0):
        sizes = {len(o) for o in operands if len(o) != 1}
        if len(sizes) > 1:
            raise self.fail(stmt, f"'{name}' broadcasts over registers of different sizes")
        width = sizes.pop() if sizes else 1
        if depth == 0:                 # the whole expansion, counted before it is done
            projected = len(self.ops) + width * self.cost(stmt, name, len(operands), 0)
            self.check_operations(stmt, projected)
        for k in range(width):
            qubits = tuple(o[k] if len(o) > 1 else o[0] for o in operands)
            if len(set(qubits)) != len(qubits):
                raise self.fail(stmt, f"'{name}' acts twice on qubit {qubits[0]}")
            self.one_gate(stmt, name, qubits, conditional, written, depth)

    def cost(self, stmt, name, width, depth) -> int:
        """Operations one call of gate `name` on `width` qubits unrolls to, without unrolling
        it (memoised per definition; ten nested definitions of ten calls each cost 10^10)."""
        if name not in self.definitions:
            if name in _ONE_QUBIT or name in _KEEP or width < 2:
                return 1
            try:
                return len(_decomposition(name, width))
            except KeyError:
                return 1                   # an unknown gate: refused when it is reached
        known = self.costs.get(name)
        if known is not None:
            return known
        if depth > _MAX_NESTING:
            raise self.fail(stmt, f"gate '{name}' is defined recursively (or definitions nest "
                                  f"more than {_MAX_NESTING} deep)")
        total = sum(self.cost(stmt, inner.name.name, len(inner.qubits), depth + 1)
                    for inner in self.definitions[name].body if isinstance(inner, ast.QuantumGate))
        self.costs[name] = total
        return total

    def check_operations(self, stmt, count):
        if count > self.max_ops:
            check_count(count, self.max_ops, what="operations after unrolling",
                        setting="EMBEDCHECK_MAX_OPERATIONS", file=self.file,
                        line=self.line_of(self.call_stmt or stmt))

    def one_gate(self, stmt, name, qubits, conditional, written, depth):
        if name in self.definitions:
            if depth > _MAX_NESTING:
                raise self.fail(stmt, f"gate '{name}' is defined recursively (or definitions "
                                      f"nest more than {_MAX_NESTING} deep)")
            definition = self.definitions[name]
            formal = [q.name for q in definition.qubits]
            if len(formal) != len(qubits):
                raise self.fail(stmt, f"gate '{name}' takes {len(formal)} qubits, "
                                      f"got {len(qubits)}")
            bind = dict(zip(formal, qubits, strict=False))
            for inner in definition.body:
                if isinstance(inner, ast.QuantumGate):
                    names = []
                    for q in inner.qubits:
                        if not isinstance(q, ast.Identifier) or q.name not in bind:
                            raise self.fail(inner, f"gate '{name}' acts on a qubit that is not "
                                                   "one of its arguments")
                        names.append((bind[q.name],))
                    self.gate(stmt, inner.name.name, names, conditional, written, depth + 1)
            return
        if name in _ONE_QUBIT or name in _KEEP:
            width = 1 if name in _ONE_QUBIT else 2
            if len(qubits) != width:
                raise self.fail(stmt, f"gate '{name}' acts on {width} qubit(s), got {len(qubits)}")
        if len(qubits) == 1:
            if name not in _ONE_QUBIT:
                raise self.fail(stmt, f"unknown gate '{name}' on 1 qubit")
            self.emit(stmt, name, qubits, "1q", conditional, written)
        elif name in _KEEP:
            self.emit(stmt, "cx", qubits, "2q", conditional, written)
        else:
            for kind, local, gate in _unrolled(name, len(qubits), stmt, self):
                self.emit(stmt, "cx" if kind == "2q" else gate,
                          tuple(qubits[i] for i in local), kind, conditional, written)

    def emit(self, stmt, name, qubits, kind, conditional, written, clbit=None):
        stmt = self.call_stmt or stmt          # inside a subroutine: the line of the call
        if len(self.ops) >= self.max_ops:
            self.check_operations(stmt, len(self.ops) + 1)
        start = stmt.span.start_line if stmt.span else None
        end = stmt.span.end_line if stmt.span else start
        text = self.texts.get((start, end))
        if text is None:
            text = ""
            if start is not None and end is not None:
                text = " ".join(self.lines[i - 1].strip() for i in range(start, end + 1)
                                if 0 < i <= len(self.lines))
            self.texts[(start, end)] = text
        self.ops.append(Operation(name, qubits, kind, line=start + self.offset if start else None,
                                  text=text, file=self.file, written=written,
                                  conditional=conditional, clbit=clbit))


_MAX_NESTING = 50


def _unrolled(name, width, stmt, walker):
    try:
        return _decomposition(name, width)
    except KeyError:
        gate = _standard_gate(name)
        if gate is not None:
            raise walker.fail(stmt, f"gate '{name}' acts on {gate.num_qubits} qubit(s), "
                                    f"got {width}") from None
        raise walker.fail(stmt, f"unknown gate '{name}' on {width} qubits") from None


def _standard_gate(name: str):
    from qiskit.circuit.library import get_standard_gate_name_mapping
    return get_standard_gate_name_mapping().get(name)


# Parameters of the standard-library gates circuits use most (qelib1.inc, stdgates.inc),
# so that reading them does not import qiskit (a test holds the table to qiskit's gates).
COMMON_GATE_PARAMETERS = {
    "id": 0, "x": 0, "y": 0, "z": 0, "h": 0, "s": 0, "sdg": 0, "t": 0, "tdg": 0, "sx": 0,
    "sxdg": 0, "rx": 1, "ry": 1, "rz": 1, "p": 1, "u1": 1, "u2": 2, "u3": 3, "u": 3,
    "cx": 0, "cy": 0, "cz": 0, "ch": 0, "swap": 0, "ccx": 0, "cp": 1, "crx": 1, "cry": 1,
    "crz": 1, "rzz": 1, "rxx": 1, "ryy": 1, "ecr": 0, "iswap": 0, "dcx": 0, "cswap": 0}


@lru_cache(maxsize=None)
def _standard_parameters(name: str) -> int | None:
    """Parameters of a standard-library gate, or None when qiskit has no such gate."""
    if name in COMMON_GATE_PARAMETERS:
        return COMMON_GATE_PARAMETERS[name]
    gate = _standard_gate(name)
    return None if gate is None else len(gate.params)


@lru_cache(maxsize=None)
def _decomposition(name: str, width: int) -> tuple[tuple[str, tuple[int, ...], str], ...]:
    """(kind, local qubit indices, gate) of a standard gate unrolled by qiskit."""
    from qiskit import QuantumCircuit, transpile
    from qiskit.circuit.library import get_standard_gate_name_mapping

    gate = get_standard_gate_name_mapping().get(name)
    if gate is None or gate.num_qubits != width:
        raise KeyError(name)
    if gate.params:
        gate = gate.__class__(*[0.3] * len(gate.params))
    qc = QuantumCircuit(width)
    qc.append(gate, range(width))
    # Clifford gates (cz, cy, swap, ...) unroll to named Clifford gates, so a simulator
    # can run them; everything else to cx and u.
    try:
        from qiskit.quantum_info import Clifford
        Clifford(qc)
        out = transpile(qc, basis_gates=["cx", "h", "s", "sdg", "x", "y", "z", "sx", "sxdg"],
                        optimization_level=0)
    except Exception:
        out = transpile(qc, basis_gates=["cx", "u"], optimization_level=0)
    return tuple(("2q" if len(ins.qubits) == 2 else "1q",
                  tuple(out.find_bit(q).index for q in ins.qubits), ins.operation.name)
                 for ins in out.data)


def _bit_name(node) -> str | None:
    """'m[2]' for m[2], 'b' for a scalar bit b."""
    if isinstance(node, ast.Identifier):
        return node.name
    if isinstance(node, ast.IndexedIdentifier):
        parts = []
        for group in node.indices:
            for expr in (group if isinstance(group, list) else [group]):
                parts.append(str(_integer(expr)))
        return f"{node.name.name}[{']['.join(parts)}]"
    return None


def _integer(expr):
    if isinstance(expr, ast.IntegerLiteral):
        return expr.value
    return None


def _parser_message(exc):
    """(line, what went wrong) from the parser's exception chain, without quoting the text
    found there (error messages reach CI logs; the line says where to look)."""
    seen = set()
    while exc is not None and id(exc) not in seen:
        seen.add(id(exc))
        if isinstance(exc, RecursionError):
            return None, "an expression nested too deeply to read"
        if isinstance(exc, ValueError) and "digits" in str(exc):
            return None, "a number with too many digits"
        m = re.search(r"L(\d+):C(\d+): (.*)", str(exc))
        if m:
            if "token recognition error" in m.group(3):
                return int(m.group(1)), (f"a character OpenQASM does not use, at column "
                                         f"{int(m.group(2)) + 1}")
            return int(m.group(1)), without_quotes(m.group(3))
        for arg in getattr(exc, "args", ()):
            token = getattr(arg, "offendingToken", None)
            if token is not None:
                if token.text == "<EOF>":
                    return token.line, "the text ends in the middle of a statement (a missing ';'?)"
                return token.line, f"unexpected symbol at column {token.column + 1}"
        exc = exc.__cause__ or exc.__context__
    return None, "cannot parse"


def _constant(expr):
    """The value of a constant parameter expression; None when it names a variable.

    Only literals, the constants pi, tau and euler, signs and + - * / ** are evaluated
    (enough to find a parameter that is infinite or not a number).
    """
    if isinstance(expr, (ast.FloatLiteral, ast.IntegerLiteral)):
        try:
            return float(expr.value)
        except OverflowError:
            return math.inf
    if isinstance(expr, ast.Identifier):
        return _CONSTANTS.get(expr.name)
    if isinstance(expr, ast.UnaryExpression):
        value = _constant(expr.expression)
        if value is None or expr.op.name != "-":
            return value
        return -value
    if isinstance(expr, ast.BinaryExpression):
        a, b = _constant(expr.lhs), _constant(expr.rhs)
        if a is None or b is None:
            return None
        try:
            return _BINARY[expr.op.name](a, b) if expr.op.name in _BINARY else None
        except (OverflowError, ZeroDivisionError):
            return math.inf
        except (ValueError, TypeError):
            return math.nan
    return None


_CONSTANTS = {"pi": math.pi, "π": math.pi, "tau": math.tau, "τ": math.tau, "euler": math.e,
              "ℇ": math.e}
_BINARY = {"+": lambda a, b: a + b, "-": lambda a, b: a - b, "*": lambda a, b: a * b,
           "/": lambda a, b: a / b, "**": lambda a, b: float(a) ** b}


def declared_qubits(text: str) -> list[str]:
    """Patch qubit names of every declared qubit, in declaration order (d[0] -> d0, a -> a)."""
    names = []
    for stmt in _statements(text, None, 1):
        if isinstance(stmt, ast.QubitDeclaration):
            size = None if stmt.size is None else _integer(stmt.size)
            name = stmt.qubit.name
            names += [name] if size is None else [f"{name}{i}" for i in range(size)]
    return names


# Statements: the plain ones by pattern, the rest through the openqasm3 parser.

_COMMENT = re.compile(r'"[^"\n]*"|//[^\n]*|/\*.*?\*/', re.S)
_BOUNDARY = re.compile(r'"[^"\n]*"|[;{}]')
_ELSE = re.compile(r"\s*else\b")
_ID = r"[A-Za-z_][A-Za-z0-9_]*"
_OPERAND = rf"({_ID})(?:\s*\[\s*([0-9]{{1,18}})\s*\])?"
_OPERANDS = rf"{_OPERAND}(?:\s*,\s*{_OPERAND})*"
_ONE_OPERAND = re.compile(_OPERAND)
_NUMBER = r"(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][-+]?[0-9]+)?"
_ATOM = rf"(?:{_NUMBER}|pi|tau|euler|π|τ)"
_PARAMETER = re.compile(rf"\s*([-+]?)\s*({_ATOM}(?:\s*[*/]\s*{_ATOM})*)\s*")
_ATOMS = re.compile(rf"([*/]?)\s*({_ATOM})")
_PATTERNS = {
    "version": re.compile(r"OPENQASM\s+([0-9]+(?:\.[0-9]+)?)\s*;"),
    "include": re.compile(r'include\s+"([^"\n]*)"\s*;'),
    "qreg": re.compile(rf"qreg\s+({_ID})\s*\[\s*([0-9]{{1,18}})\s*\]\s*;"),
    "qubit": re.compile(rf"qubit(?:\s*\[\s*([0-9]{{1,18}})\s*\])?\s+({_ID})\s*;"),
    "creg": re.compile(rf"creg\s+({_ID})\s*\[\s*([0-9]{{1,18}})\s*\]\s*;"),
    "bit": re.compile(rf"bit(?:\s*\[\s*([0-9]{{1,18}})\s*\])?\s+({_ID})\s*;"),
    "measure": re.compile(rf"measure\s+({_OPERAND})(?:\s*->\s*({_OPERAND}))?\s*;"),
    "assign": re.compile(rf"({_OPERAND})\s*=\s*measure\s+({_OPERAND})\s*;"),
    "reset": re.compile(rf"reset\s+({_OPERAND})\s*;"),
    "barrier": re.compile(rf"barrier\s+({_OPERANDS})\s*;"),
    "gate": re.compile(rf"({_ID})(?:\s*\(([^()]*)\)\s*|\s+)({_OPERANDS})\s*;"),
}


@lru_cache(maxsize=None)
def _reserved() -> frozenset:
    """Words the parser reads as keywords (a plain statement may not use them as names)."""
    from openqasm3.parser import qasm3Lexer
    words = {n.strip("'") for n in qasm3Lexer.literalNames if n != "<INVALID>"}
    return frozenset(words | {"true", "false", "pi", "tau", "euler"})


def _statements(text: str, file: str | None, first_line: int):
    """The program's top-level statements as syntax-tree nodes, in order, with lines.

    Statements end at a ';' or at the '}' that closes a block (unless 'else' follows),
    outside comments and strings. A statement that matches one of `_PATTERNS` becomes
    its node directly; each run of the others is parsed by openqasm3, and their lines
    are moved to where the run starts in the text.
    """
    clean = _COMMENT.sub(_blank, text)
    # Counted before anything is parsed, so that a huge file is refused at once.
    check_count(clean.count(";"), max_operations(), what="statements",
                setting="EMBEDCHECK_MAX_OPERATIONS", file=file, line=first_line)
    reserved = _reserved()
    names: dict[str, ast.Identifier] = {}
    line, counted = 1, 0                    # line number at character `counted`
    run_start: int | None = None            # a run of statements for the parser
    run_line = 1
    first = True
    for start, end in _split(clean):
        body = clean[start:end]
        lead = len(body) - len(body.lstrip())
        line += clean.count("\n", counted, start + lead)
        counted = start + lead
        span_lines = (line, line + body.count("\n", lead))
        node = _plain(body.strip(), span_lines, names, reserved, first, file, first_line)
        first = False
        if node is None:
            if run_start is None:
                run_start, run_line = start, line - body.count("\n", 0, lead)
            continue
        if run_start is not None:
            yield from _parsed(clean[run_start:start], run_line, text, file, first_line)
            run_start = None
        if node is not _SKIP:
            yield node
    if run_start is not None:
        yield from _parsed(clean[run_start:], run_line, text, file, first_line)


_SKIP = object()                 # the version line: no statement
PLAIN_STATEMENTS = True          # False: every statement through the parser (tests compare)


def _blank(match) -> str:
    """A comment becomes spaces (line breaks kept, so lines and columns stay put)."""
    found = match.group()
    return found if found.startswith('"') else re.sub(r"[^\n]", " ", found)


def _split(clean: str):
    """(start, end) of each top-level statement of comment-free text."""
    depth, start = 0, 0
    for m in _BOUNDARY.finditer(clean):
        mark = m.group()
        if mark == ";" and depth == 0:
            yield start, m.end()
            start = m.end()
        elif mark == "{":
            depth += 1
        elif mark == "}":
            depth -= 1
            if depth < 0:                   # a stray brace: the parser says what is wrong
                yield start, len(clean)
                return
            if depth == 0 and not _ELSE.match(clean, m.end()):
                yield start, m.end()
                start = m.end()
    if clean[start:].strip():
        yield start, len(clean)


def _plain(body, lines, names, reserved, first, file, first_line):
    """The node of a plain statement, `_SKIP` for the version line, None for the others."""
    m = _IDENTIFIER.match(body)
    if m is None:
        return None
    word = m.group()
    kinds = _BY_WORD.get(word)
    if not PLAIN_STATEMENTS and word != "OPENQASM":
        return None
    if kinds is None:
        if word in reserved:
            return None
        kinds = ("gate", "assign")
    for kind in kinds:
        m = _PATTERNS[kind].fullmatch(body)
        if m is None:
            continue
        span = ast.Span(lines[0], 0, lines[1], 0)
        if kind == "version":
            if not first:
                raise InputError("the OPENQASM line must come first", file=file,
                                 line=lines[0] + first_line - 1)
            return _SKIP
        if kind == "include":
            return _spanned(ast.Include(filename=m.group(1)), span)
        node = _NODES[kind](m, names, reserved)
        return None if node is None else _spanned(node, span)
    return None


_BY_WORD: dict[str, tuple[str, ...]] = {
    "OPENQASM": ("version",), "include": ("include",), "qreg": ("qreg",), "qubit": ("qubit",),
    "creg": ("creg",), "bit": ("bit",), "measure": ("measure",), "reset": ("reset",),
    "barrier": ("barrier",)}
_IDENTIFIER = re.compile(_ID)


def _spanned(node, span):
    node.span = span
    return node


def _identifier(name, names):
    node = names.get(name)
    if node is None:
        node = names[name] = ast.Identifier(name=name)
    return node


def _operand(name, index, names):
    """An operand node, shared by every statement that names it (the walker only reads it)."""
    if index is None:
        return _identifier(name, names)
    node = names.get((name, index))
    if node is None:
        node = names[(name, index)] = ast.IndexedIdentifier(
            name=_identifier(name, names), indices=[[ast.IntegerLiteral(value=int(index))]])
    return node


def _operands(text, names):
    return [_operand(m.group(1), m.group(2), names) for m in _ONE_OPERAND.finditer(text)]


def _size(text):
    return None if text is None else ast.IntegerLiteral(value=int(text))


def _parameters(text):
    """Numeric parameters as literals, or None when one is not a plain number expression."""
    if text is None:
        return []
    out = []
    for part in text.split(","):
        m = _PARAMETER.fullmatch(part)
        if m is None:
            return None
        value = 1.0
        for op, atom in _ATOMS.findall(m.group(2)):
            number = _CONSTANTS[atom] if atom in _CONSTANTS or atom in ("pi", "tau", "euler") \
                else float(atom)
            try:
                value = value / number if op == "/" else value * number
            except ZeroDivisionError:
                value = math.inf
        out.append(ast.FloatLiteral(value=-value if m.group(1) == "-" else value))
    return out


def _gate_node(m, names, reserved):
    arguments = _parameters(m.group(2))
    if arguments is None:
        return None
    return ast.QuantumGate(modifiers=[], name=_identifier(m.group(1), names),
                           arguments=arguments, qubits=_operands(m.group(3), names),
                           duration=None)


def _declaration(m, names, reserved, qubits, name_group, size_group):
    name = m.group(name_group)
    if name in reserved:
        return None
    if qubits:
        return ast.QubitDeclaration(qubit=_identifier(name, names), size=_size(m.group(size_group)))
    return ast.ClassicalDeclaration(type=ast.BitType(size=_size(m.group(size_group))),
                                    identifier=_identifier(name, names), init_expression=None)


_NODES = {
    "qreg": lambda m, names, reserved: _declaration(m, names, reserved, True, 1, 2),
    "qubit": lambda m, names, reserved: _declaration(m, names, reserved, True, 2, 1),
    "creg": lambda m, names, reserved: _declaration(m, names, reserved, False, 1, 2),
    "bit": lambda m, names, reserved: _declaration(m, names, reserved, False, 2, 1),
    "measure": lambda m, names, _: ast.QuantumMeasurementStatement(
        measure=ast.QuantumMeasurement(qubit=_operand(m.group(2), m.group(3), names)),
        target=_operand(m.group(5), m.group(6), names) if m.group(4) else None),
    "assign": lambda m, names, _: ast.QuantumMeasurementStatement(
        measure=ast.QuantumMeasurement(qubit=_operand(m.group(5), m.group(6), names)),
        target=_operand(m.group(2), m.group(3), names)),
    "reset": lambda m, names, _: ast.QuantumReset(
        qubits=_operand(m.group(2), m.group(3), names)),
    "barrier": lambda m, names, _: ast.QuantumBarrier(
        qubits=_operands(m.group(1), names)),
    "gate": _gate_node,
}


def _parsed(fragment: str, line: int, text: str, file, first_line: int):
    """Statements of a run of the text, parsed by openqasm3, with their lines in the text."""
    shift = line - 1
    try:
        with contextlib.redirect_stderr(io.StringIO()):     # the parser's lexer prints
            program = openqasm3.parse(fragment)
    except Exception as exc:  # the parser raises its own error types
        at, message = _parser_message(exc)
        at = at + shift if at else line
        lines = _source_lines(text)
        if at <= len(lines) and lines[at - 1].lstrip().startswith("opaque"):
            message = "opaque gates are not supported: give the gate a definition"
        else:
            message = f"OpenQASM syntax error: {message}"
        raise InputError(message, file=file, line=at + first_line - 1) from None
    if program.version is not None and line > 1 and fragment[:fragment.find("OPENQASM")].strip():
        raise InputError("the OPENQASM line must come first", file=file, line=line + first_line - 1)
    if shift:
        _shift_spans(program.statements, shift)
    return program.statements


def _shift_spans(statements, shift: int) -> None:
    """Move every span of these syntax trees down by `shift` lines (no recursion)."""
    seen: set[int] = set()
    todo = list(statements)
    while todo:
        node = todo.pop()
        if isinstance(node, list):
            todo.extend(node)
            continue
        if not isinstance(node, ast.QASMNode):
            continue
        span = node.span
        if span is not None and id(span) not in seen:
            seen.add(id(span))
            span.start_line += shift
            span.end_line += shift
        todo.extend(value for value in vars(node).values()
                    if isinstance(value, (list, ast.QASMNode)))
