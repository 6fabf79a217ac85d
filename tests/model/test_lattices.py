"""Chip families against rustworkx generators and counting formulas."""
import networkx as nx
import pytest
import rustworkx as rx

from embedcheck.model.lattices import heavy_hex, heavy_hex_qubit_count, square_grid


def _rx_graph(lattice):
    g = rx.PyGraph()
    g.add_nodes_from(lattice.qubits)
    g.add_edges_from_no_data(list(lattice.couplers))
    return g


def _subdivided(graph):
    """Every edge of `graph` replaced by a path of length two (one new node per edge)."""
    out = rx.PyGraph()
    out.add_nodes_from(range(graph.num_nodes()))
    for a, b in graph.edge_list():
        mid = out.add_node(None)
        out.add_edge(a, mid, None)
        out.add_edge(mid, b, None)
    return out


@pytest.mark.parametrize("rows,columns", [(1, 1), (1, 3), (2, 2), (2, 3), (3, 4), (4, 2)])
def test_heavy_hex_is_subdivided_hexagonal_lattice(rows, columns):
    # Reference: a heavy-hex lattice is the hexagonal lattice with one more qubit on
    # every edge (Chamberland et al., Phys. Rev. X 10, 011022 (2020)); rustworkx's
    # hexagonal_lattice_graph(a, b) takes its arguments in the other order to ours.
    ours = _rx_graph(heavy_hex(rows, columns))
    reference = _subdivided(rx.generators.hexagonal_lattice_graph(columns, rows))
    assert rx.is_isomorphic(ours, reference)


@pytest.mark.parametrize("rows,columns", [(1, 2), (2, 2), (3, 4), (4, 4)])
def test_heavy_hex_degree_girth_count_and_faces(rows, columns):
    lat = heavy_hex(rows, columns)
    g = nx.Graph(list(lat.couplers))
    assert max(d for _, d in g.degree()) == 3
    assert nx.girth(g) == 12                    # shortest cycle: one heavy hexagon
    assert len(lat.qubits) == heavy_hex_qubit_count(rows, columns) == g.number_of_nodes()
    # Euler's formula for a connected plane graph: inner faces = E - V + 1 = rows * columns.
    assert g.number_of_edges() - g.number_of_nodes() + 1 == rows * columns
    assert set(lat.positions) == set(lat.qubits)


@pytest.mark.parametrize("rows,columns", [(1, 5), (2, 3), (4, 4), (3, 7)])
def test_square_grid_matches_rustworkx_grid(rows, columns):
    ours = _rx_graph(square_grid(rows, columns))
    assert rx.is_isomorphic(ours, rx.generators.grid_graph(rows, columns))


def test_family_sizes_are_checked():
    with pytest.raises(ValueError):
        heavy_hex(0, 2)
    with pytest.raises(ValueError):
        square_grid(2, 0)
