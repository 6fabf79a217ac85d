"""Why nothing fits, in plain words that name the patch qubits at fault.

Before any search, cheap necessary conditions (`necessary_conditions`): more patch qubits
than live chip qubits; qubits that interact with more partners than any chip qubit has
couplers; a patch cycle shorter than the chip's shortest cycle (a monomorphism maps a
cycle onto a cycle of the same length); an odd cycle on a bipartite chip; role
constraints that leave too few candidates. After an exhaustive search found nothing:
which unconnected part of the patch cannot be placed, and which single constraint,
dropped, would let the patch fit (these re-run the search, passed in as `search`).

    >>> from embedcheck.model.device import Device
    >>> from embedcheck.model.lattices import heavy_hex
    >>> from embedcheck.model.patch import Circuit, Operation, Patch
    >>> ring = tuple(Operation("cx", (f"q{i}", f"q{(i + 1) % 6}"), "2q") for i in range(6))
    >>> names = tuple(f"q{i}" for i in range(6))
    >>> patch = Patch("six", names, dict.fromkeys(names, "data"), {"round": Circuit("round", ring)})
    >>> chip = Device.from_lattice(heavy_hex(1, 1), name="hh")
    >>> [reason.split(" but ")[1] for reason in necessary_conditions(chip, patch, ["round"])]
    ['the chip has no cycle shorter than 12']
"""
from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import replace
from typing import Any

import rustworkx as rx

from ..model.constraints import Constraints
from ..model.device import Device, Pair
from ..model.patch import Circuit, Patch
from .graphs import odd_cycle_nodes, shortest_cycle_nodes

__all__ = ["constraint_reasons", "necessary_conditions", "part_reasons", "sub_patch"]

Search = Callable[..., Any]      # find_placements (passed in: it imports this module)


def necessary_conditions(device: Device, patch: Patch, circuits: Sequence[str],
                         constraints: Constraints | None = None) -> list[str]:
    """Cheap checks that rule a placement out before any search; plain-word reasons.

    Each names the patch qubits at fault: too few live qubits; too few chip qubits of
    high enough degree; a patch cycle shorter than the chip's shortest cycle (a
    monomorphism maps a cycle onto a cycle of the same length); an odd patch cycle on
    a bipartite chip; role constraints that leave too few candidates.
    """
    rules = constraints or Constraints()
    reasons: list[str] = []
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
        busy = [i for i in sorted(degree) if degree[i] >= k]
        have = sum(1 for d in chip_degree.values() if d >= k)
        if have < len(busy):
            named = ", ".join(f"{patch.qubits[i]} ({patch.roles[patch.qubits[i]]})" for i in busy)
            reasons.append(
                f"{len(busy)} patch qubit(s) interact with {k} or more others ({named}), but the "
                f"chip has only {have} live qubit(s) with {k} or more usable couplers (largest "
                f"live degree {top})")
            break
    if counts and not reasons:
        reasons += _cycle_reasons(patch, list(counts), couplers)
    return reasons


def _cycle_reasons(patch: Patch, edges: list[tuple[int, int]],
                   couplers: Sequence[Pair]) -> list[str]:
    chip_nodes = sorted({q for c in couplers for q in c})
    # A chip cycle of 4 qubits (looked for among a few chip qubits: found at once on a
    # grid) leaves only a patch triangle to check for: the patch's girth is not needed.
    few = set(chip_nodes[:64])
    small = shortest_cycle_nodes(sorted(few), [c for c in couplers if c[0] in few and
                                                c[1] in few], max_length=4, first=True)
    if small is not None and len(small) == 4 and \
            shortest_cycle_nodes(range(patch.num_qubits), edges, max_length=3) is None:
        cycle = None
    else:
        cycle = shortest_cycle_nodes(range(patch.num_qubits), edges)
    out = []
    if cycle and shortest_cycle_nodes(chip_nodes, couplers, max_length=len(cycle),
                                      first=True) is None:
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


def _bipartite(nodes: Sequence[int], edges: Sequence[Pair]) -> bool:
    g = rx.PyGraph()
    index = {q: g.add_node(q) for q in nodes}
    g.add_edges_from_no_data([(index[a], index[b]) for a, b in edges])
    return rx.is_bipartite(g)


def part_reasons(device: Device, patch: Patch, names: Sequence[str], rules: Constraints,
                 clock: Callable[[], float], budget_s: float | None, pattern: rx.PyGraph,
                 placed: Sequence[int], *, search: Search) -> list[str]:
    """For a patch in several unconnected parts: which part cannot be placed at all, or
    that each fits alone but not all of them side by side. `search` is the placement
    search (`find_placements`), passed in so that this module does not import it."""
    parts = rx.connected_components(pattern)
    if len(parts) < 2:
        return []
    out = []
    for part in parts:
        members = {placed[i] for i in part}
        piece = sub_patch(patch, names, {patch.qubits[q] for q in members})
        alone = search(device, piece, limit=1, constraints=rules, clock=clock,
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


def constraint_reasons(device: Device, patch: Patch, names: Sequence[str], rules: Constraints,
                       clock: Callable[[], float], budget_s: float | None, *,
                       search: Search) -> list[str]:
    """Which single constraint, dropped, would let the patch fit (plain words)."""
    trials: list[tuple[str, Constraints]] = [(f"{role}: {b}", replace(rules, roles={
        **rules.roles, role: tuple(
        x for x in rules.roles[role] if x is not b)})) for role in rules.roles
        for b in rules.roles[role]]
    trials += [(f"coupler: {b}", replace(rules, couplers=tuple(x for x in rules.couplers
                                                                if x is not b)))
               for b in rules.couplers]
    dropped: tuple[tuple[str, str, Any, Any], ...] = (
        ("the excluded qubits", "exclude_qubits", frozenset(), rules.exclude_qubits),
        ("the excluded couplers", "exclude_couplers", frozenset(), rules.exclude_couplers),
        ("the region", "region", None, rules.region is not None),
        ("the region box", "region_box", None, rules.region_box is not None),
        ("the native-direction rule", "forbid_direction_fixes", False,
         rules.forbid_direction_fixes))
    trials += [(label, replace(rules, **{key: value})) for label, key, value, on in dropped if on]
    out = []
    for label, relaxed in trials:
        found = search(device, patch, circuits=names, limit=1, constraints=relaxed,
                                budget_s=budget_s, clock=clock)     # what is left of it
        if found.placements:
            out.append(f"the constraint '{label}' removes every placement: without it the "
                       f"patch fits")
    return out


def sub_patch(patch: Patch, circuits: Sequence[str], members: set[str]) -> Patch:
    """The patch's two-qubit gates among `members` (as written, directions kept) in one circuit."""
    ops = tuple(op for name in circuits for op in patch.circuits[name].two_qubit_gates
                if set(op.qubits) <= members)
    qubits = tuple(q for q in patch.qubits if q in members)
    return Patch(patch.name, qubits, {q: patch.roles[q] for q in qubits},
                 {"round": Circuit("round", ops)})
