"""Reading big inputs: our readers against the libraries they replace, same run.

    python bench/inputs.py [chip_qubits] [qasm_statements]

1. A chip file near the 10 MB limit (invented: a 200-column grid of 46000 qubits with
   per-qubit and per-coupler calibration): our whole `load_device` (events, fast schema
   check, Device) against PyYAML's libyaml loader alone (`yaml.load` with CSafeLoader,
   which builds the data and checks nothing), and against the old path's two slow
   steps timed on the same file: the recursive composer and jsonschema.
2. An OpenQASM file of plain statements (invented random CNOTs and Hadamards on 100
   qubits): our `read_qasm` against `openqasm3.parse` alone (syntax tree only, no
   operations), seconds and peak traced memory per statement (tracemalloc).

Prints seconds, ratios and bytes per statement.
"""
import random
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
import jsonschema  # noqa: E402
import openqasm3  # noqa: E402
import yaml  # noqa: E402

from embedcheck.io.chipfile import load_device  # noqa: E402
from embedcheck.io.qasm import read_qasm  # noqa: E402
from embedcheck.io.yamlfile import schema  # noqa: E402


def chip_text(n: int, columns: int = 200, seed: int = 1) -> str:
    rng = random.Random(seed)
    pairs = [(q, q + 1) for q in range(n - 1) if (q + 1) % columns]
    pairs += [(q, q + columns) for q in range(0, n - columns, 2)]
    lines = ["embedcheck_chip: 1", "name: bench-grid", f"qubits: {n}", "couplers:"]
    lines += [f"  - [{a}, {b}]" for a, b in pairs]
    lines += ["calibration:", "  qubits:"]
    lines += [f"    - {{qubit: {q}, readout_error: {rng.random() * 0.05:.5f}, t1_us: "
              f"{50 + rng.random() * 100:.2f}, t2_us: {50 + rng.random() * 40:.2f}}}"
              for q in range(n)]
    lines += ["  couplers:"]
    lines += [f"    - {{coupler: [{a}, {b}], two_qubit_error: {rng.random() * 0.02:.5f}, "
              "duration_ns: 300}" for a, b in pairs]
    return "\n".join(lines) + "\n"


def qasm_text(n: int, seed: int = 0) -> str:
    rng = random.Random(seed)
    lines = ["OPENQASM 2.0;", 'include "qelib1.inc";', "qreg q[100];"]
    for i in range(n):
        a, b = rng.sample(range(100), 2)
        lines.append(f"cx q[{a}], q[{b}];" if i % 3 else f"h q[{a}];")
    return "\n".join(lines) + "\n"


def timed(fn):
    start = time.perf_counter()
    out = fn()
    return time.perf_counter() - start, out


def traced(fn):
    tracemalloc.start()
    out = fn()
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return peak, out


def main():
    qubits = int(sys.argv[1]) if len(sys.argv) > 1 else 46000
    statements = int(sys.argv[2]) if len(sys.argv) > 2 else 30000
    folder = Path(tempfile.mkdtemp(prefix="embedcheck-bench-"))
    chip = folder / "chip.yaml"
    chip.write_text(chip_text(qubits))
    print(f"chip file: {qubits} qubits, {chip.stat().st_size / 1e6:.1f} MB")
    ours, device = timed(lambda: load_device(chip))
    text = chip.read_text()
    libyaml, data = timed(lambda: yaml.load(text, Loader=yaml.CSafeLoader))
    composer, _ = timed(lambda: yaml.compose(text, Loader=yaml.CSafeLoader))
    validator = jsonschema.Draft202012Validator(schema("chip"))
    full, _ = timed(lambda: list(validator.iter_errors(data)))
    print(f"  load_device (ours, everything): {ours:.2f} s")
    print(f"  yaml.load with libyaml (data only, no checks): {libyaml:.2f} s  "
          f"ratio ours/libyaml {ours / libyaml:.2f}")
    print(f"  old path's slow steps: libyaml composer {composer:.2f} s + jsonschema "
          f"{full:.2f} s = {(composer + full) / ours:.1f} x ours")

    text = qasm_text(statements)
    print(f"OpenQASM file: {statements} statements, {len(text) / 1e6:.2f} MB")
    parse_s, _ = timed(lambda: openqasm3.parse(text))
    read_qasm('OPENQASM 2.0; include "qelib1.inc"; qreg q[3]; ccx q[0], q[1], q[2];')  # warm
    read_s, ops = timed(lambda: read_qasm(text))
    parse_peak, _ = traced(lambda: openqasm3.parse(text))
    read_peak, _ = traced(lambda: read_qasm(text))
    print(f"  openqasm3.parse (syntax tree only): {parse_s:.2f} s, peak "
          f"{parse_peak / statements:.0f} B/statement")
    print(f"  read_qasm (ours, {len(ops)} operations): {read_s:.2f} s, peak "
          f"{read_peak / statements:.0f} B/statement  ratio ours/parser: time "
          f"{read_s / parse_s:.2f}, memory {read_peak / parse_peak:.2f}")
    chip.unlink()
    folder.rmdir()


if __name__ == "__main__":
    main()
