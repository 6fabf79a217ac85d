"""Why nothing fits, in plain words that name the patch qubits at fault.

Before any search, cheap necessary conditions (`necessary_conditions`), each a `Reason`
naming every patch qubit at fault (and the interacting pairs, so reports can point at
gates): more patch qubits than live chip qubits; qubits that interact with more partners
than any chip qubit has couplers; two qubits with more common partners than any two chip
qubits have common neighbours; patch cycles shorter than the chip's shortest cycle (a
monomorphism maps a cycle onto a cycle of the same length); an odd cycle on a bipartite
chip; role constraints that leave too few candidates. After an exhaustive search found nothing:
which unconnected part of the patch cannot be placed, and which single constraint,
dropped, would let the patch fit (these re-run the search, passed in as `search`).

    >>> from embedcheck.model.device import Device
    >>> from embedcheck.model.lattices import heavy_hex
    >>> from embedcheck.model.patch import Circuit, Operation, Patch
    >>> ring = tuple(Operation("cx", (f"q{i}", f"q{(i + 1) % 6}"), "2q") for i in range(6))
    >>> names = tuple(f"q{i}" for i in range(6))
    >>> patch = Patch("six", names, dict.fromkeys(names, "data"), {"round": Circuit("round", ring)})
    >>> chip = Device.from_lattice(heavy_hex(1, 1), name="hh")
    >>> [reason.text.split(" but ")[1] for reason in necessary_conditions(chip, patch, ["round"])]
    ['the chip has no cycle shorter than 12']
"""
from __future__ import annotations

import functools
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from typing import Any

import rustworkx as rx

from ..model.constraints import Constraints
from ..model.device import Device, Pair
from ..model.patch import Circuit, Patch
from .graphs import common_neighbours, odd_cycle_nodes, short_cycles, shortest_cycle_nodes

__all__ = ["MAX_LISTED", "Reason", "constraint_reasons", "necessary_conditions", "part_reasons",
           "sub_patch"]

Search = Callable[..., Any]      # find_placements (passed in: it imports this module)


@dataclass(frozen=True, kw_only=True)
class Reason:
    """One reason a patch cannot fit: the words, and what in the patch is at fault.

    `qubits` are the patch qubits the reason names; `pairs` the interacting pairs at
    fault (a qubit's pairs when it has too many partners, a short cycle's pairs), so a
    report can point at the gates on them.
    """

    text: str
    qubits: tuple[str, ...] = ()
    pairs: tuple[tuple[str, str], ...] = ()


MAX_LISTED = 10        # cycles and qubit pairs named in one reason


def necessary_conditions(device: Device, patch: Patch, circuits: Sequence[str],
                         constraints: Constraints | None = None) -> list[Reason]:
    """Cheap checks that rule a placement out before any search, each naming every patch
    qubit at fault (cycles and pairs up to `MAX_LISTED`, with how many more):

    - more patch qubits than live chip qubits;
    - role constraints that leave too few candidates;
    - qubits with more partners than any chip qubit has couplers (all of them), or more
      qubits of degree >= k than the chip has;
    - two patch qubits with more common partners than any two chip qubits have common
      neighbours (a monomorphism maps the common partners of u and v to distinct common
      neighbours of their images), or more such pairs than the chip has;
    - patch cycles shorter than the chip's shortest cycle (a monomorphism maps a cycle
      onto a cycle of the same length): all of them, up to the cap;
    - an odd patch cycle on a bipartite chip.
    """
    rules = constraints or Constraints()
    reasons: list[Reason] = []
    usable = rules.qubits(device)
    if patch.num_qubits > len(usable):
        where = "live qubits" + (" within the constraints" if not rules.empty else "")
        reasons.append(Reason(text=f"the patch has {patch.num_qubits} qubits but the chip has "
                                   f"only {len(usable)} {where}"))
    if rules.roles:
        allowed = rules.allowed_by_role(device, set(patch.roles.values()))
        for role, bounds in rules.roles.items():
            need = patch.qubits_with_role(role)
            if len(allowed.get(role, ())) < len(need):
                reasons.append(Reason(
                    text=f"the constraint '{role}: {', '.join(map(str, bounds))}' leaves "
                         f"{len(allowed.get(role, ()))} candidate chip qubit(s) for the "
                         f"{len(need)} {role} qubit(s) ({', '.join(need)})", qubits=need))
    counts = patch.interaction_counts(circuits)
    couplers = sorted(rules.couplers_allowed(device)) if not rules.empty else \
        list(device.live_couplers)
    reasons += _degree_reasons(patch, list(counts), couplers)
    if counts:
        reasons += _shared_partner_reasons(patch, list(counts), couplers)
        reasons += _cycle_reasons(patch, list(counts), couplers)
    return reasons


def _named(patch: Patch, qubits: Sequence[int]) -> str:
    return ", ".join(f"{patch.qubits[i]} ({patch.roles[patch.qubits[i]]})" for i in qubits)


def _pairs_at(patch: Patch, edges: Sequence[tuple[int, int]],
              qubits: set[int]) -> tuple[tuple[str, str], ...]:
    return tuple((patch.qubits[a], patch.qubits[b]) for a, b in edges
                 if a in qubits or b in qubits)


def _degree_reasons(patch: Patch, edges: list[tuple[int, int]],
                    couplers: Sequence[Pair]) -> list[Reason]:
    """Every qubit with more partners than any chip qubit has couplers; then the first
    degree k (from the top) with more patch qubits of degree >= k than chip qubits."""
    degree: dict[int, int] = {}
    for a, b in edges:
        degree[a] = degree.get(a, 0) + 1
        degree[b] = degree.get(b, 0) + 1
    chip_degree: dict[int, int] = {}
    for a, b in couplers:
        chip_degree[a] = chip_degree.get(a, 0) + 1
        chip_degree[b] = chip_degree.get(b, 0) + 1
    top = max(chip_degree.values(), default=0)
    out = []
    over = sorted((i for i in degree if degree[i] > top), key=lambda i: (-degree[i], i))
    if over:
        named = ", ".join(f"{patch.qubits[i]} ({patch.roles[patch.qubits[i]]}) with "
                          f"{degree[i]}" for i in over)
        out.append(Reason(
            text=f"{len(over)} patch qubit(s) interact with {top + 1} or more others ({named}), "
                 f"but the chip has no live qubit with {top + 1} or more usable couplers "
                 f"(largest live degree {top})",
            qubits=tuple(patch.qubits[i] for i in over),
            pairs=_pairs_at(patch, edges, set(over))))
    for k in sorted({d for d in degree.values() if d <= top}, reverse=True):
        busy = [i for i in sorted(degree) if degree[i] >= k]
        have = sum(1 for d in chip_degree.values() if d >= k)
        if have < len(busy):
            out.append(Reason(
                text=f"{len(busy)} patch qubit(s) interact with {k} or more others "
                     f"({_named(patch, busy)}), but the chip has only {have} live qubit(s) "
                     f"with {k} or more usable couplers (largest live degree {top})",
                qubits=tuple(patch.qubits[i] for i in busy)))
            break
    return out


def _shared_partner_reasons(patch: Patch, edges: list[tuple[int, int]],
                            couplers: Sequence[Pair]) -> list[Reason]:
    """Patch qubits u, v with k common partners need chip qubits with k common neighbours
    (and as many such pairs as the patch has)."""
    mine = {p: k for p, k in (common_neighbours(edges) or {}).items() if k >= 2}
    if not mine:                             # no two patch qubits share two partners
        return []
    chip = _chip_common_neighbours(tuple(couplers))
    if chip is None:                         # too dense to list cheaply: no claim
        return []
    most = max(chip.values(), default=0)
    if most < 2:                 # a chip with no 4-cycle: the cycle reason names them
        return []
    partners: dict[int, set[int]] = {}
    for a, b in edges:
        partners.setdefault(a, set()).add(b)
        partners.setdefault(b, set()).add(a)

    def described(pairs: list[tuple[int, int]]) -> tuple[str, tuple[str, ...],
                                                         tuple[tuple[str, str], ...]]:
        shown = pairs[:MAX_LISTED]
        words = "; ".join(
            f"{patch.qubits[u]} and {patch.qubits[v]} share "
            f"{', '.join(patch.qubits[w] for w in sorted(partners[u] & partners[v]))}"
            for u, v in shown)
        if len(pairs) > len(shown):
            words += f"; and {len(pairs) - len(shown)} more pair(s)"
        qubits = sorted({q for u, v in shown for q in (u, v, *(partners[u] & partners[v]))})
        at_fault = sorted({(min(x, w), max(x, w)) for u, v in shown
                           for w in partners[u] & partners[v] for x in (u, v)})
        return (words, tuple(patch.qubits[q] for q in qubits),
                tuple((patch.qubits[a], patch.qubits[b]) for a, b in at_fault))

    over = sorted((p for p, k in mine.items() if k > most), key=lambda p: (-mine[p], p))
    if over:
        words, qubits, pairs = described(over)
        k = most + 1
        return [Reason(text=f"{len(over)} pair(s) of patch qubits have {k} or more common "
                            f"partners ({words}), but no two chip qubits have more than {most} "
                            f"common neighbour(s)", qubits=qubits, pairs=pairs)]
    for k in sorted({v for v in mine.values() if v >= 2}, reverse=True):
        need = sorted(p for p, v in mine.items() if v >= k)
        have = sum(1 for v in chip.values() if v >= k)
        if have < len(need):
            words, qubits, pairs = described(need)
            return [Reason(text=f"{len(need)} pair(s) of patch qubits have {k} or more common "
                                f"partners ({words}), but only {have} pair(s) of chip qubits "
                                f"have {k} or more common neighbours", qubits=qubits,
                           pairs=pairs)]
    return []


@functools.lru_cache(maxsize=4)
def _chip_common_neighbours(couplers: tuple[Pair, ...]) -> dict | None:
    """The chip's common-neighbour counts, kept for the few chips a run searches on (every
    search of a run asks again)."""
    return common_neighbours(couplers)


def _cycle_reasons(patch: Patch, edges: list[tuple[int, int]],
                   couplers: Sequence[Pair]) -> list[Reason]:
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
        longer = shortest_cycle_nodes(chip_nodes, couplers, max_length=4 * len(cycle))
        below = len(longer) - 1 if longer else 4 * len(cycle)
        chip_part = (f"has no cycle shorter than {len(longer)}" if longer else
                     f"has no cycle of {4 * len(cycle)} qubits or fewer")
        cycles, every_one = short_cycles(range(patch.num_qubits), edges, below,
                                         cap=MAX_LISTED)
        cycles = cycles or [cycle]
        if len(cycles) == 1 and every_one:
            text = (f"the patch has a cycle of length {len(cycle)} "
                    f"({', '.join(patch.qubits[i] for i in cycle)}) but the chip {chip_part}")
        else:
            lengths = sorted({len(c) for c in cycles})
            listed = "; ".join(f"of length {n}: " + ", ".join(
                "(" + ", ".join(patch.qubits[i] for i in c) + ")" for c in cycles if len(c) == n)
                for n in lengths) + ("" if every_one else "; and more")
            many = f"{len(cycles)}" if every_one else f"more than {len(cycles)}"
            text = (f"the patch has {many} cycles shorter than any the chip has ({listed}), "
                    f"but the chip {chip_part}")
        ring = {(min(c[i], c[(i + 1) % len(c)]), max(c[i], c[(i + 1) % len(c)]))
                for c in cycles for i in range(len(c))}
        out.append(Reason(text=text,
                          qubits=tuple(patch.qubits[i] for i in sorted({i for c in cycles
                                                                        for i in c})),
                          pairs=tuple((patch.qubits[a], patch.qubits[b])
                                      for a, b in sorted(ring))))
    if not out:
        odd = odd_cycle_nodes(range(patch.num_qubits), edges)
        if odd and _bipartite(chip_nodes, couplers):
            names = ", ".join(patch.qubits[i] for i in odd)
            edges_of = sorted({(min(odd[i], odd[(i + 1) % len(odd)]),
                                max(odd[i], odd[(i + 1) % len(odd)])) for i in range(len(odd))})
            out.append(Reason(text=f"the patch has an odd cycle ({names}) but the chip's "
                                   "coupling graph is bipartite (it has none)",
                              qubits=tuple(patch.qubits[i] for i in odd),
                              pairs=tuple((patch.qubits[a], patch.qubits[b])
                                          for a, b in edges_of)))
    return out


def _bipartite(nodes: Sequence[int], edges: Sequence[Pair]) -> bool:
    g = rx.PyGraph()
    index = {q: g.add_node(q) for q in nodes}
    g.add_edges_from_no_data([(index[a], index[b]) for a, b in edges])
    return rx.is_bipartite(g)


def part_reasons(device: Device, patch: Patch, names: Sequence[str], rules: Constraints,
                 clock: Callable[[], float], budget_s: float | None, pattern: rx.PyGraph,
                 placed: Sequence[int], *, search: Search) -> list[Reason]:
    """For a patch in several unconnected parts: which part cannot be placed at all, or
    that each fits alone but not all of them side by side. `search` is the placement
    search (`find_placements`), passed in so that this module does not import it."""
    parts = rx.connected_components(pattern)
    if len(parts) < 2:
        return []
    out: list[Reason] = []
    for part in parts:
        members = {placed[i] for i in part}
        piece = sub_patch(patch, names, {patch.qubits[q] for q in members})
        alone = search(device, piece, limit=1, constraints=rules, clock=clock,
                                budget_s=budget_s)
        qubits = tuple(patch.qubits[q] for q in sorted(members))
        named = ", ".join(sorted(qubits))
        if not alone.placements and alone.complete:
            out.append(Reason(text=f"the part {named} cannot be placed even on its own",
                              qubits=qubits))
        elif not alone.placements:
            return out + [Reason(text=f"the part {named} could not be tried on its own within "
                                      "the time budget")]
    if not out:
        out.append(Reason(text=f"each of the patch's {len(parts)} unconnected parts fits on "
                               "its own, but not all of them side by side on distinct qubits"))
    return out


def constraint_reasons(device: Device, patch: Patch, names: Sequence[str], rules: Constraints,
                       clock: Callable[[], float], budget_s: float | None, *,
                       search: Search) -> list[Reason]:
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
            out.append(Reason(text=f"the constraint '{label}' removes every placement: without "
                                   "it the patch fits"))
    return out


def sub_patch(patch: Patch, circuits: Sequence[str], members: set[str]) -> Patch:
    """The patch's two-qubit gates among `members` (as written, directions kept) in one circuit."""
    ops = tuple(op for name in circuits for op in patch.circuits[name].two_qubit_gates
                if set(op.qubits) <= members)
    qubits = tuple(q for q in patch.qubits if q in members)
    return Patch(patch.name, qubits, {q: patch.roles[q] for q in qubits},
                 {"round": Circuit("round", ops)})
