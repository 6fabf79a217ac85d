"""Placement search: every way to put a patch on a chip with no routing swaps.

A placement maps each patch qubit to a distinct live physical qubit so that every
pair of patch qubits that shares a two-qubit gate sits on a live coupler. That is a
subgraph monomorphism from the patch's interaction graph into the chip's live
coupling graph (not induced: the chip may have extra couplers among the placed qubits
that the patch simply leaves unused). `matcher.py` enumerates them, anchored and in
numpy batches; tests hold it to networkx's and rustworkx's VF2 matchers.

Two maps that differ by a symmetry of the patch (a permutation of its qubits that
keeps every role and every pair's gate count in every searched circuit) are the
same placement for the experiment. The matcher yields one map per orbit; we report
the lexicographically smallest map of each orbit and the group's order. The group
acts freely on injective maps, so for a complete search
`raw_maps == len(placements) * symmetry_order`.

Patch qubits with no two-qubit gate in the searched circuits are not constrained by
any coupler; they are put on the nearest free live qubits (breadth-first from the
placed ones) so that every placement is complete.

    >>> from embedcheck.device import Device
    >>> from embedcheck.lattices import heavy_hex
    >>> from embedcheck.patch import Patch, Circuit, Operation
    >>> ring = [Operation("cx", (f"q{i}", f"q{(i + 1) % 12}"), "2q") for i in range(12)]
    >>> patch = Patch("ring", tuple(f"q{i}" for i in range(12)),
    ...               {f"q{i}": "data" for i in range(12)}, {"round": Circuit("round", tuple(ring))})
    >>> result = find_placements(Device.from_lattice(heavy_hex(2, 2), name="hh"), patch)
    >>> len(result.placements), result.symmetry_order, result.complete   # one per hexagon
    (4, 24, True)
"""
from __future__ import annotations

import numbers
import time
from collections import deque
from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np
import rustworkx as rx

from .constraints import Constraints
from ..model.device import Device
from .matcher import Host, grow, prepare
from .graphs import odd_cycle_nodes, shortest_cycle, shortest_cycle_nodes
from ..errors import InputError, did_you_mean
from ..model.patch import Patch


@dataclass(frozen=True)
class Placement:
    """Physical qubit for each patch qubit, in the patch's qubit order."""

    physical: tuple[int, ...]

    def as_dict(self, patch: Patch) -> dict[str, int]:
        return dict(zip(patch.qubits, self.physical))


@dataclass(frozen=True)
class SearchResult:
    """Distinct swap-free placements for the searched circuits, and how the search ended.

    stop_reason is 'complete' (every placement found), 'limit' (the count limit was
    reached) or 'budget' (the time budget ran out). `reasons` explains, in plain words,
    why there is no placement when a cheap necessary condition already rules it out.
    """

    circuits: tuple[str, ...]
    placements: tuple[Placement, ...]
    raw_maps: int
    symmetry_order: int
    stop_reason: str
    reasons: tuple[str, ...]
    elapsed_s: float
    symmetries: tuple[tuple[int, ...], ...] = ()   # permutations of patch qubit indices
    notes: tuple[str, ...] = ()                    # caveats on how the result was counted

    @property
    def complete(self) -> bool:
        return self.stop_reason == "complete"


def find_placements(device: Device, patch: Patch, *, circuits: Sequence[str] | None = None,
                    limit: int | None = 10_000, budget_s: float | None = None,
                    progress: Callable[[int], None] | None = None,
                    constraints: Constraints | None = None,
                    clock: Callable[[], float] = time.monotonic,
                    max_maps: int | None = None, processes: int = 1) -> SearchResult:
    """All distinct swap-free placements of `patch` for `circuits` (default: all).

    `limit` caps the number of distinct placements, `budget_s` the seconds spent (read
    from `clock`, which tests may replace), `max_maps` the raw maps examined (a step
    budget, counted in whole symmetry orbits, so the count may pass it by less than
    the symmetry order); the result says which one stopped the search. `constraints` restrict the
    chip qubits each role may use and the couplers pairs may use (see constraints.py).
    `progress(n)` is called now and then with the number of raw maps seen. With
    `processes > 1` the chip's anchors are split among that many worker processes (the
    result is the same set; workers read the budget from the wall clock, not `clock`).
    """
    names = _check_request(patch, circuits, limit, budget_s, processes, max_maps)
    rules = constraints or Constraints()
    start = clock()
    reasons = necessary_conditions(device, patch, names, rules)
    if reasons:
        return SearchResult(names, (), 0, 1, "complete", tuple(reasons), clock() - start)
    directed = rules.forbid_direction_fixes
    pattern, placed = _pattern(patch, names)
    chip = _chip_graph(device, rules)
    # Native directions: search undirected, keep the maps whose directional gates all run
    # the native way (a symmetric gate such as cz has no direction); no symmetry merging.
    arcs = _directional_arcs(patch, names, placed) if directed else []
    autos, too_big = ([tuple(range(len(placed)))], False) if directed else \
        _symmetry_group(pattern)
    notes = ()
    if too_big:
        notes = (f"the patch's symmetry group has more than {MAX_SYMMETRIES} elements, so "
                 "maps are not merged by symmetry: each placement may appear in several "
                 "relabelled copies",)
    allowed = rules.allowed_by_role(device, set(patch.roles.values())) if rules.roles else None
    found: list[Placement] = []
    seen: set = set()
    raw, stop = 0, "complete"
    usable = rules.qubits(device)
    blocked = {i for i in chip.node_indices() if chip[i] not in usable}
    perms = np.array(autos, dtype=np.int64).reshape(len(autos), len(placed))
    order = len(autos)                       # raw maps each representative stands for
    # A worker may stop at `cap` representatives only when each one is sure to become a
    # placement (every patch qubit interacts, so none is left to place and fail).
    cap = None
    if (limit is not None or max_maps is not None) and len(placed) == patch.num_qubits:
        cap = min(x for x in (limit, None if max_maps is None else -(-max_maps // order))
                  if x is not None)
    cut_short, shown = None, 0
    for block, why, reported in _maps(device, chip, pattern, allowed, blocked, arcs,
                                      None if directed else autos, processes=processes,
                                      cap=cap, seconds=budget_s):
        cut_short = cut_short or why
        if reported and progress is not None and reported * order > shown:
            shown = reported * order              # workers' count while they still run
            progress(shown)
        if processes <= 1 and budget_s is not None and clock() - start > budget_s:
            stop = "budget"                  # checked first: budget_s=0 takes nothing
            break
        if len(block):
            if max_maps is not None:
                wanted = (max_maps - raw + order - 1) // order
                block = block[:wanted]
            used = _take(block, perms, seen, found, chip, patch, placed, blocked, allowed,
                         limit)
            raw += used * order              # each representative stands for its orbit
            if progress is not None and raw > shown:
                shown = raw                      # never backwards
                progress(raw)
        if limit is not None and len(found) >= limit:
            stop = "limit"
            break
        if max_maps is not None and raw >= max_maps:
            stop = "budget"
            break
        if processes > 1 and budget_s is not None and clock() - start > budget_s:
            stop = "budget"                  # workers kept the deadline: keep what came
            break
    if stop == "complete" and cut_short:
        stop = cut_short          # a worker's part stopped early: the union is incomplete
    if stop == "complete" and raw == 0:
        what = "the chip's live coupling graph" + (" under the constraints" if not rules.empty
                                                   else "")
        reasons = ["no cheap condition rules it out, and an exhaustive search found no "
                   f"placement: the interaction graph of {', '.join(names)} is not a subgraph of "
                   f"{what}"]
        left = None if budget_s is None else max(0.0, budget_s - (clock() - start))
        reasons += _parts(device, patch, names, rules, clock, left, pattern, placed)
        if not rules.empty:
            reasons += _blame(device, patch, names, rules, clock, left)
    full = []
    for sigma in autos:                      # as permutations of all patch qubit indices
        perm = list(range(patch.num_qubits))
        for i, q in enumerate(placed):
            perm[q] = placed[sigma[i]]
        full.append(tuple(perm))
    return SearchResult(names, tuple(found), raw, len(autos), stop, tuple(reasons),
                        clock() - start, tuple(full), notes)


def _maps(device, chip, pattern, allowed, blocked, arcs, autos, *, processes=1, cap=None,
          seconds=None):
    """(block, why, reported) triples: blocks of raw maps (rows: chip node of pattern node
    0, 1, ...), one per symmetry orbit when `autos` is given, without the maps whose
    directional gates run against a coupler's native direction when `arcs` is given.
    `why` is None, or 'limit' / 'budget' when a worker process stopped its part early (at
    `cap` maps, or after `seconds`); `reported` is, while workers still run, how many maps
    they have found so far (for progress), else 0."""
    n = chip.num_nodes()
    live = np.ones(n, dtype=bool)
    live[list(blocked)] = False
    masks = None
    if allowed is not None or blocked:
        by_role = {}
        for role in set(pattern.nodes()):
            mask = live.copy()
            if allowed is not None:
                ok = np.zeros(n, dtype=bool)
                ok[[i for i in range(n) if chip[i] in allowed[role]]] = True
                mask &= ok
            by_role[role] = mask
        masks = [by_role[role] for role in pattern.nodes()]
    native = None
    if arcs:
        native = np.array(sorted(a * n + b for a, b in chip.edge_list() for a, b in
                                 ((a, b), (b, a)) if device.runs_natively(chip[a], chip[b])),
                          dtype=np.int64)
    prep = prepare(Host.from_edges(n, list(chip.edge_list())), pattern.num_nodes(),
                   list(pattern.edge_list()), candidates=masks, symmetries=autos)
    job = (prep, arcs, native)
    if processes <= 1 or len(prep.start) < 2 * processes:
        for block in _filtered(job, (0, 1)):
            yield block, None, 0
        return
    import multiprocessing
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
    deadline = None if seconds is None else time.monotonic() + seconds
    context = multiprocessing.get_context()
    halt = context.Event()                   # set when the caller has enough
    counted = context.Value("q", 0)          # maps found by all workers so far (progress)
    with ProcessPoolExecutor(processes, initializer=_start_worker,
                             initargs=(halt, counted)) as pool:
        futures = [pool.submit(_run_part, job, (i, processes), cap, deadline)
                   for i in range(processes)]
        try:
            pending = set(futures)
            while pending:
                done, pending = wait(pending, timeout=0.5, return_when=FIRST_COMPLETED)
                for future in done:
                    yield future.result() + (0,)
                if not done:                 # nothing back yet: tell how far the workers are
                    yield np.zeros((0, prep.k), dtype=np.int64), None, counted.value
        finally:
            halt.set()                       # running workers stop at their next block
            for future in futures:
                future.cancel()


_HALT = None
_COUNTED = None


def _start_worker(halt, counted) -> None:
    global _HALT, _COUNTED
    _HALT, _COUNTED = halt, counted


def _filtered(job, part):
    prep, arcs, native = job
    n = prep.host.n
    for block in grow(prep, part=part):
        if native is not None and len(block):
            ok = np.ones(len(block), dtype=bool)
            for a, b in arcs:
                ok &= np.isin(block[:, a].astype(np.int64) * n + block[:, b], native)
            block = block[ok]
        yield block


def _run_part(job, part, cap, deadline):
    """One worker process's share of the anchors: every map it finds, unless `cap` maps
    or the `deadline` (time.monotonic) come first; then also which one stopped it."""
    blocks, count, why = [], 0, None
    for block in _filtered(job, part):
        blocks.append(block)
        count += len(block)
        if _COUNTED is not None and len(block):
            with _COUNTED.get_lock():
                _COUNTED.value += len(block)
        if cap is not None and count >= cap:
            why = "limit"
            break
        if deadline is not None and time.monotonic() > deadline:
            why = "budget"
            break
        if _HALT is not None and _HALT.is_set():
            why = "budget"                   # the caller stopped (its result says why)
            break
    k = job[0].k
    return (np.concatenate(blocks) if blocks else np.zeros((0, k), dtype=np.int64)), why


def _take(batch, perms, seen, found, chip, patch, placed, blocked, allowed, limit) -> int:
    """Canonicalise a batch of raw maps (numpy, no per-map Python loop over the symmetry
    group) and keep the new ones: the canonical form of a map is the lexicographically
    smallest of its images under the patch's symmetries. Returns how many rows of the
    batch were looked at (all, unless the limit was reached first)."""
    images = np.asarray(batch, dtype=np.int64).reshape(len(batch), len(placed))
    best = images[:, perms[0]]
    for perm in perms[1:]:
        cand = images[:, perm]
        differ = cand != best
        first = np.argmax(differ, axis=1)
        rows = np.arange(len(best))
        smaller = differ[rows, first] & (cand[rows, first] < best[rows, first])
        best = np.where(smaller[:, None], cand, best)
    whole = len(placed) == patch.num_qubits          # every patch qubit interacts
    physical = np.array(chip.nodes(), dtype=np.int64)[best] if whole else None
    for i, row in enumerate(best):
        key = row.tobytes()
        if key in seen:
            continue
        seen.add(key)
        if whole:
            placement = Placement(tuple(physical[i].tolist()))
        else:
            placement = _complete(chip, patch, placed, row.tolist(), blocked, allowed)
        if placement is not None:
            found.append(placement)
        if limit is not None and len(found) >= limit:
            return i + 1
    return len(best)


def _parts(device, patch, names, rules, clock, budget_s, pattern, placed) -> list[str]:
    """For a patch in several unconnected parts: which part cannot be placed at all, or
    that each fits alone but not all of them side by side."""
    parts = rx.connected_components(pattern)
    if len(parts) < 2:
        return []
    out = []
    for part in parts:
        members = {placed[i] for i in part}
        piece = _sub_patch(patch, names, {patch.qubits[q] for q in members})
        alone = find_placements(device, piece, limit=1, constraints=rules, clock=clock,
                                budget_s=budget_s)
        named = ", ".join(sorted(patch.qubits[q] for q in members))
        if not alone.placements and alone.complete:
            out.append(f"the part {named} cannot be placed even on its own")
        elif not alone.placements:
            out.append(f"the part {named} could not be tried on its own within the time "
                       "budget")
    if any("within the time budget" in line for line in out):
        return out
    if not out:
        out.append(f"each of the patch's {len(parts)} unconnected parts fits on its own, but "
                   "not all of them side by side on distinct qubits")
    return out


def _blame(device, patch, names, rules: Constraints, clock, budget_s) -> list[str]:
    """Which single constraint, dropped, would let the patch fit (plain words)."""
    from dataclasses import replace
    trials = [(f"{role}: {b}", replace(rules, roles={**rules.roles, role: tuple(
        x for x in rules.roles[role] if x is not b)})) for role in rules.roles
        for b in rules.roles[role]]
    trials += [(f"coupler: {b}", replace(rules, couplers=tuple(x for x in rules.couplers
                                                                if x is not b)))
               for b in rules.couplers]
    trials += [(label, replace(rules, **{key: value})) for label, key, value, on in (
        ("the excluded qubits", "exclude_qubits", frozenset(), rules.exclude_qubits),
        ("the excluded couplers", "exclude_couplers", frozenset(), rules.exclude_couplers),
        ("the region", "region", None, rules.region is not None),
        ("the region box", "region_box", None, rules.region_box is not None),
        ("the native-direction rule", "forbid_direction_fixes", False,
         rules.forbid_direction_fixes)) if on]
    out = []
    for label, relaxed in trials:
        found = find_placements(device, patch, circuits=names, limit=1, constraints=relaxed,
                                budget_s=budget_s, clock=clock)     # what is left of it
        if found.placements:
            out.append(f"the constraint '{label}' removes every placement: without it the "
                       f"patch fits")
    return out


def placement_grid(placements: Sequence[Placement], num_qubits: int) -> np.ndarray:
    """Placements as an int array of shape (placements, patch qubits), for vectorised scoring."""
    rows = [p.physical for p in placements]
    if any(len(r) != num_qubits for r in rows):
        bad = next(r for r in rows if len(r) != num_qubits)
        raise InputError(f"a placement gives {len(bad)} physical qubits for a patch of "
                         f"{num_qubits}")
    return np.array(rows, dtype=np.int64).reshape(len(placements), num_qubits)


def check_placements(device: Device, patch: Patch, placements: Sequence[Placement]) -> np.ndarray:
    """The placements' grid (see `placement_grid`), after refusing (InputError) any that
    is not one distinct chip qubit per patch qubit: the API takes placements from users,
    not only from the search."""
    grid = placement_grid(placements, patch.num_qubits)
    if not grid.size:
        return grid
    inside = np.isin(grid, np.array(sorted(device.qubits), dtype=np.int64))
    if not inside.all():
        row, col = map(int, np.argwhere(~inside)[0])
        raise InputError(f"placement {row + 1}: {patch.qubits[col]}={grid[row, col]} is not a "
                         f"qubit of chip '{device.name}'")
    ordered = np.sort(grid, axis=1)
    repeated = (ordered[:, 1:] == ordered[:, :-1]).any(axis=1)
    if repeated.any():
        row = int(np.argmax(repeated))
        raise InputError(f"placement {row + 1} puts two patch qubits on one chip qubit: "
                         f"{placements[row].as_dict(patch)}")
    return grid


def _check_request(patch: Patch, circuits, limit, budget_s, processes, max_maps) -> tuple:
    """The searched circuit names, after refusing what the CLI would refuse."""
    if isinstance(circuits, str):
        circuits = [circuits]
    names = tuple(patch.circuits) if circuits is None else tuple(circuits)
    for name in names:
        if name not in patch.circuits:
            raise InputError(f"the patch has no circuit '{name}'"
                             f"{did_you_mean(str(name), list(patch.circuits))}")
    for label, value, low in (("limit", limit, 1), ("max_maps", max_maps, 1),
                              ("processes", processes, 1)):
        if value is not None and (not isinstance(value, numbers.Integral)
                                  or isinstance(value, bool) or value < low):
            raise InputError(f"{label} must be a whole number of at least {low}, not {value!r}")
    if budget_s is not None and not (isinstance(budget_s, numbers.Real) and budget_s >= 0):
        raise InputError(f"budget_s must be a number of seconds >= 0, not {budget_s!r}")
    return names


def necessary_conditions(device: Device, patch: Patch, circuits: Sequence[str],
                         constraints: Constraints | None = None) -> list[str]:
    """Cheap checks that rule a placement out before any search; plain-word reasons.

    Each names the patch qubits at fault: too few live qubits; too few chip qubits of
    high enough degree; a patch cycle shorter than the chip's shortest cycle (a
    monomorphism maps a cycle onto a cycle of the same length); an odd patch cycle on
    a bipartite chip; role constraints that leave too few candidates.
    """
    rules = constraints or Constraints()
    reasons = []
    usable = rules.qubits(device)
    if patch.num_qubits > len(usable):
        where = "live qubits" + (" within the constraints" if not rules.empty else "")
        reasons.append(f"the patch has {patch.num_qubits} qubits but the chip has only "
                       f"{len(usable)} {where}")
    if rules.roles:
        allowed = rules.allowed_by_role(device, set(patch.roles.values()))
        for role, bounds in rules.roles.items():
            need = patch.qubits_with_role(role)
            if len(allowed.get(role, ())) < len(need):
                reasons.append(f"the constraint '{role}: {', '.join(map(str, bounds))}' leaves "
                               f"{len(allowed.get(role, ()))} candidate chip qubit(s) for the "
                               f"{len(need)} {role} qubit(s) ({', '.join(need)})")
    counts = patch.interaction_counts(circuits)
    couplers = sorted(rules.couplers_allowed(device)) if not rules.empty else \
        list(device.live_couplers)
    degree: dict[int, int] = {}
    for a, b in counts:
        degree[a] = degree.get(a, 0) + 1
        degree[b] = degree.get(b, 0) + 1
    chip_degree: dict[int, int] = {}
    for a, b in couplers:
        chip_degree[a] = chip_degree.get(a, 0) + 1
        chip_degree[b] = chip_degree.get(b, 0) + 1
    top = max(chip_degree.values(), default=0)
    for k in sorted(set(degree.values()), reverse=True):
        need = [i for i in sorted(degree) if degree[i] >= k]
        have = sum(1 for d in chip_degree.values() if d >= k)
        if have < len(need):
            named = ", ".join(f"{patch.qubits[i]} ({patch.roles[patch.qubits[i]]})" for i in need)
            reasons.append(
                f"{len(need)} patch qubit(s) interact with {k} or more others ({named}), but the "
                f"chip has only {have} live qubit(s) with {k} or more usable couplers (largest "
                f"live degree {top})")
            break
    if counts and not reasons:
        reasons += _cycle_reasons(patch, list(counts), couplers)
    return reasons


def _cycle_reasons(patch: Patch, edges, couplers) -> list[str]:
    cycle = shortest_cycle_nodes(range(patch.num_qubits), edges)
    if not cycle:
        return []                        # a forest has neither short nor odd cycles
    chip_nodes = sorted({q for c in couplers for q in c})
    out = []
    if shortest_cycle_nodes(chip_nodes, couplers, max_length=len(cycle), first=True) is None:
        names = ", ".join(patch.qubits[i] for i in cycle)
        longer = shortest_cycle_nodes(chip_nodes, couplers, max_length=4 * len(cycle))
        chip_part = (f"has no cycle shorter than {len(longer)}" if longer else
                     f"has no cycle of {4 * len(cycle)} qubits or fewer")
        out.append(f"the patch has a cycle of length {len(cycle)} ({names}) but the chip "
                   f"{chip_part}")
    if not out:
        odd = odd_cycle_nodes(range(patch.num_qubits), edges)
        if odd and _bipartite(chip_nodes, couplers):
            names = ", ".join(patch.qubits[i] for i in odd)
            out.append(f"the patch has an odd cycle ({names}) but the chip's coupling graph is "
                       "bipartite (it has none)")
    return out


def _bipartite(nodes, edges) -> bool:
    g = rx.PyGraph()
    index = {q: g.add_node(q) for q in nodes}
    g.add_edges_from_no_data([(index[a], index[b]) for a, b in edges])
    return rx.is_bipartite(g)


def _pattern(patch: Patch, circuits: Sequence[str]):
    """Interaction graph of the searched circuits over the patch qubits that interact.

    Node i of the graph is patch qubit `placed[i]`; edge payloads are per-circuit gate
    counts, node payloads roles, so automorphisms respect both.
    """
    per_pair = patch.per_circuit_counts(circuits)
    placed = sorted({q for p in per_pair for q in p})
    local = {q: i for i, q in enumerate(placed)}
    graph = rx.PyGraph(multigraph=False)
    graph.add_nodes_from([patch.roles[patch.qubits[q]] for q in placed])
    graph.add_edges_from([(local[a], local[b], c) for (a, b), c in per_pair.items()])
    return graph, placed


SYMMETRIC_GATES = {"cz", "swap", "rzz", "rxx", "ryy", "cp", "cu1", "cphase", "iswap", "dcx"}


def _directional_arcs(patch: Patch, circuits, placed):
    """(pattern node, pattern node) control -> target of every gate whose direction matters."""
    local = {q: i for i, q in enumerate(placed)}
    arcs = set()
    for name in circuits:
        for op in patch.circuits[name].two_qubit_gates:
            if op.written in SYMMETRIC_GATES:
                continue
            a, b = (patch.index[q] for q in op.qubits)
            arcs.add((local[a], local[b]))
    return sorted(arcs)


def _chip_graph(device: Device, rules: Constraints):
    """The usable coupling graph; node i holds physical qubit `device.qubits[i]`.

    Couplers outside the constraints are left out (an unused coupler never matters,
    since the match is not induced).
    """
    graph = rx.PyGraph(multigraph=False)
    index = {q: graph.add_node(q) for q in device.qubits}
    couplers = rules.couplers_allowed(device) if not rules.empty else device.live_couplers
    graph.add_edges_from_no_data([(index[a], index[b]) for a, b in couplers])
    return graph

MAX_SYMMETRIES = 20_000


def _automorphisms(pattern: rx.PyGraph) -> list[tuple[int, ...]]:
    """Permutations of the pattern's nodes that keep roles and per-circuit gate counts
    (only the identity when the group is too big to list; see `_symmetry_group`)."""
    return _symmetry_group(pattern)[0]


def _symmetry_group(pattern: rx.PyGraph) -> tuple[list[tuple[int, ...]], bool]:
    """(the symmetries, too_big). A group larger than MAX_SYMMETRIES (a big tree, a star of
    many leaves) is not listed: only the identity is returned, with too_big set, and maps
    are then not merged by symmetry (find says so)."""
    import itertools
    n = pattern.num_nodes()
    if n == 0:
        return [()], False
    autos = rx.vf2_mapping(pattern, pattern, node_matcher=lambda a, b: a == b,
                           edge_matcher=lambda a, b: a == b, subgraph=False, id_order=True)
    listed = [tuple(m[i] for i in range(n)) for m in itertools.islice(autos, MAX_SYMMETRIES + 1)]
    if len(listed) > MAX_SYMMETRIES:
        return [tuple(range(n))], True
    return listed, False


def _complete(chip, patch: Patch, placed, image, blocked, allowed) -> Placement:
    """A full placement: interacting qubits from `image`, the rest on nearby free qubits
    (that their role's constraints allow)."""
    physical = [-1] * patch.num_qubits
    used = set()
    for node, patch_qubit in zip(image, placed):
        physical[patch_qubit] = chip[node]
        used.add(node)
    for i in [i for i in range(patch.num_qubits) if physical[i] < 0]:
        role = patch.roles[patch.qubits[i]]
        for node in _nearest_free(chip, list(used), used | blocked):
            if allowed is None or chip[node] in allowed.get(role, ()):
                physical[i] = chip[node]
                used.add(node)
                break
        else:
            return None                      # no free qubit this one's constraints allow
    return Placement(tuple(physical))


def _nearest_free(chip: rx.PyGraph, sources, blocked):
    """Free live chip nodes in breadth-first order from `sources` (then any others).

    Neighbours are taken in index order: rustworkx returns them in hash order, which
    changes from run to run, and placements must not."""
    sources = sorted(sources)
    queue, seen = deque(sources), set(sources)
    neighbours = chip.neighbors
    while queue:
        node = queue.popleft()
        if node not in blocked:
            yield node
        for nb in sorted(neighbours(node)):
            if nb not in seen:
                seen.add(nb)
                queue.append(nb)
    for node in chip.node_indices():
        if node not in seen and node not in blocked:
            yield node


@dataclass(frozen=True)
class NearMiss:
    """A placement that is not swap-free, with the patch pairs left without a coupler."""

    placement: Placement
    off_coupler_gates: int
    missing_pairs: tuple[tuple[str, str], ...]


def near_misses(device: Device, patch: Patch, circuits: Sequence[str], *,
                constraints: Constraints | None = None, keep: int = 5,
                budget_s: float = 5.0, clock: Callable[[], float] = time.monotonic) -> list[NearMiss]:
    """Placements needing the fewest off-coupler gates when none is swap-free (a heuristic).

    Greedy edge removal: drop one interacting pair at a time, first at the patch qubits
    whose degree the chip cannot offer, then on the shortest cycle the chip lacks, then
    the pair with the fewest gates; after each drop, search the smaller pattern. Found
    placements are scored on the full circuits (off-coupler gates, weighted by how
    often each circuit runs) and the best few kept. Not exhaustive: fewer added gates
    may be possible.
    """
    rules = constraints or Constraints()
    start = clock()
    counts = patch.interaction_counts(circuits)
    times = dict(patch.experiment())
    weights = {pair_: sum(patch.interaction_counts([c]).get(pair_, 0) * times.get(c, 1)
                          for c in circuits) for pair_ in counts}
    kept = dict(counts)
    chip_degree: dict[int, int] = {}
    couplers = rules.couplers_allowed(device) if not rules.empty else set(device.live_couplers)
    for a, b in couplers:
        chip_degree[a] = chip_degree.get(a, 0) + 1
        chip_degree[b] = chip_degree.get(b, 0) + 1
    top = max(chip_degree.values(), default=0)
    chip_nodes = sorted({q for c in couplers for q in c})
    chip_girth = shortest_cycle(chip_nodes, sorted(couplers))
    found: list[Placement] = []
    while kept and clock() - start < budget_s:
        reduced = _reduced_patch(patch, kept)
        result = find_placements(device, reduced, limit=50, constraints=rules,
                                 budget_s=max(0.1, budget_s - (clock() - start)), clock=clock)
        if result.placements:
            found = list(result.placements)
            break
        kept.pop(_pair_to_drop(kept, weights, top, chip_girth, patch.num_qubits))
    if not found:
        return []
    from ..audit.exact import off_coupler_counts     # audit imports search: import here
    off = off_coupler_counts(device, patch, found, list(circuits))
    totals = (off * np.array([times.get(c, 1) for c in circuits])).sum(axis=1)
    order = np.argsort(totals, kind="stable")[:keep]
    out = []
    for i in order:
        where = found[i].physical
        missing = tuple((patch.qubits[a], patch.qubits[b]) for a, b in counts
                        if not device.is_coupled(where[a], where[b]))
        out.append(NearMiss(found[i], int(totals[i]), missing))
    return out


def _pair_to_drop(kept, weights, top, chip_girth, n):
    degree: dict[int, int] = {}
    for a, b in kept:
        degree[a] = degree.get(a, 0) + 1
        degree[b] = degree.get(b, 0) + 1
    over = [p for p in kept if degree[p[0]] > top or degree[p[1]] > top]
    if over:
        return min(over, key=lambda p: (weights[p], -max(degree[p[0]], degree[p[1]]), p))
    cycle = shortest_cycle_nodes(range(n), list(kept))
    if cycle and (chip_girth is None or len(cycle) < chip_girth):
        ring = [tuple(sorted((cycle[i], cycle[(i + 1) % len(cycle)]))) for i in range(len(cycle))]
        return min(ring, key=lambda p: (weights[p], p))
    return min(kept, key=lambda p: (weights[p], p))


def _sub_patch(patch: Patch, circuits, members) -> Patch:
    """The patch's two-qubit gates among `members` (as written, directions kept) in one circuit."""
    from ..model.patch import Circuit
    ops = tuple(op for name in circuits for op in patch.circuits[name].two_qubit_gates
                if set(op.qubits) <= members)
    qubits = tuple(q for q in patch.qubits if q in members)
    return Patch(patch.name, qubits, {q: patch.roles[q] for q in qubits},
                 {"round": Circuit("round", ops)})


def _reduced_patch(patch: Patch, kept) -> Patch:
    """A one-circuit patch with one CNOT per kept pair (same qubits and roles)."""
    from ..model.patch import Circuit, Operation
    ops = tuple(Operation("cx", (patch.qubits[a], patch.qubits[b]), "2q") for a, b in kept)
    return Patch(patch.name, patch.qubits, dict(patch.roles), {"round": Circuit("round", ops)})
