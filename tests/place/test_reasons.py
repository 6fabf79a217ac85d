"""Reasons that name every culprit: all qubits over the chip's degree, every short cycle
(up to a cap), the shared-neighbour condition, and the symmetry order of a ruled-out patch."""
import random

import networkx as nx
from networkx.algorithms import isomorphism

from embedcheck import Device, find_placements
from embedcheck.model.lattices import heavy_hex, square_grid
from embedcheck.model.patch import Circuit, Operation, Patch
from embedcheck.place.graphs import common_neighbours, short_cycles
from helpers import patch_from_edges

# The Steane code's stabilisers: X and Z on the supports of the rows of the [7,4] Hamming
# code's parity-check matrix (Steane, Proc. R. Soc. A 452, 2551 (1996)), each measured
# through its own ancilla (common practice): q0..q6 data, q7..q9 X and q10..q12 Z ancillas.
HAMMING_ROWS = [(3, 4, 5, 6), (1, 2, 5, 6), (0, 2, 4, 6)]


def _steane_round():
    ops = []
    for s, support in enumerate(HAMMING_ROWS):
        for d in support:
            ops.append(Operation("cx", (f"q{7 + s}", f"q{d}"), "2q"))
            ops.append(Operation("cx", (f"q{d}", f"q{10 + s}"), "2q"))
    names = tuple(f"q{i}" for i in range(13))
    roles = {q: "data" if i < 7 else "ancilla" for i, q in enumerate(names)}
    return Patch("steane", names, roles, {"round": Circuit("round", tuple(ops))})


def test_every_qubit_over_the_chips_degree_is_named():
    # Before: "1 patch qubit(s) interact with 6 or more others (q6)".
    patch = _steane_round()
    graph = nx.Graph([op.qubits for op in patch.circuits["round"].operations])
    chip = Device.from_lattice(heavy_hex(3, 3), name="hh")
    top = max(d for _, d in nx.Graph(list(chip.live_couplers)).degree())
    over = {q for q, d in graph.degree() if d > top}
    assert top == 3 and len(over) == 10                   # networkx counts them
    result = find_placements(chip, patch)
    assert not result.placements and result.complete
    first = result.culprits[0]
    assert set(first.qubits) == over
    assert result.reasons[0].startswith("10 patch qubit(s) interact with 4 or more others")
    assert all(f"{q} (" in result.reasons[0] for q in over)
    # Every short cycle is named too, up to the cap, and the reason says there are more.
    cycles = [r for r in result.reasons if "cycles shorter than" in r]
    assert cycles and "more than 10 cycles" in cycles[0] and cycles[0].count("(q") == 10


def _four_two_two():
    # The [[4,2,2]] code: XXXX and ZZZZ on four data qubits, each through one ancilla.
    ops = tuple(Operation("cx", (a, d), "2q") for a in ("a0", "a1")
                for d in ("d0", "d1", "d2", "d3"))
    names = ("d0", "d1", "d2", "d3", "a0", "a1")
    return Patch("422", names, {q: "data" if q[0] == "d" else "ancilla" for q in names},
                 {"round": Circuit("round", ops)})


def test_shared_neighbours_rule_out_the_422_code_on_a_square_grid():
    # Before: "no cheap condition rules it out" after an exhaustive search.
    lattice = square_grid(4, 4)
    chip = Device.from_lattice(lattice, name="grid")
    grid = nx.Graph(list(lattice.couplers))
    most = max(len(list(nx.common_neighbors(grid, a, b)))
               for a in grid for b in grid if a < b)
    assert most == 2 == max(common_neighbours(list(lattice.couplers)).values())
    patch = _four_two_two()
    pattern = nx.Graph([op.qubits for op in patch.circuits["round"].operations])
    matcher = isomorphism.GraphMatcher(grid, pattern)
    assert not any(True for _ in matcher.subgraph_monomorphisms_iter())   # networkx agrees
    result = find_placements(chip, patch)
    assert not result.placements and result.complete and result.raw_maps == 0
    assert len(result.reasons) == 1 and "a0 and a1 share d0, d1, d2, d3" in result.reasons[0]
    assert "no two chip qubits have more than 2 common neighbour(s)" in result.reasons[0]
    assert set(result.culprits[0].qubits) == set(patch.qubits)
    assert len(result.culprits[0].pairs) == 8
    # The symmetry order is the patch's, not 1, though no search ran: networkx counts the
    # automorphisms that keep roles.
    nx.set_node_attributes(pattern, {q: patch.roles[q] for q in pattern}, "role")
    autos = sum(1 for _ in isomorphism.GraphMatcher(
        pattern, pattern, node_match=lambda a, b: a["role"] == b["role"]).isomorphisms_iter())
    assert result.symmetry_order == autos == 48


def test_short_cycles_agree_with_networkx():
    rng = random.Random(5)
    for n, m, bound in ((8, 14, 5), (12, 20, 6), (10, 30, 4)):
        g = nx.gnm_random_graph(n, m, seed=rng.randrange(10**6))
        cycles, every_one = short_cycles(n, list(g.edges()), bound, cap=10**6)
        def ring(c):
            return frozenset(frozenset((c[i], c[i - 1])) for i in range(len(c)))
        expected = {ring(c) for c in nx.simple_cycles(g, length_bound=bound) if len(c) > 2}
        assert every_one and len(cycles) == len(expected) == len({ring(c) for c in cycles})
        assert {ring(c) for c in cycles} == expected
        assert all(g.has_edge(c[i], c[i - 1]) for c in cycles for i in range(len(c)))
        assert [len(c) for c in cycles] == sorted(len(c) for c in cycles)
    capped, every_one = short_cycles(8, list(nx.complete_graph(8).edges()), 8, cap=5)
    assert len(capped) == 5 and not every_one


def test_a_star_ruled_out_by_degree_still_reports_its_symmetry():
    star = patch_from_edges([(0, k) for k in range(1, 5)])
    result = find_placements(Device.from_lattice(heavy_hex(2, 2), name="hh"), star)
    assert result.raw_maps == 0 and result.symmetry_order == 24          # 4! leaf orders
