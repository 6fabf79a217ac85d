"""Small builders shared by the tests (not part of the package)."""
from pathlib import Path

from embedcheck.model.patch import Circuit, Operation, Patch

ROOT = Path(__file__).resolve().parent.parent
DEMO_CHIP = ROOT / "devices" / "demo_heavy_hex.yaml"
DEMO_PATCH = ROOT / "samples" / "flagged_weight4.yaml"
FIXED_PATCH = ROOT / "samples" / "flagged_weight4_coupler_prep.yaml"


def patch_from_edges(edges, name="graph", role="data"):
    """A one-circuit patch whose interaction graph has exactly `edges` (node labels any)."""
    nodes = sorted({n for e in edges for n in e}, key=str)
    names = {n: f"q{i}" for i, n in enumerate(nodes)}
    ops = tuple(Operation("cx", (names[a], names[b]), "2q") for a, b in edges)
    return Patch(name, tuple(names.values()), {q: role for q in names.values()},
                 {"round": Circuit("round", ops)})
