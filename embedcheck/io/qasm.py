"""Read OpenQASM 2 or 3 text into `Operation`s on patch qubit names, keeping source lines.

qiskit's importers drop source lines, so we walk the syntax tree of the `openqasm3`
parser (which also accepts OpenQASM 2 statements) ourselves and keep each statement's
line. Register qubit `d[2]` is patch qubit `d2`; a scalar `qubit a;` is patch qubit `a`.

Gates on two or more qubits are unrolled to CNOTs with qiskit's standard
decompositions (`transpile(..., basis_gates=["cx", "u"], optimization_level=0)`),
cached per gate name, so the count of two-qubit gates is a count of CNOT
equivalents: `swap` is 3, `ccx` is 6, `cz` is 1. User `gate` definitions are expanded
in place. Gates inside `if` blocks count (they may run) and are marked conditional.

    >>> ops = read_qasm('OPENQASM 2.0; include "qelib1.inc"; qreg q[2]; swap q[0], q[1];')
    >>> [(o.name, o.qubits, o.written) for o in ops if o.kind == "2q"][0]
    ('cx', ('q0', 'q1'), 'swap')
"""
from __future__ import annotations

import contextlib
import io
import re
from functools import lru_cache

import openqasm3
from openqasm3 import ast

from ..errors import InputError
from ..model.patch import Operation

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
        raise InputError(f"OPENQASM {m.group(1)} is not supported (versions 2 and 3 are)",
                         file=file, line=line)
    try:
        with contextlib.redirect_stderr(io.StringIO()):     # the parser's lexer prints
            program = openqasm3.parse(text)
    except Exception as exc:  # the parser raises its own error types
        line = _error_line(exc)
        message = f"OpenQASM syntax error: {_first_line(exc)}"
        lines = text.splitlines()
        if line and line <= len(lines) and lines[line - 1].lstrip().startswith("opaque"):
            message = "opaque gates are not supported: give the gate a definition"
        raise InputError(message, file=file,
                         line=line + first_line - 1 if line else first_line) from None
    walker = _Walker(text.splitlines(), file, first_line)
    walker.block(program.statements, conditional=False)
    return walker.ops


class _Walker:
    def __init__(self, lines, file, first_line):
        self.lines, self.file, self.offset = lines, file, first_line - 1
        self.registers: dict[str, int | None] = {}
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
        line = node.span.start_line + self.offset if node.span else None
        return InputError(message, file=self.file, line=line)

    def block(self, statements, conditional):
        for stmt in statements:
            self.statement(stmt, conditional)

    def statement(self, stmt, conditional):
        if isinstance(stmt, ast.Include):
            if stmt.filename not in _LIBRARIES:
                raise self.fail(stmt, f"include \"{stmt.filename}\" is not supported: only the "
                                      "standard libraries qelib1.inc and stdgates.inc (write other "
                                      "gate definitions in the file)")
            self.library = True
            self.library_gates |= _LIBRARY_GATES[stmt.filename]
        elif isinstance(stmt, ast.QubitDeclaration):
            size = None if stmt.size is None else _integer(stmt.size)
            if stmt.qubit.name in self.registers or stmt.qubit.name in self.classical:
                raise self.fail(stmt, f"register '{stmt.qubit.name}' is declared twice")
            self.check_register_name(stmt, stmt.qubit.name)
            names = [stmt.qubit.name] if size is None else \
                [f"{stmt.qubit.name}{i}" for i in range(size)]
            taken = self.__dict__.setdefault("names", {})
            for n in names:
                if n in taken:
                    raise self.fail(stmt, f"registers '{taken[n]}' and '{stmt.qubit.name}' both "
                                          f"give a qubit named '{n}'; rename one")
                taken[n] = stmt.qubit.name
            self.registers[stmt.qubit.name] = size
        elif isinstance(stmt, _DECLARATIONS):
            name = stmt.identifier.name
            if self.call_stmt is not None:          # a local inside an inlined subroutine
                return
            if name in self.registers or name in self.classical:
                raise self.fail(stmt, f"register '{name}' is declared twice")
            self.check_register_name(stmt, name)
            size = getattr(getattr(stmt, "type", None), "size", None)
            self.classical[name] = _integer(size) if size is not None else None
        elif isinstance(stmt, ast.SubroutineDefinition):
            self.subroutines[stmt.name.name] = stmt
        elif isinstance(stmt, ast.ClassicalAssignment) and \
                isinstance(stmt.rvalue, ast.FunctionCall):
            self.call(stmt, stmt.rvalue, conditional, _bit_name(stmt.lvalue))
        elif isinstance(stmt, ast.ExpressionStatement) and \
                isinstance(stmt.expression, ast.FunctionCall):
            self.call(stmt, stmt.expression, conditional, None)
        elif isinstance(stmt, ast.QuantumGateDefinition):
            self.definitions[stmt.name.name] = stmt
        elif isinstance(stmt, ast.QuantumGate):
            if stmt.modifiers:
                raise self.fail(stmt, "gate modifiers (ctrl @, inv @, pow @) are not supported")
            self.check_gate_call(stmt)
            self.gate(stmt, stmt.name.name, [self.operand(q, stmt) for q in stmt.qubits],
                      conditional, stmt.name.name)
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

    def operand(self, node, stmt) -> list[str]:
        """Patch qubit names an operand stands for (a whole register broadcasts)."""
        if isinstance(node, ast.IndexExpression) and isinstance(node.collection, ast.Identifier):
            node = ast.IndexedIdentifier(name=node.collection, indices=[node.index])
        if isinstance(node, ast.Identifier) and node.name in self.bind:
            return [self.bind[node.name]]
        if isinstance(node, ast.Identifier):
            name = node.name
            if name not in self.registers:
                raise self.fail(stmt, f"qubit register '{name}' is not declared")
            size = self.registers[name]
            return [name] if size is None else [f"{name}{i}" for i in range(size)]
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
                    out.append(f"{name}{i}")
            return out
        raise self.fail(stmt, "unsupported qubit operand")

    def gate(self, stmt, name, operands, conditional, written, depth=0):
        sizes = {len(o) for o in operands if len(o) != 1}
        if len(sizes) > 1:
            raise self.fail(stmt, f"'{name}' broadcasts over registers of different sizes")
        width = sizes.pop() if sizes else 1
        for k in range(width):
            qubits = tuple(o[k] if len(o) > 1 else o[0] for o in operands)
            if len(set(qubits)) != len(qubits):
                raise self.fail(stmt, f"'{name}' acts twice on qubit {qubits[0]}")
            self.one_gate(stmt, name, qubits, conditional, written, depth)

    def one_gate(self, stmt, name, qubits, conditional, written, depth):
        if name in self.definitions:
            if depth > 50:
                raise self.fail(stmt, f"gate '{name}' is defined recursively")
            definition = self.definitions[name]
            formal = [q.name for q in definition.qubits]
            if len(formal) != len(qubits):
                raise self.fail(stmt, f"gate '{name}' takes {len(formal)} qubits, "
                                      f"got {len(qubits)}")
            bind = dict(zip(formal, qubits, strict=False))
            for inner in definition.body:
                if isinstance(inner, ast.QuantumGate):
                    names = [[bind[str(q.name)]] for q in inner.qubits]
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
        start = stmt.span.start_line if stmt.span else None
        end = stmt.span.end_line if stmt.span else start
        text = " ".join(self.lines[i - 1].strip()
                        for i in range(start, (end or start) + 1)) if start else ""
        self.ops.append(Operation(name, qubits, kind, line=start + self.offset if start else None,
                                  text=text, file=self.file, written=written,
                                  conditional=conditional, clbit=clbit))


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
    """The 'L<line>:C<col>: msg' text the parser hides in the exception chain."""
    seen = set()
    while exc is not None and id(exc) not in seen:
        seen.add(id(exc))
        m = re.search(r"L(\d+):C\d+: (.*)", str(exc))
        if m:
            return int(m.group(1)), m.group(2)
        for arg in getattr(exc, "args", ()):
            token = getattr(arg, "offendingToken", None)
            if token is not None:
                return token.line, f"unexpected '{token.text}' at column {token.column + 1}"
        exc = exc.__cause__ or exc.__context__
    return None, "cannot parse"


def _error_line(exc):
    return _parser_message(exc)[0]


def _first_line(exc):
    return _parser_message(exc)[1]


def declared_qubits(text: str) -> list[str]:
    """Patch qubit names of every declared qubit, in declaration order (d[0] -> d0, a -> a)."""
    with contextlib.redirect_stderr(io.StringIO()):
        program = openqasm3.parse(text)
    names = []
    for stmt in program.statements:
        if isinstance(stmt, ast.QubitDeclaration):
            size = None if stmt.size is None else _integer(stmt.size)
            name = stmt.qubit.name
            names += [name] if size is None else [f"{name}{i}" for i in range(size)]
    return names
