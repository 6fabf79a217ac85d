"""Resource limits and the fast readers behind them, held to reference implementations.

- io.schemacheck (the fast yes/no schema check) against jsonschema's verdict, on the
  shipped samples and on mutated documents;
- our OpenQASM statement patterns against the openqasm3 parser (every statement
  through it), on stim's and qiskit's exported circuits, the code families and random
  programs;
- REPEAT blocks read by shifting the first pass against stim's own flattening;
- each limit exactly at its value and one past it, and raised through its variable.
"""
from __future__ import annotations

import copy
import datetime
import os
import random

import jsonschema
import pytest
import stim
import yaml
from malformed import mutate_data

from embedcheck.cli import main
from embedcheck.errors import InputError
from embedcheck.io import qasm as qasm_module
from embedcheck.io.patchfile import load_patch
from embedcheck.io.qasm import read_qasm
from embedcheck.io.schemacheck import compile_schema
from embedcheck.io.stimfile import read_stim
from embedcheck.io.yamlfile import schema
from helpers import DEMO_CHIP, DEMO_PATCH, FIXED_PATCH, ROOT

# The mutated documents change every day (EMBEDCHECK_TEST_SEED replays a day).
DAY_SEED = int(os.environ.get("EMBEDCHECK_TEST_SEED", datetime.date.today().toordinal()))

# ---------------------------------------------------------------- fast schema check vs jsonschema

def _documents():
    yield "chip", DEMO_CHIP.read_text()
    yield "chip", (ROOT / "tests/data/line5_zero_errors.yaml").read_text()
    for path in (DEMO_PATCH, FIXED_PATCH, ROOT / "tests/data/rep2_one_round.yaml",
                 ROOT / "tests/data/surface3_css_prep.yaml"):
        yield "patch", path.read_text()
    yield "project", (ROOT / "samples/project.yaml").read_text()
    yield "sweep", (ROOT / "samples/sweep.yaml").read_text()


def test_fast_schema_check_agrees_with_jsonschema_on_mutated_documents():
    rng = random.Random(DAY_SEED)
    compared = invalid = 0
    for name, text in _documents():
        check = compile_schema(schema(name))
        reference = jsonschema.Draft202012Validator(schema(name))
        original = yaml.safe_load(text)
        for trial in range(100 if name != "chip" else 25):
            data = copy.deepcopy(original)
            for _ in range(rng.choice((1, 2, 3)) if trial else 0):
                mutate_data(data, rng)
            errors = list(reference.iter_errors(data))
            failure = check(data)
            assert (failure is None) == (not errors), (f"EMBEDCHECK_TEST_SEED={DAY_SEED}", name,
                                                       data)
            compared += 1
            if failure is not None:
                invalid += 1
                path, sub = failure            # jsonschema finds the error at that place too
                part = data
                for key in path:
                    part = part[key]
                local = jsonschema.Draft202012Validator({**sub,
                                                         "$defs": schema(name).get("$defs", {})})
                assert list(local.iter_errors(part)), (f"EMBEDCHECK_TEST_SEED={DAY_SEED}", name,
                                                       path)
    assert compared == 2 * 25 + 6 * 100 and invalid > compared // 3


def test_every_input_schema_compiles_and_the_samples_pass():
    for name, text in _documents():
        assert compile_schema(schema(name))(yaml.safe_load(text)) is None
    with pytest.raises(ValueError, match="does not support"):
        compile_schema({"type": "object", "dependentRequired": {}})


# ---------------------------------------------------------------- OpenQASM patterns vs the parser

def _key(ops):
    return [(o.name, o.qubits, o.kind, o.line, o.text, o.written, o.conditional, o.clbit)
            for o in ops]


def _programs():
    from qiskit import qasm2, qasm3
    from qiskit.circuit.random import random_circuit

    from embedcheck.model.codes import family_yaml
    for family in ("surface", "heavy-hex", "repetition", "flagged"):
        for spec in yaml.safe_load(family_yaml(family, distance=3, rounds=2))["circuits"].values():
            yield spec["qasm"]
    yield (ROOT / "samples/flagged_weight4_round.qasm").read_text()
    circuit = stim.Circuit.generated("surface_code:rotated_memory_z", distance=3, rounds=2)
    yield circuit.to_qasm(open_qasm_version=3, skip_dets_and_obs=True)
    yield circuit.to_qasm(open_qasm_version=2, skip_dets_and_obs=True)
    for seed in range(6):
        qc = random_circuit(5, 8, max_operands=3, measure=True, seed=seed)
        yield qasm2.dumps(qc)
        yield qasm3.dumps(qc)
    rng = random.Random(11)
    gates = ["h", "x", "s", "sdg", "cx", "cz", "swap", "rz(0.5)", "u3(pi/2, -pi, 1e-3)", "ccx",
             "U(0,0,0)", "rx(2*pi/3)", "mine"]
    width = {"cx": 2, "cz": 2, "swap": 2, "ccx": 3, "mine": 2}
    for _ in range(40):
        lines = ["OPENQASM 2.0;", 'include "qelib1.inc";', "qreg q[5];", "creg c[5];",
                 "// a comment; with ; semicolons", "gate mine a, b { cx a, b; h a; }"]
        for _ in range(30):
            gate = rng.choice(gates)
            qubits = rng.sample(range(5), width.get(gate.split("(")[0], 1))
            statement = f"{gate} " + ", ".join(f"q[{k}]" for k in qubits) + ";"
            statement = rng.choice([statement] * 8 + [
                f"measure q[{qubits[0]}] -> c[{qubits[0]}];", f"reset q[{qubits[0]}];",
                "barrier q[0], q[1];", "h q;", f"if (c == 1) x q[{qubits[0]}];",
                statement + " /* a block\n comment */", "measure q -> c;",
                statement.replace(", ", ",\n  ")])
            lines.append(statement)
        yield "\n".join(lines) + "\n"


def test_plain_statements_read_as_the_openqasm3_parser_reads_them(monkeypatch):
    count = 0
    for text in _programs():
        ours = _key(read_qasm(text, file="t.qasm", first_line=3))
        with monkeypatch.context() as m:
            m.setattr(qasm_module, "PLAIN_STATEMENTS", False)     # every statement parsed
            parsed = _key(read_qasm(text, file="t.qasm", first_line=3))
        assert ours == parsed, text
        count += 1
    assert count >= 60


# ---------------------------------------------------------------- stim REPEAT vs stim's flattening

@pytest.mark.parametrize("task", ["repetition_code:memory", "surface_code:rotated_memory_x",
                                  "surface_code:unrotated_memory_z"])
def test_repeat_blocks_give_the_detectors_of_the_flattened_circuit(task):
    circuit = stim.Circuit.generated(task, distance=3, rounds=5)
    ours, flat = read_stim(circuit), read_stim(circuit.flattened())
    assert ours.rounds == 4 and len(ours.detectors) == circuit.num_detectors
    assert ours.detectors == flat.detectors and ours.observable == flat.observable


# ---------------------------------------------------------------- each limit, at and past its value

HEADER = 'OPENQASM 2.0;\ninclude "qelib1.inc";\n'


def test_operations_limit_is_exact_and_raised_by_its_variable(monkeypatch):
    monkeypatch.setenv("EMBEDCHECK_MAX_OPERATIONS", "12")
    five = HEADER + "qreg q[2];\n" + "swap q[0], q[1];\n" * 5       # 8 statements, 15 CNOTs
    with pytest.raises(InputError, match=r"15 operations after unrolling, above the limit of 12 "
                                         r"\(set EMBEDCHECK_MAX_OPERATIONS"):
        read_qasm(five)
    assert len(read_qasm(five.replace("swap q[0], q[1];\n", "", 1))) == 12
    monkeypatch.setenv("EMBEDCHECK_MAX_OPERATIONS", "15")
    assert len(read_qasm(five)) == 15
    many = HEADER + "qreg q[1];\n" + "h q[0];\n" * 13                # 16 statements
    with pytest.raises(InputError, match=r"16 statements, above the limit of 15"):
        read_qasm(many)


def test_nested_definitions_are_refused_before_anything_is_expanded(monkeypatch):
    text = HEADER + "qreg q[2];\ngate g0 a, b { cx a, b; }\n"
    for k in range(1, 10):
        text += f"gate g{k} a, b {{ " + " ".join([f"g{k - 1} a, b;"] * 10) + " }\n"
    emitted = []
    original = qasm_module.Operation
    monkeypatch.setattr(qasm_module, "Operation",
                        lambda *a, **k: emitted.append(1) or original(*a, **k))
    with pytest.raises(InputError, match=r"t.qasm:15: 1,000,000,001 operations after unrolling"):
        read_qasm(text + "h q[0];\ng9 q[0], q[1];\n", file="t.qasm")
    assert len(emitted) == 1                                  # only the h before it


def test_qubit_limit_for_registers_chips_and_patches(monkeypatch, tmp_path, capsys):
    monkeypatch.setenv("EMBEDCHECK_MAX_QUBITS", "5")
    assert len(read_qasm(HEADER + "qreg q[3];\nqreg r[2];\nh q;\nh r;\n")) == 5
    with pytest.raises(InputError, match="register 'r': 6 qubits declared, above the limit of 5"):
        read_qasm(HEADER + "qreg q[3];\nqreg r[3];\n")
    chip = tmp_path / "chip.yaml"
    chip.write_text("embedcheck_chip: 1\nname: c\nqubits: 6\n")
    assert main(["validate", str(chip)]) == 2
    assert "qubits: 6 qubits, above the limit of 5 (set EMBEDCHECK_MAX_QUBITS" in \
        capsys.readouterr().err
    chip.write_text("embedcheck_chip: 1\nname: c\n"
                    "family: {kind: square-grid, rows: 2, columns: 3}\n")
    assert main(["validate", str(chip)]) == 2
    assert "6 qubits in a square-grid family of this size" in capsys.readouterr().err
    monkeypatch.setenv("EMBEDCHECK_MAX_QUBITS", "6")
    assert main(["validate", str(chip)]) == 0


def test_experiment_limit_counts_every_round(monkeypatch, tmp_path):
    monkeypatch.setenv("EMBEDCHECK_MAX_OPERATIONS", "10")        # experiment: 100
    patch = tmp_path / "p.yaml"
    body = ("embedcheck_patch: 1\nname: p\nrounds: {rounds}\ncircuits:\n  round:\n    qasm: |\n"
            "      OPENQASM 2.0;\n      include \"qelib1.inc\";\n      qreg q[2];\n"
            "      cx q[0], q[1];\n      cx q[1], q[0];\n")
    patch.write_text(body.format(rounds=50))
    assert load_patch(patch).rounds == 50
    patch.write_text(body.format(rounds=51))
    with pytest.raises(InputError, match=r"p.yaml:3: rounds: 102 operations in the experiment "
                                         r"\(prep, 51 x round, readout\), above the limit of 100"):
        load_patch(patch)


def test_yaml_nesting_limit_is_64():
    from embedcheck.io.yamlfile import plain_yaml
    data, _ = plain_yaml("a: " + "[" * 63 + "]" * 63 + "\n", "t.yaml")    # 64 with the mapping
    assert isinstance(data["a"], list)
    with pytest.raises(InputError, match="nested more than 64 deep"):
        plain_yaml("a: " + "[" * 64 + "]" * 64 + "\n", "t.yaml")


def test_aliases_share_values_and_count_them():
    from embedcheck.io.yamlfile import Document, plain_yaml
    data, lines = plain_yaml("a: &x [1, 2, 3]\nb: *x\nc: [*x, *x]\n", "t.yaml")
    assert data == {"a": [1, 2, 3], "b": [1, 2, 3], "c": [[1, 2, 3], [1, 2, 3]]}
    assert data["b"] is data["a"]                                 # shared, never copied
    doc = Document("t.yaml", data, lines)
    assert doc.line(("b",)) == 2 and doc.line(("c", 1)) == 3 and doc.line(("c", 1, 2)) == 3
    wide = "a: &a [" + ", ".join(["x"] * 999) + "]\n"        # 1000 values with the list
    ok = wide + "b: [" + ", ".join(["*a"] * 1000) + "]\n"     # adds 1,000,000 values
    assert len(plain_yaml(ok, "t.yaml")[0]["b"]) == 1000
    with pytest.raises(InputError, match=r"t.yaml:3: YAML aliases expand the file by more than "
                                         r"1,000,000 values"):
        plain_yaml(ok + "c: *a\n", "t.yaml")


def test_scalars_are_built_as_pyyaml_builds_them():
    from embedcheck.io.yamlfile import plain_yaml
    text = ("a: [0, -0, +5, 012, 0x1f, 1_000, 1:20, 1.5, 1., -2.5e+3, .5, true, False, ~, null, "
            "'7', \"8\", 2026-01-01, x y, 1e5, 3.0e-2]\nb: |\n  text\n")
    assert plain_yaml(text, "t.yaml")[0] == {k: (v if k != "a" else [
        str(x) if hasattr(x, "isoformat") else x for x in v]) for k, v in
        yaml.safe_load(text).items()}


def test_chip_qubit_numbers_are_at_most_999999(tmp_path, capsys):
    chip = tmp_path / "chip.yaml"
    chip.write_text("embedcheck_chip: 1\nname: c\nqubits: [0, 999999]\ncouplers: [[0, 999999]]\n")
    assert main(["validate", str(chip)]) == 0
    capsys.readouterr()
    chip.write_text("embedcheck_chip: 1\nname: c\nqubits: [0, 1000000]\n")
    assert main(["validate", str(chip)]) == 2
    assert "chip.yaml:3: qubits[1]: 1000000 must be <= 999999" in capsys.readouterr().err


def test_circuit_file_that_is_a_folder_or_a_device(tmp_path, capsys, monkeypatch):
    patch = tmp_path / "p.yaml"
    for target, message in ((".", "circuit file '.': is a folder, not a circuit file"),
                            ("/dev/zero", "circuit file '/dev/zero' lies outside")):
        patch.write_text(f"embedcheck_patch: 1\nname: p\ncircuits:\n  round: {{file: {target}}}\n")
        assert main(["validate", str(patch)]) == 2
        assert f"p.yaml:4: circuits.round.file: {message}" in capsys.readouterr().err
    monkeypatch.setenv("EMBEDCHECK_INPUT_ROOT", "/")               # a root that allows /dev
    assert main(["validate", str(patch)]) == 2
    assert "circuit file '/dev/zero': is not a regular file (a device, pipe or socket)" in \
        capsys.readouterr().err


def test_integral_floats_where_integers_are_asked_become_ints(tmp_path):
    # JSON Schema counts 3.0 as an integer; code that slices or counts with it would fail
    # (the fuzzer found `cross_check: {top: 3.0}` exiting 3).
    from embedcheck.io.chipfile import load_device
    from embedcheck.io.projectfile import load_project
    chip = tmp_path / "chip.yaml"
    chip.write_text("embedcheck_chip: 1\nname: c\nqubits: 3.0\ncouplers: [[0.0, 1], [1, 2.0]]\n"
                    "calibration: {qubits: [{qubit: 2.0, t1_us: 50.0}]}\n")
    device = load_device(chip)
    assert device.qubits == (0, 1, 2) and all(type(q) is int for pair in device.couplers
                                              for q in pair)
    assert device.qubit_calibration[2].t1_us == 50.0          # a number stays a float
    (tmp_path / "p.yaml").write_text((ROOT / "tests/data/rep2_one_round.yaml").read_text())
    project = tmp_path / "project.yaml"
    project.write_text("embedcheck_project: 1\nname: p\nchips: [chip.yaml]\npatches: [p.yaml]\n"
                       "cross_check: {top: 3.0}\nsearch: {limit: 10.0}\n")
    loaded = load_project(project)
    assert type(loaded.cross_check_top) is int and type(loaded.limit) is int
