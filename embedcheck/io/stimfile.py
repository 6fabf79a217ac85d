"""Read a stim circuit (file or `stim.Circuit`) into operations, detectors and an observable.

The conversion is exact: every pair of targets of a stim two-qubit gate is one
two-qubit operation (a stim `SWAP` stays one gate, named `swap`, since that is what
stim's circuit lists), in stim's order. Measurements (`M`, `MR`, `MX`, ...) and resets
(`R`, `RX`, ...) keep their qubits; `MR` is a measurement then a reset. Noise channels
and coordinates carry no operation. Classically controlled Paulis (`CX rec[-1] 5`)
are conditional single-qubit operations. Detectors and observables are taken as
stim gives them, with `rec[-k]` turned into absolute measurement indices.

A top-level `REPEAT n { ... }` block splits the circuit into the patch's circuits:
what comes before is `prep`, the block's body is `round` (run n times), what comes
after is `readout`. Without one, the whole circuit is `round`, run once. stim qubit
`k` is patch qubit `q<k>`. For a file, each operation keeps its line.

    >>> import stim
    >>> c = stim.Circuit("R 0 1\\nREPEAT 3 {\\n CX 0 1\\n MR 1\\n DETECTOR rec[-1]\\n}\\nM 0")
    >>> s = read_stim(c)
    >>> s.rounds, [len(s.circuits[n]) for n in ("prep", "round", "readout")], s.detectors[:2]
    (3, [2, 3, 1], ((0,), (1,)))
"""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import InputError, without_quotes
from ..model.patch import Operation
from .files import read_input
from .limits import check_count, max_experiment_operations, max_operations

__all__ = ["StimExperiment", "load_stim", "read_stim"]


@dataclass(frozen=True)
class StimExperiment:
    """Operations per circuit, the round count, detectors and the observable (measurement
    indices)."""

    circuits: dict
    rounds: int
    detectors: tuple[tuple[int, ...], ...]
    observable: tuple[int, ...]
    detector_lines: tuple[int | None, ...]


def read_stim(source, *, file: str | None = None) -> StimExperiment:
    """A stim circuit (a `stim.Circuit`, or the text of a .stim file) as a `StimExperiment`."""
    import stim

    items = _items(source) if isinstance(source, stim.Circuit) else _lines(str(source), file)
    walker = _Walker(file)
    parts: dict[str, list] = {"prep": [], "round": [], "readout": []}
    rounds, state = 1, "prep"
    for line, item in items:
        if isinstance(item, _Repeat):
            if state != "prep":
                raise InputError("only one top-level REPEAT block is supported (it is the check "
                                 "round)", file=file, line=line)
            rounds = item.count
            walker.repeat(item, parts["round"])
            state = "readout"
        else:
            walker.instruction(item, parts[state], line)
    if state == "prep":            # no REPEAT: the whole circuit is one round
        parts = {"round": parts["prep"]}
    return StimExperiment({k: tuple(v) for k, v in parts.items() if v or k == "round"}, rounds,
                          tuple(walker.detectors), tuple(sorted(walker.observable)),
                          tuple(walker.detector_lines))


def load_stim(path: str | Path) -> StimExperiment:
    """Read a .stim file (operations keep their lines)."""
    return read_stim(read_input(path), file=str(path))


@dataclass(frozen=True)
class _Repeat:
    count: int
    body: list                  # (line, instruction)


def _items(circuit):
    """(line, item) for a stim.Circuit object: no lines."""
    import stim

    out = []
    for inst in circuit:
        if isinstance(inst, stim.CircuitRepeatBlock):
            body = []
            _check_repeat(inst.repeat_count, len(inst.body_copy()), None, None)
            for inner in inst.body_copy():
                if isinstance(inner, stim.CircuitRepeatBlock):
                    raise InputError("nested REPEAT blocks are not supported")
                body.append((None, inner))
            out.append((None, _Repeat(inst.repeat_count, body)))
        else:
            out.append((None, inst))
    return out


def _lines(text: str, file):
    """(line, item) for the top level of a stim file, each instruction with its own line."""
    import re

    import stim

    def parse(line_text, number):
        try:
            return list(stim.Circuit(line_text))
        except ValueError as exc:
            message = (str(exc).strip().splitlines() or ["cannot parse"])[0]
            raise InputError(f"stim: {without_quotes(message)}", file=file,
                             line=number) from None

    check_count(text.count("\n") + 1, max_operations(), what="lines",
                setting="EMBEDCHECK_MAX_OPERATIONS", file=file)
    out: list[Any] = []
    block: tuple[int, int, list[Any]] | None = None
    for number, raw in enumerate(text.split("\n"), 1):
        line = raw.split("#", 1)[0].strip()
        if not line:
            continue
        head = re.fullmatch(r"REPEAT\s+(\d{1,18})\s*\{", line)
        if head:
            if block is not None:
                raise InputError("nested REPEAT blocks are not supported", file=file, line=number)
            block = (number, int(head.group(1)), [])
            continue
        if line == "}":
            if block is None:
                raise InputError("stim: '}' without an open REPEAT block", file=file, line=number)
            start, count, body = block
            _check_repeat(count, len(body), file, start)
            out.append((start, _Repeat(count, body)))
            block = None
            continue
        target = block[2] if block is not None else out
        target += [(number, inst) for inst in parse(line, number)]
    if block is not None:
        raise InputError("stim: a REPEAT block is not closed", file=file, line=block[0])
    return out


def _check_repeat(count: int, body: int, file, line) -> None:
    """A REPEAT block is run `count` times: its unrolled size is bounded before it is run."""
    check_count(count * max(body, 1), max_experiment_operations(),
                what="instructions once unrolled", setting="EMBEDCHECK_MAX_OPERATIONS",
                file=file, line=line, detail=f"REPEAT {count:,}: ")


class _Walker:
    def __init__(self, file):
        self.file = file
        self.max_ops = max_operations()
        self.measured = 0
        self.detectors: list[tuple[int, ...]] = []
        self.detector_lines: list[int | None] = []
        self.observable: set[int] = set()

    def repeat(self, block: _Repeat, out):
        """The body's operations once into `out`; detectors and measurements for every pass."""
        first_measure, first_detector = self.measured, len(self.detectors)
        observable = set(self.observable)
        for line, inst in block.body:
            self.instruction(inst, out, line)
        # Every later pass repeats the first one, shifted by the measurements it makes.
        step = self.measured - first_measure
        detectors = self.detectors[first_detector:]
        lines = self.detector_lines[first_detector:]
        toggled = self.observable ^ observable
        for k in range(1, block.count):
            shift = k * step
            self.detectors += [tuple(i + shift for i in det) for det in detectors]
            self.detector_lines += lines
            self.observable ^= {i + shift for i in toggled}
        self.measured += step * (block.count - 1)

    def instruction(self, inst, out, line, record_ops=True):
        import stim

        name = inst.name
        data = stim.gate_data(name)
        targets = inst.targets_copy()
        if record_ops and len(out) + len(targets) > self.max_ops:
            check_count(len(out) + len(targets), self.max_ops, what="operations",
                        setting="EMBEDCHECK_MAX_OPERATIONS", file=self.file, line=line)
        if name in ("DETECTOR", "OBSERVABLE_INCLUDE"):
            for t in targets:
                if not t.is_measurement_record_target or t.value >= 0:
                    raise InputError(f"stim: {name} takes measurement records rec[-k] with "
                                     "k >= 1", file=self.file, line=line)
                if self.measured + t.value < 0:
                    raise InputError(f"stim: {name} looks back to rec[{t.value}] but only "
                                     f"{self.measured} measurement(s) came before it",
                                     file=self.file, line=line)
        if name == "DETECTOR":
            self.detectors.append(tuple(self.measured + t.value for t in targets))
            self.detector_lines.append(line)
            return
        if name == "OBSERVABLE_INCLUDE":
            for t in targets:
                index = self.measured + t.value
                self.observable ^= {index}
            return
        if name == "MPAD" or (data.produces_measurements and data.is_two_qubit_gate) \
                or name == "MPP":
            raise InputError(f"stim: {name} is not supported yet (it has no single-qubit "
                             "measurement to place); write the circuit without it",
                             file=self.file, line=line)
        if name in ("TICK", "QUBIT_COORDS", "SHIFT_COORDS") or \
                (data.is_noisy_gate and not data.produces_measurements):
            return
        text = str(inst)
        if data.produces_measurements:
            if any(not t.is_qubit_target for t in targets):
                raise InputError(f"stim: {name} with Pauli-product targets is not supported",
                                 file=self.file, line=line)
            for t in targets:
                q = f"q{t.value}"
                if record_ops:
                    out.append(Operation("measure", (q,), "measure", line=line, text=text,
                                         file=self.file, written=name.lower(),
                                         clbit=f"rec[{self.measured}]"))
                    if data.is_reset:
                        out.append(Operation("reset", (q,), "reset", line=line, text=text,
                                             file=self.file, written=name.lower()))
                self.measured += 1
            return
        if not record_ops:
            return
        if data.is_reset:
            out += [Operation("reset", (f"q{t.value}",), "reset", line=line, text=text,
                              file=self.file, written=name.lower()) for t in targets]
        elif data.is_two_qubit_gate:
            for a, b in zip(targets[::2], targets[1::2], strict=False):
                if a.is_measurement_record_target or b.is_measurement_record_target or \
                        a.is_sweep_bit_target or b.is_sweep_bit_target:
                    q = b if a.is_measurement_record_target or a.is_sweep_bit_target else a
                    out.append(Operation(name.lower(), (f"q{q.value}",), "1q", line=line,
                                         text=text, file=self.file, written=name.lower(),
                                         conditional=True))
                    continue
                kind_name = "cx" if name in ("CX", "CNOT", "ZCX") else name.lower()
                out.append(Operation(kind_name, (f"q{a.value}", f"q{b.value}"), "2q", line=line,
                                     text=text, file=self.file, written=name.lower()))
        elif data.is_single_qubit_gate:
            out += [Operation(name.lower(), (f"q{t.value}",), "1q", line=line, text=text,
                              file=self.file, written=name.lower()) for t in targets]
        else:
            raise InputError(f"stim: instruction {name} is not supported", file=self.file,
                             line=line)
