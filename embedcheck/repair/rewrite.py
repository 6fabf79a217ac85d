"""Repair a state preparation that forces swaps: rewrite it onto the placement's couplers.

Given a placement and a Clifford preparation (a circuit that, from |0...0>, makes a
stabilizer state), synthesise an equivalent preparation that uses only couplers
among the placement's qubits, borrowing the patch's other qubits (flags, ancillas)
as stepping stones when they start in |0> and returning them to |0>. Methods, the
best kept (fewest two-qubit gates, then two-qubit depth):

- **cat**: when the state is a cat (GHZ) state on some qubits up to single-qubit
  Paulis: the smallest subtree of a spanning tree of the placement's coupling graph
  that holds the cat qubits (a Steiner tree in that tree), rooted where a broadcast
  finishes soonest; each qubit holding the cat value passes it to its children,
  those with the longest remaining broadcast first (optimal broadcasting in a tree,
  Slater, Cockayne & Hedetniemi, SIAM J. Comput. 10, 692 (1981)); helper qubits are
  then returned to |0> by a CNOT from a neighbour that still holds the value; a
  Pauli correction found from the stabilizer signs fixes the rest.
- **css**: when the state has a generating set of pure X and pure Z stabilizers (code
  states such as |0>_L and |+>_L of CSS codes, cat states, Bell pairs): Steiner-tree
  elimination of its X-type generators over the placement's coupling graph (see
  `_css_circuit`), Hadamards on the pivots, the CNOTs reversed, a Pauli correction.
- **routed**: any stabilizer state: qiskit's Clifford synthesis of the state's
  tableau, routed onto the placement's coupling graph by qiskit's SABRE router (Li,
  Ding & Xie, ASPLOS 2019) with its final permutation undone by approximate token
  swapping on the same couplers (Miltzow et al., ESA 2016), so every gate is on a
  coupler.

**Proof**: the repaired circuit prepares the same stabilizer state as the original,
up to global phase, checked with qiskit's `StabilizerState.equiv` (tableaux, fine
for hundreds of qubits); every qubit outside the original's support ends in |0>
because the compared states include them. Up to 12 qubits, statevectors too.
Non-Clifford preparations cannot be proven this way and are not rewritten.

    >>> from embedcheck import load_device, load_patch, vet_patch      # doctest: +SKIP
    >>> chip = load_device("devices/demo_heavy_hex.yaml")                 # doctest: +SKIP
    >>> patch = load_patch("samples/flagged_weight4.yaml")                # doctest: +SKIP
    >>> fix = repair_preparation(chip, patch, vet_patch(chip, patch).ranking.placements[0])  # doctest: +SKIP
    >>> fix.method, fix.after["off_coupler_gates"], fix.proven               # doctest: +SKIP
    ('cat', 0, True)
"""
from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field

import numpy as np

from ..model.device import Device
from ..errors import InputError
from ..model.patch import Patch
from ..place.search import Placement

_CLIFFORD_1Q = {"h", "x", "y", "z", "s", "sdg", "sx", "sxdg", "id"}


@dataclass(frozen=True)
class Repair:
    """A rewritten preparation on one placement, with its proof and before/after figures."""

    circuit: str
    method: str
    qasm: str                         # OpenQASM 2 over the patch's own register names
    operations: tuple                 # (gate, patch qubits) in order
    proven: bool
    proof: str
    before: dict
    after: dict
    helpers: tuple[str, ...]          # patch qubits borrowed and returned to |0>
    candidates: dict = field(default_factory=dict)   # method -> (2q gates, 2q depth)
    rejected: tuple[str, ...] = ()    # cheaper rewrites dropped: they lower the fault distance


def repair_preparation(device: Device, patch: Patch, placement: Placement, *,
                       circuit: str = "prep", seed: int = 11) -> Repair:
    """Rewrite `circuit` of `patch` onto `placement`'s couplers, or raise InputError saying why not."""
    if circuit not in patch.circuits:
        raise InputError(f"the patch has no circuit '{circuit}'")
    state, support, reset_at_start = _target_state(patch, circuit)
    first = patch.experiment()[0][0] if patch.experiment() else circuit
    known_zero = set(patch.qubits) if circuit == first else set(reset_at_start)
    not_ready = sorted(set(support) - known_zero)
    if not_ready:
        raise InputError(f"circuit '{circuit}' is not a preparation from |0>: "
                         f"{', '.join(not_ready)} are not reset at its start and it is not the "
                         "first circuit of the experiment")
    where = placement.as_dict(patch)
    edges = _placement_edges(device, patch, placement)
    candidates = {}
    results = []
    try:
        ops = _cat_circuit(patch, state, support, edges, known_zero)
        if ops is not None:
            results.append(("cat", ops))
    except _NotCat:
        pass
    try:
        results.append(("css", _css_circuit(patch, state, support, edges, known_zero)))
    except _NotCSS:
        pass
    if not results or len(support) <= 20:      # the general method is the fallback beyond 20
        routed = _routed_circuit(patch, state, edges, seed)
        if routed is not None:
            results.append(("routed", routed))
    coupled = {frozenset(e) for e in edges}
    results = [(m, ops) for m, ops in results          # every method must stay on couplers
               if all(frozenset(qs) in coupled for _, qs in ops if len(qs) == 2)]
    if not results:
        raise InputError(f"no rewrite of '{circuit}' fits this placement: the couplers among "
                         "the patch's qubits here do not connect the qubits the state "
                         "entangles (try another placement)")
    scored = []
    for method, ops in results:
        used = {q for _, qs in ops if len(qs) == 2 for q in qs}
        helpers = tuple(q for q in patch.qubits if q in used and q not in support)
        bad = [q for q in helpers if q not in known_zero]
        if bad:
            candidates[method] = None
            continue
        two, depth = _two_qubit_count_depth(ops)
        candidates[method] = (two, depth)
        scored.append((two, depth, method, ops, helpers))
    if not scored:
        raise InputError(f"a repair of '{circuit}' would borrow {', '.join(bad)} as helper(s), "
                         "but they are not known to start in |0> (not reset at the start of the "
                         "circuit); reset them there first")
    from ..io.qasm import read_qasm
    from ..model.patch import Circuit
    from ..score.simulate import fault_distance
    before = _figures(device, patch, circuit, placement)
    check_distance = bool(patch.detectors and patch.observable)
    if check_distance:
        before["fault_distance"] = _safe(fault_distance, patch)
    lowered = []
    for two, depth, method, ops, helpers in sorted(scored, key=lambda s: (s[0], s[1])):
        text = _to_qasm(patch, ops)
        fixed = _with_circuit(patch, circuit, Circuit(circuit, tuple(read_qasm(text)), text,
                                                      None))
        distance = _safe(fault_distance, fixed) if check_distance else None
        if check_distance and None not in (distance, before["fault_distance"]) \
                and distance < before["fault_distance"]:
            lowered.append(f"{method}: {before['fault_distance']} -> {distance}")
            continue                    # a rewrite must not lower the fault distance
        break
    else:
        raise InputError(f"every rewrite of '{circuit}' lowers the circuit-level fault distance "
                         f"({'; '.join(lowered)}); keep the original or prepare a product state "
                         "and let the check rounds project it")
    proven, proof = _prove(patch, state, ops)
    after = _figures(device, fixed, circuit, placement)
    if check_distance:
        after["fault_distance"] = distance
    return Repair(circuit, method, text, tuple(ops), proven, proof, before, after, helpers,
                  candidates, tuple(lowered))


def repaired_patch(patch: Patch, repair: Repair, *, file: str | None = None) -> Patch:
    """The patch with the repaired circuit in place of the original."""
    from ..io.qasm import read_qasm
    from ..model.patch import Circuit
    ops = tuple(read_qasm(repair.qasm, file=file))
    return _with_circuit(patch, repair.circuit, Circuit(repair.circuit, ops, repair.qasm, file))


# --- the target state ---------------------------------------------------------------

class _NotCat(Exception):
    pass


def _target_state(patch: Patch, circuit: str):
    """(StabilizerState over all patch qubits, support, qubits reset at the start)."""
    from qiskit import QuantumCircuit
    from qiskit.quantum_info import StabilizerState

    from ..audit.qiskit_views import qiskit_circuit

    if patch.circuits[circuit].qasm is None:
        raise InputError(f"circuit '{circuit}' has no OpenQASM text to rewrite")
    qc, names = qiskit_circuit(patch, circuit)
    whole = QuantumCircuit(patch.num_qubits)
    reset_at_start, touched = set(), set()
    for ins in qc.data:
        op = ins.operation.name
        if op == "barrier":
            continue
        qubits = [patch.index[names[qc.find_bit(q).index]] for q in ins.qubits]
        if op == "reset":
            q = patch.qubits[qubits[0]]
            if q in touched:
                raise InputError(f"circuit '{circuit}' resets {q} after using it: not a unitary "
                                 "preparation; it cannot be proven equivalent and is not rewritten")
            reset_at_start.add(q)
            continue
        if op in ("measure", "if_else") or getattr(ins.operation, "blocks", None):
            raise InputError(f"circuit '{circuit}' measures or branches: not a unitary "
                             "preparation; it cannot be proven equivalent and is not rewritten")
        touched.update(patch.qubits[i] for i in qubits)
        whole.append(ins.operation, qubits)
    try:
        state = StabilizerState(whole)
    except Exception:
        raise InputError(f"circuit '{circuit}' is not a Clifford circuit, so its state cannot be "
                         "proven equal to a rewrite; it is not rewritten") from None
    support = tuple(q for q in patch.qubits if q in touched)
    return state, support, reset_at_start


def _placement_edges(device: Device, patch: Patch, placement: Placement):
    """Coupled pairs of patch qubits on this placement (patch-qubit names)."""
    where = placement.as_dict(patch)
    names = list(patch.qubits)
    return [(a, b) for i, a in enumerate(names) for b in names[i + 1:]
            if device.is_coupled(where[a], where[b])]


# --- method: cat states ---------------------------------------------------------------

def _cat_circuit(patch, state, support, edges, known_zero):
    """Cat-state fan-out over a Steiner subtree, or raise _NotCat."""
    targets = [q for q in support if _carries(state, patch.index[q])]
    if len(targets) < 2:
        raise _NotCat
    tree = _spanning_tree(patch.qubits, edges, targets[0], allowed=set(targets) | known_zero)
    if tree is None:
        raise _NotCat
    steiner = _prune(tree, set(targets))
    if steiner is None:
        raise _NotCat
    best = None
    for root in sorted(steiner):            # a helper may be the best root
        if root not in targets and len(steiner) > len(targets) and not steiner[root]:
            continue
        ops = _broadcast(steiner, root, set(targets))
        two, depth = _two_qubit_count_depth(ops)
        if best is None or (depth, two) < best[0]:
            best = ((depth, two), ops)
    ops = best[1]
    correction = _pauli_correction(patch, state, ops)
    if correction is None:
        raise _NotCat
    return ops + correction


def _carries(state, index):
    """True when qubit `index` is not in a fixed Z eigenstate (it takes part in the state)."""
    from qiskit.quantum_info import Pauli
    label = ["I"] * state.num_qubits
    label[index] = "Z"
    return abs(state.expectation_value(Pauli("".join(reversed(label))))) < 0.5


def _spanning_tree(nodes, edges, root, allowed):
    """Breadth-first spanning tree (as a child -> parent map) over allowed nodes."""
    adj = {n: [] for n in nodes if n in allowed}
    for a, b in edges:
        if a in adj and b in adj:
            adj[a].append(b)
            adj[b].append(a)
    parent = {root: None}
    queue = deque([root])
    while queue:
        u = queue.popleft()
        for v in adj[u]:
            if v not in parent:
                parent[v] = u
                queue.append(v)
    return parent


def _prune(parent, terminals):
    """Undirected adjacency of the smallest subtree holding every terminal."""
    if not terminals <= set(parent):
        return None
    adj = {n: set() for n in parent}
    for c, p in parent.items():
        if p is not None:
            adj[c].add(p)
            adj[p].add(c)
    changed = True
    while changed:
        changed = False
        for n in list(adj):
            if n not in terminals and len(adj[n]) <= 1:
                for m in adj.pop(n):
                    adj[m].discard(n)
                changed = True
    return adj


def _broadcast(adj, root, targets):
    """H on the root, CNOT fan-out (longest subtree first), then helpers back to |0>."""
    children, order = {}, [root]
    seen = {root}
    for u in order:
        children[u] = [v for v in adj[u] if v not in seen]
        seen.update(children[u])
        order.extend(children[u])
    finish = {}
    for u in reversed(order):          # time for u's subtree to receive the value after u
        times = sorted((finish[c] for c in children[u]), reverse=True)
        finish[u] = max((i + 1 + t for i, t in enumerate(times)), default=0)
    for u in children:
        children[u].sort(key=lambda c: -finish[c])
    ops = [("h", (root,))]
    ready = {root: 0}                  # layer at which a node holds the value
    layered = []
    queue = [root]
    while queue:
        u = queue.pop(0)
        for k, c in enumerate(children[u]):
            ready[c] = ready[u] + k + 1
            layered.append((ready[c], ("cx", (u, c))))
            queue.append(c)
    layered.sort(key=lambda x: x[0])
    ops += [op for _, op in layered]
    # Return helpers to |0>: a helper leaf (in the remaining helper forest) copies from a
    # neighbour that still holds the value; repeat until none remains.
    holding = set(adj)
    helpers = [n for n in adj if n not in targets]
    while helpers:
        progress = False
        for h in sorted(helpers, key=lambda n: sum(m in holding and m not in targets
                                                   for m in adj[n])):
            donors = [m for m in adj[h] if m in holding and m != h]
            others = [m for m in donors if m not in targets]
            if donors and (len(others) <= 1 or any(m in targets for m in donors)):
                donor = next((m for m in donors if m in targets), donors[0])
                ops.append(("cx", (donor, h)))
                holding.discard(h)
                helpers.remove(h)
                progress = True
                break
        if not progress:
            return None
    return ops


def _pauli_correction(patch, state, ops):
    """Single-qubit Paulis P with P C|0> = target state, or None when none exists."""
    from qiskit.quantum_info import StabilizerState
    made = StabilizerState(_ops_circuit(patch, ops))
    target_tab = state.clifford.stab
    made_tab = made.clifford.stab
    n = patch.num_qubits
    # Same group up to signs? Each target generator must be a product of made generators.
    made_xz = made_tab[:, :2 * n].astype(np.uint8)
    target_xz = target_tab[:, :2 * n].astype(np.uint8)
    if _rank(np.vstack([made_xz, target_xz])) != _rank(made_xz):
        return None
    from qiskit.quantum_info import Pauli
    flips = []
    for label in made.clifford.to_labels(mode="S"):
        # Sign of made generator g in the target state: measure its expectation.
        value = state.expectation_value(Pauli(label))
        if abs(abs(value) - 1) > 1e-9:
            return None
        flips.append(value < 0)
    # Find P (x, z bits) anticommuting exactly with the flipped generators:
    # symplectic product of P with g = sum(x_P z_g + z_P x_g) mod 2.
    a = np.hstack([made_xz[:, n:], made_xz[:, :n]])          # rows: (z_g, x_g)
    solution = _solve_gf2(a, np.array(flips, dtype=np.uint8))
    if solution is None:
        return None
    x_bits, z_bits = solution[:n], solution[n:]
    out = []
    for i in range(n):
        if x_bits[i] and z_bits[i]:
            out.append(("y", (patch.qubits[i],)))
        elif x_bits[i]:
            out.append(("x", (patch.qubits[i],)))
        elif z_bits[i]:
            out.append(("z", (patch.qubits[i],)))
    return out


def _row_reduce(m):
    """Gauss-Jordan elimination over GF(2): (reduced copy, pivot columns)."""
    m = m.copy() % 2
    pivots, r = [], 0
    rows, cols = m.shape
    for c in range(cols):
        pivot = next((i for i in range(r, rows) if m[i, c]), None)
        if pivot is None:
            continue
        m[[r, pivot]] = m[[pivot, r]]
        for i in range(rows):
            if i != r and m[i, c]:
                m[i] ^= m[r]
        pivots.append(c)
        r += 1
    return m, pivots


def _rank(m):
    return len(_row_reduce(m)[1])


def _solve_gf2(a, b):
    """x with a x = b over GF(2), or None."""
    cols = a.shape[1]
    m, pivots = _row_reduce(np.hstack([a, b.reshape(-1, 1)]).astype(np.uint8))
    if cols in pivots:                  # a pivot in the right-hand side: no solution
        return None
    x = np.zeros(cols, dtype=np.uint8)
    for i, c in enumerate(pivots):
        x[c] = m[i, -1]
    return x


# --- method: CSS states by Steiner-tree elimination ----------------------------------------

class _NotCSS(Exception):
    """The state has no generating set of pure X and pure Z stabilizers, or the coupling
    graph cannot carry the elimination."""


def _css_circuit(patch, state, support, edges, known_zero):
    """A preparation of a CSS state (up to single-qubit Paulis) on the coupled pairs.

    Its X-type stabilizers are the row space of a k x n matrix G. We disentangle: a
    CNOT c -> t adds column c of G to column t, and we make every column but k zero,
    one generator at a time, with CNOTs along a Steiner tree of the qubits that carry
    it (fill the tree's inner qubits, then clear all but the tree's root, leaves
    first: Steiner-Gauss elimination, Kissinger & Meijer-van de Griend, arXiv:1904.00633;
    Nash, Gheorghiu & Mosca, Quantum 4, 290 (2020); references from memory, and the tests
    prove every result by tableau instead of trusting them). The root (the pivot) then leaves
    the graph, so it must not be a cut vertex of what is left. The state is then |+> on
    the k pivots and |0> elsewhere; the preparation is Hadamards on the pivots, the
    CNOTs in reverse order, and a Pauli correction for the signs.
    """
    import networkx as nx

    n = patch.num_qubits
    tab = state.clifford
    x, z = tab.stab_x.astype(np.uint8), tab.stab_z.astype(np.uint8)
    reduced, pivots = _row_reduce(np.hstack([z, x]))
    z_rank = sum(1 for c in pivots if c < n)
    g = reduced[z_rank:, n:]                         # X-type generators: zero Z part
    k = g.shape[0]
    if k + (n - _rank(x)) != n:                      # X-type and Z-type parts must fill n
        raise _NotCSS
    index = patch.index
    allowed = {index[q] for q in support} | {index[q] for q in known_zero}
    graph = nx.Graph()
    graph.add_nodes_from(allowed)
    graph.add_edges_from((index[a], index[b]) for a, b in edges
                         if index[a] in allowed and index[b] in allowed)
    m = g.T.copy()                                   # rows: qubits; columns: generators
    cnots: list[tuple[int, int]] = []

    def add(control, target):                        # CNOT control -> target, on M's rows
        m[target] ^= m[control]
        cnots.append((control, target))

    left = set(range(k))
    roots = []
    while left:
        cut = set(nx.articulation_points(graph)) if len(left) > 1 else set()   # last: any root
        best = None
        for j in sorted(left):
            terminals = [int(r) for r in np.flatnonzero(m[:, j]) if r in graph]
            tree = _steiner_with_root(graph, terminals, cut)
            if tree is not None and (best is None or len(tree[1]) < len(best[2])):
                best = (j, tree[0], tree[1])
        if best is None:
            raise _NotCSS
        j, root, parent = best
        order = _post_order(parent, root)
        for v in order:                              # fill: every tree qubit carries j
            if v != root and m[v, j] and not m[parent[v], j]:
                add(v, parent[v])
        for v in order:                              # clear all but the root, leaves first
            if v != root:
                add(parent[v], v)
        graph.remove_node(root)
        roots.append(root)
        left.discard(j)
    if any(m[r].any() for r in range(n) if r not in roots):
        raise _NotCSS                                # cannot happen for a CSS state
    ops = [("h", (patch.qubits[r],)) for r in roots]
    ops += [("cx", (patch.qubits[c], patch.qubits[t])) for c, t in reversed(cnots)]
    correction = _pauli_correction(patch, state, ops)
    if correction is None:
        raise _NotCSS
    return ops + correction


def _steiner_with_root(graph, terminals, cut):
    """(root, parent map) of a small tree in `graph` holding every terminal, rooted at a
    qubit that is not a cut vertex (so it can leave the graph); shortest-path heuristic
    (Takahashi & Matsuyama, Math. Japonica 24, 573 (1980), from memory). None if the
    terminals are not connected."""
    if not terminals:
        return None
    component = _component(graph, terminals[0])
    if any(t not in component for t in terminals):
        return None
    free = [v for v in component if v not in cut]
    inside = [t for t in terminals if t not in cut]
    if inside:
        root = min(inside)
    else:                                            # the non-cut qubit nearest the terminals
        dist = _bfs(graph, terminals)
        root = min(free, key=lambda v: (dist[v], v))
    parent = {root: None}
    want = set(terminals) - {root}
    while want:
        dist, back = _bfs(graph, list(parent), with_parent=True)
        t = min(want, key=lambda v: (dist[v], v))
        path = [t]
        while path[-1] not in parent:
            path.append(back[path[-1]])
        for i in range(len(path) - 1, 0, -1):        # from the tree outwards
            parent[path[i - 1]] = path[i]
        want -= set(path)
    return root, parent


def _component(graph, start):
    seen, queue = {start}, deque([start])
    while queue:
        v = queue.popleft()
        for w in graph[v]:
            if w not in seen:
                seen.add(w)
                queue.append(w)
    return seen


def _bfs(graph, sources, with_parent=False):
    dist = {s: 0 for s in sources}
    back = {}
    queue = deque(sources)
    while queue:
        v = queue.popleft()
        for w in sorted(graph[v]):
            if w not in dist:
                dist[w] = dist[v] + 1
                back[w] = v
                queue.append(w)
    return (dist, back) if with_parent else dist


def _post_order(parent, root):
    """Tree nodes with every node after all of its descendants (leaves first)."""
    children: dict = {}
    for v, up in parent.items():
        if up is not None:
            children.setdefault(up, []).append(v)
    out, stack = [], [(root, False)]
    while stack:
        v, done = stack.pop()
        if done:
            out.append(v)
            continue
        stack.append((v, True))
        stack.extend((c, False) for c in sorted(children.get(v, ()), reverse=True))
    return out


# --- method: synthesis and routing ----------------------------------------------------------

def _routed_circuit(patch, state, edges, seed):
    """qiskit's Clifford synthesis, routed onto the coupled pairs, final permutation undone
    (None when qiskit cannot route it there)."""
    import rustworkx as rx
    from qiskit import transpile
    from qiskit.transpiler import CouplingMap
    from qiskit.transpiler.passes.routing.algorithms import ApproximateTokenSwapper

    n = patch.num_qubits
    index = patch.index
    pairs = [(index[a], index[b]) for a, b in edges]
    graph = rx.PyGraph()
    graph.add_nodes_from(range(n))
    graph.add_edges_from_no_data(pairs)
    cmap = CouplingMap([e for a, b in pairs for e in ((a, b), (b, a))])
    for q in range(n):
        if q not in cmap.physical_qubits:
            cmap.add_physical_qubit(q)
    circ = state.clifford.to_circuit()
    from qiskit.transpiler.exceptions import TranspilerError
    try:
        out = transpile(circ, coupling_map=cmap, basis_gates=["cx", "h", "s", "sdg", "x", "y",
                                                              "z", "sx", "sxdg"],
                        initial_layout=list(range(n)), optimization_level=1,
                        seed_transpiler=seed, layout_method="trivial")
    except TranspilerError:
        return None                     # e.g. the couplers here fall apart into pieces
    final = out.layout.final_index_layout() if out.layout is not None else list(range(n))
    ops = []
    for ins in out.data:
        qubits = tuple(patch.qubits[out.find_bit(q).index] for q in ins.qubits)
        name = ins.operation.name
        if name == "barrier":
            continue
        ops.append((name, qubits))
    # A full mapping: with a partial one the swapper may move the other tokens too.
    mapping = {final[v]: v for v in range(n)}
    if any(final[v] != v for v in range(n)):
        swaps = ApproximateTokenSwapper(graph, seed=seed).map(mapping)
        for a, b in swaps:
            qa, qb = patch.qubits[a], patch.qubits[b]
            ops += [("cx", (qa, qb)), ("cx", (qb, qa)), ("cx", (qa, qb))]
    return ops


# --- proof and figures --------------------------------------------------------------------

def _ops_circuit(patch, ops):
    from qiskit import QuantumCircuit
    qc = QuantumCircuit(patch.num_qubits)
    for name, qubits in ops:
        getattr(qc, name)(*[patch.index[q] for q in qubits])
    return qc


def _prove(patch, state, ops):
    from qiskit.quantum_info import StabilizerState, Statevector
    made = _ops_circuit(patch, ops)
    if not StabilizerState(made).equiv(state):
        return False, "the stabilizer tableaux differ"
    proof = "same stabilizer state up to global phase (qiskit StabilizerState.equiv)"
    if patch.num_qubits <= 12:
        target = Statevector(state.clifford.to_circuit())
        if not Statevector(made).equiv(target):
            return False, "the statevectors differ"
        proof += "; statevectors equal up to global phase"
    return True, proof


def _two_qubit_count_depth(ops):
    level: dict = {}
    count = depth = 0
    for name, qubits in ops:
        if len(qubits) != 2:
            continue
        count += 1
        d = max(level.get(q, 0) for q in qubits) + 1
        for q in qubits:
            level[q] = d
        depth = max(depth, d)
    return count, depth


def _figures(device, patch, circuit, placement):
    from ..audit.exact import audit_placement
    from ..score.cost import rank_placements
    audit = next(c for c in audit_placement(device, patch, placement).circuits
                 if c.circuit == circuit)
    ops = [(op.name, op.qubits) for op in patch.circuits[circuit].operations if op.kind == "2q"]
    _, depth = _two_qubit_count_depth(ops)
    success = float(rank_placements(device, patch, [placement]).success[0])
    return {"two_qubit_gates": audit.two_qubit_gates, "two_qubit_depth": depth,
            "off_coupler_gates": len(audit.off_coupler), "fidelity_product": success,
            "fidelity_product_note": "off-coupler gates are not scored" if audit.off_coupler
            else ""}


def _to_qasm(patch, ops) -> str:
    """OpenQASM 2 of the repaired preparation, registers named as the patch's qubits."""
    import re
    registers: dict = {}
    for q in patch.qubits:
        m = re.fullmatch(r"(.*?)(\d+)", q)
        reg, i = (m.group(1), int(m.group(2))) if m and m.group(1) else (q, None)
        registers.setdefault(reg, set()).add(i)
    lines = ["OPENQASM 2.0;", 'include "qelib1.inc";']
    for reg, idx in registers.items():
        size = max(i for i in idx if i is not None) + 1 if None not in idx else 1
        lines.append(f"qreg {reg}[{size}];")

    def ref(q):
        m = re.fullmatch(r"(.*?)(\d+)", q)
        return f"{m.group(1)}[{m.group(2)}]" if m and m.group(1) else f"{q}[0]"
    lines += [f"reset {ref(q)};" for q in patch.qubits]
    for name, qubits in ops:
        lines.append(f"{name} {', '.join(ref(q) for q in qubits)};")
    return "\n".join(lines) + "\n"


def _safe(fn, *args):
    try:
        return fn(*args)
    except InputError:
        return None


def _with_circuit(patch, name, circuit):
    from dataclasses import replace
    circuits = dict(patch.circuits)
    circuits[name] = circuit
    return replace(patch, circuits=circuits)


# --- method: product state, then the check rounds project it ---------------------------

@dataclass(frozen=True)
class Projection:
    """The fault-tolerant option: a product state that the check rounds project onto the
    target state, verified by noiseless simulation with a Pauli-frame correction."""

    circuit: str
    basis: str                        # 'z' (|0...0>) or 'x' (|+...+>) on the target qubits
    qasm: str
    runs: int
    corrections: tuple[str, ...]      # the frame corrections seen, e.g. 'Z on d0' or 'none'
    dropped_detectors: tuple[str, ...]
    proof: str


def project_preparation(patch: Patch, *, circuit: str = "prep", runs: int = 16,
                        seed: int = 5) -> tuple[Projection, Patch]:
    """Replace `circuit` by a product state and verify the next round projects it.

    For each of `runs` noiseless simulations (stim's tableau simulator, random outcomes),
    after the product state and one check round every generator of the target state is
    deterministic (+1 or -1), and a Pauli on the target qubits (the frame correction the
    outcomes imply) makes all of them +1. Detectors the product state makes random in the
    first round are dropped from the returned patch (and named).
    """
    import stim

    from ..io.qasm import read_qasm
    from ..model.patch import Circuit
    from ..score.simulate import check_detectors, to_stim

    if "round" not in patch.circuits:
        raise InputError("the product-state option needs a check round to project the state")
    state, support, _ = _target_state(patch, circuit)
    target = _support_generators(patch, circuit, support)
    for basis in ("z", "x"):
        ops = [("h", (q,)) for q in support] if basis == "x" else []
        text = _to_qasm(patch, ops)
        trial = _with_circuit(patch, circuit, Circuit(circuit, tuple(read_qasm(text)), text, None))
        one_round = _replace_rounds(trial, 1)
        program = to_stim(_without_readout(one_round), detectors=False)
        corrections, ok = [], True
        for k in range(runs):
            sim = stim.TableauSimulator(seed=seed + k)
            sim.do_circuit(program)
            values = [sim.peek_observable_expectation(g) for g in target]
            if any(v == 0 for v in values):
                ok = False
                break
            fix = _frame_correction(target, values, [patch.index[q] for q in support],
                                    patch.num_qubits)
            if fix is None:
                ok = False
                break
            sim.do_pauli_string(fix)
            if any(sim.peek_observable_expectation(g) != 1 for g in target):
                ok = False
                break
            corrections.append(_describe(fix, patch))
        if not ok:
            continue
        kept, dropped = [], []
        for det in trial.detectors:
            from dataclasses import replace
            alone = replace(trial, detectors=(det,), observable=())
            (dropped if check_detectors(alone) else kept).append(det)
        fixed = _with_detectors(trial, tuple(kept))
        problems = check_detectors(fixed)
        if problems:
            raise InputError(f"the product-state preparation leaves {problems[0]}")
        proof = (f"verified on {runs} noiseless runs (stim tableau simulator): after one check "
                 f"round every generator of the target state is deterministic and the frame "
                 f"correction makes it +1")
        return Projection(circuit, basis, text, runs, tuple(sorted(set(corrections))),
                          tuple(d.name for d in dropped), proof), fixed
    raise InputError(f"the check round does not project a product state onto the state "
                     f"'{circuit}' prepares (tried |0...0> and |+...+>); keep a unitary repair")


def _support_generators(patch, circuit, support):
    """stim PauliStrings (over all patch qubits) generating the target state on its support."""
    import stim
    from qiskit import QuantumCircuit
    from qiskit.quantum_info import StabilizerState

    from ..audit.qiskit_views import qiskit_circuit

    qc, names = qiskit_circuit(patch, circuit)
    local = {q: i for i, q in enumerate(support)}
    small = QuantumCircuit(len(support))
    for ins in qc.data:
        if ins.operation.name in ("barrier", "reset"):
            continue
        small.append(ins.operation, [local[names[qc.find_bit(q).index]] for q in ins.qubits])
    out = []
    for label in StabilizerState(small).clifford.to_labels(mode="S"):
        sign, body = label[0], label[1:][::-1]          # qiskit labels run from the last qubit
        chars = ["_"] * patch.num_qubits
        for i, ch in enumerate(body):
            chars[patch.index[support[i]]] = ch if ch != "I" else "_"
        out.append(stim.PauliString(sign + "".join(chars)))
    return out


def _frame_correction(target, values, qubits, n):
    """A Pauli on `qubits` anticommuting exactly with the generators whose value is -1."""
    import stim
    rows = []
    for g in target:
        xs, zs = g.to_numpy()
        rows.append(np.concatenate([zs[qubits], xs[qubits]]).astype(np.uint8))
    b = np.array([v < 0 for v in values], dtype=np.uint8)
    solution = _solve_gf2(np.array(rows), b)
    if solution is None:
        return None
    m = len(qubits)
    chars = ["_"] * n
    for k, q in enumerate(qubits):
        x, z = solution[k], solution[m + k]
        chars[q] = "Y" if x and z else "X" if x else "Z" if z else "_"
    return stim.PauliString("".join(chars))


def _describe(pauli, patch) -> str:
    parts = [f"{c} on {patch.qubits[i]}" for i, c in enumerate(str(pauli)[1:]) if c != "_"]
    return ", ".join(parts) or "none"


def _replace_rounds(patch, rounds):
    from dataclasses import replace
    return replace(patch, rounds=rounds, detectors=(), observable=())


def _without_readout(patch):
    from dataclasses import replace
    return replace(patch, circuits={k: v for k, v in patch.circuits.items() if k != "readout"})


def _with_detectors(patch, detectors):
    from dataclasses import replace
    return replace(patch, detectors=detectors)
