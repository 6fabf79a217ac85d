"""Chip files as labs keep them: families, cuts, directions, snapshots, Target conversions."""
import networkx as nx
import pytest
import rustworkx as rx
from qiskit.transpiler import CouplingMap

from embedcheck import Device, InputError, device_from_target, device_target, load_device
from embedcheck.cli import main
from embedcheck.io.chipfile import load_snapshots
from embedcheck.model.device import CouplerCalibration, QubitCalibration
from embedcheck.model.lattices import build_family, cut, hexagonal, line, ring
from embedcheck.place.graphs import shortest_cycle
from helpers import DEMO_CHIP


def _graph(lattice):
    g = rx.PyGraph()
    g.add_nodes_from(lattice.qubits)
    g.add_edges_from_no_data(list(lattice.couplers))
    return g


def _undirected(cmap: CouplingMap):
    return cmap.graph.to_undirected(multigraph=False)


@pytest.mark.parametrize("size", [2, 5, 17])
def test_line_matches_qiskit_coupling_map(size):
    # Reference: qiskit's CouplingMap.from_line.
    assert rx.is_isomorphic(_graph(line(size)), _undirected(CouplingMap.from_line(size)))


@pytest.mark.parametrize("size", [3, 8, 20])
def test_ring_matches_qiskit_coupling_map(size):
    # Reference: qiskit's CouplingMap.from_ring.
    assert rx.is_isomorphic(_graph(ring(size)), _undirected(CouplingMap.from_ring(size)))


@pytest.mark.parametrize("rows,columns", [(1, 1), (2, 3), (3, 2), (4, 4)])
def test_hexagonal_matches_rustworkx(rows, columns):
    # Reference: rustworkx.generators.hexagonal_lattice_graph (arguments in the other order).
    ours = _graph(hexagonal(rows, columns))
    assert rx.is_isomorphic(ours, rx.generators.hexagonal_lattice_graph(columns, rows))


def test_shortest_cycle_matches_networkx_girth():
    # Reference: networkx.girth.
    for kind, size in [("heavy-hex", {"rows": 3, "columns": 4}), ("square-grid", {"rows": 3,
                       "columns": 5}), ("hexagonal", {"rows": 2, "columns": 2}),
                       ("ring", {"size": 9})]:
        lat = build_family(kind, **size)
        assert shortest_cycle(lat.qubits, lat.couplers) == nx.girth(nx.Graph(list(lat.couplers)))


def test_cut_removes_qubits_with_their_couplers():
    lat = cut(line(5), remove_qubits=[2], remove_couplers=[(4, 3)])
    assert lat.qubits == (0, 1, 3, 4) and lat.couplers == ((0, 1),)


def test_device_from_networkx_and_rustworkx():
    a = Device.from_graph(nx.petersen_graph(), name="p")
    b = Device.from_graph(rx.generators.generalized_petersen_graph(5, 2), name="p")
    assert a.num_qubits == b.num_qubits == 10 and len(a.couplers) == len(b.couplers) == 15
    assert rx.is_isomorphic(a.live_graph(), b.live_graph())
    with pytest.raises(ValueError):
        Device.from_graph(nx.grid_2d_graph(2, 2), name="tuples")


def test_target_round_trip_keeps_everything():
    qcal = {q: QubitCalibration(readout_error=0.01 + q / 1000, single_qubit_error=1e-4 * (q + 1),
                                reset_error=0.002, t1_us=100.0 + q, t2_us=80.0 + q,
                                single_qubit_duration_ns=35.0, measurement_duration_ns=900.0 + q)
            for q in range(4)}
    ccal = {(0, 1): CouplerCalibration(0.011, 310.0), (1, 2): CouplerCalibration(0.012, 320.0),
            (2, 3): CouplerCalibration(0.013, 330.0)}
    for native in ("cx", "ecr", "cz"):
        directed = {} if native == "cz" else {(1, 2): (2, 1), (0, 1): (0, 1)}
        dev = Device(name="t", qubits=(0, 1, 2, 3), couplers=tuple(ccal), qubit_calibration=qcal,
                     coupler_calibration=ccal, directed=directed, native_two_qubit_gate=native)
        back = device_from_target(device_target(dev), name="t")
        assert back.couplers == dev.couplers and back.native_two_qubit_gate == native
        assert dict(back.directed) == directed
        for q in range(4):
            for field in ("readout_error", "single_qubit_error", "reset_error", "t1_us", "t2_us",
                          "single_qubit_duration_ns", "measurement_duration_ns"):
                assert getattr(back.qubit_calibration[q], field) == pytest.approx(
                    getattr(qcal[q], field)), (native, q, field)
        for c in ccal:
            assert back.coupler_calibration[c].two_qubit_error == pytest.approx(
                ccal[c].two_qubit_error)
            assert back.coupler_calibration[c].duration_ns == pytest.approx(ccal[c].duration_ns)


SNAPSHOTS = """\
embedcheck_chip: 1
name: tiny
family: {kind: line, size: 4}
directed_couplers: [[1, 0]]
snapshots:
  - timestamp: '2026-11-29T06:00:00Z'
    defaults: {two_qubit_error: 0.01, readout_error: 0.02}
  - timestamp: '2026-11-30T06:00:00Z'
    dead_couplers: [[2, 3]]
    defaults: {two_qubit_error: 0.02, readout_error: 0.03}
"""


def test_snapshots_in_one_file(tmp_path):
    path = tmp_path / "chip.yaml"
    path.write_text(SNAPSHOTS)
    first, second = load_snapshots(path)
    assert first.calibration_timestamp < second.calibration_timestamp
    assert first.coupler_calibration[(0, 1)].two_qubit_error == 0.01
    assert second.dead_couplers == {(2, 3)} and not first.dead_couplers
    newest = load_device(path)
    assert newest.calibration_timestamp == second.calibration_timestamp
    assert newest.directed == {(0, 1): (1, 0)}
    assert newest.runs_natively(1, 0) and not newest.runs_natively(0, 1)


def test_snapshot_folder_must_share_the_graph(tmp_path, capsys):
    one = SNAPSHOTS.replace("size: 4", "size: 4").split("snapshots:")[0]
    (tmp_path / "a.yaml").write_text(one + "calibration: {timestamp: '2026-11-01T00:00:00Z'}\n")
    (tmp_path / "b.yaml").write_text(one + "calibration: {timestamp: '2026-11-02T00:00:00Z'}\n")
    assert len(load_snapshots(tmp_path)) == 2
    (tmp_path / "c.yaml").write_text(one.replace("size: 4", "size: 5")
                                     + "calibration: {timestamp: '2026-11-03T00:00:00Z'}\n")
    with pytest.raises(InputError) as err:
        load_snapshots(tmp_path)
    assert "c.yaml" in str(err.value) and "qubit 4" in str(err.value)
    assert main(["show", str(tmp_path)]) == 2
    assert "qubit 4 is in one and not the other" in capsys.readouterr().err


@pytest.mark.parametrize("text,expected", [
    (SNAPSHOTS.replace("[[1, 0]]", "[[1, 0], [1, 0]]"),
     ":4: directed_couplers[1]: directed coupler [1, 0] is listed twice"),
    (SNAPSHOTS.replace("[[1, 0]]", "[[1, 0], [0, 1]]"),
     ":4: directed_couplers[1]: coupler [0, 1] is listed in both directions"),
    (SNAPSHOTS.replace("2026-11-30T06:00:00Z", "yesterday at six"),
     ":8: snapshots[1].timestamp: the timestamp does not parse"),    # the text is not echoed
    (SNAPSHOTS.replace("2026-11-30T06:00:00Z", "2026-11-29T06:00:00Z"),
     "snapshots[1].timestamp: two snapshots share timestamp"),
    (SNAPSHOTS.replace("readout_error: 0.03}", "readout_error: 0.03, t1_us: 50, t2_us: 101}"),
     ":10: snapshots[1].defaults.t2_us: default t2_us 101 exceeds 2 * t1_us = 100"),
    (SNAPSHOTS.replace("name: tiny", "name: !!python/object/apply:os.system ['echo pwned']"),
     ":2: YAML tag 'tag:yaml.org,2002:python/object/apply:os.system' is not allowed"),
    (SNAPSHOTS.replace("family: {kind: line, size: 4}", "family: {kind: line, rows: 4}"),
     ":3: family: family 'line' needs 'size'"),
    ("embedcheck_chip: 1\nname: x\nqubits: 2\nremove_qubits: [7]\n",
     ":4: remove_qubits[0]: qubit 7 is not a qubit of this chip"),
])
def test_bad_chip_files(tmp_path, capsys, text, expected):
    path = tmp_path / "chip.yaml"
    path.write_text(text)
    code = main(["validate", str(path)])
    out, err = capsys.readouterr()
    assert code == 2 and out == "" and err.count("\n") == 1 and "Traceback" not in err
    assert expected in err, err


def test_alias_bomb_is_refused(tmp_path, capsys):
    # "Billion laughs": nine levels of aliases, each repeating the last nine times.
    lines = ["embedcheck_chip: 1", "name: bomb", "qubits: 2", "a0: &a0 [x, x, x, x, x, x, x, x, x]"]
    for i in range(1, 9):
        lines.append(f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 9) + "]")
    path = tmp_path / "bomb.yaml"
    path.write_text("\n".join(lines) + "\n")
    assert main(["validate", str(path)]) == 2
    assert "refusing to read it" in capsys.readouterr().err


def test_generate_then_load_and_show(tmp_path, capsys):
    out = tmp_path / "hh.yaml"
    assert main(["generate", "heavy-hex", "--rows", "2", "--columns", "3", "-o", str(out)]) == 0
    dev = load_device(out)
    assert dev.num_qubits == 49 and "PLACEHOLDER" in out.read_text()
    capsys.readouterr()
    assert main(["show", str(out), "--format", "json"]) == 0
    import json
    shown = json.loads(capsys.readouterr().out)
    # Reference: networkx's degree histogram of the same lattice.
    hist = nx.degree_histogram(nx.Graph(list(dev.couplers)))
    assert shown["shortest_cycle"] == 12
    assert shown["degree_histogram"] == {str(k): n for k, n in enumerate(hist) if n}
    assert main(["generate", "ring", "--rows", "2"]) == 2
    assert main(["generate", "ring", "--size", "2"]) == 2


def test_show_demo_chip_names_the_dead_coupler(capsys):
    assert main(["show", str(DEMO_CHIP)]) == 0
    out = capsys.readouterr().out
    assert "dead couplers 19-30" in out and "shortest cycle: 12" in out and "median" in out
    assert "drawing positions: x 0 to 18, y 0 to 6" in out          # for --region-box


def test_graphs_become_chips_or_say_why_not():
    # Reference: networkx's own graph (a directed one keeps its one-way arcs as directions).
    import networkx as nx

    from embedcheck import Device, InputError
    d = Device.from_graph(nx.DiGraph([(0, 1), (1, 2), (2, 1)]), name="dg")
    assert d.couplers == ((0, 1), (1, 2)) and dict(d.directed) == {(0, 1): (0, 1)}
    assert d.runs_natively(0, 1) and not d.runs_natively(1, 0) and d.runs_natively(2, 1)
    for graph, words in ((nx.Graph([((0, 0), (0, 1))]), "non-negative integers"),
                         (nx.Graph(), "no nodes"), (nx.Graph([(0, 0), (0, 1)]), "self-loop")):
        with pytest.raises(InputError, match=words):
            Device.from_graph(graph, name="x")


def test_generate_lists_every_lattice_family_with_its_size_options():
    # The command line lists the families itself (so --help need not import the model).
    from embedcheck.cli.generate import CHIP_FAMILIES
    from embedcheck.model.lattices import FAMILIES
    assert CHIP_FAMILIES == {kind: params for kind, (_, params) in FAMILIES.items()}

