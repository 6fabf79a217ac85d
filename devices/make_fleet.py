"""Write devices/fleet/: three INVENTED chips with five daily calibration snapshots each.

Nothing here describes a real device: sizes, calibration figures and their drift from day
to day are made up (seeded random numbers) so that the sweep demo has a fleet to compare.
Each chip's snapshots share one coupling map; every day the figures drift a little, and
one region of each chip gets worse or better over the week, so the best chip and region
change. Run `python devices/make_fleet.py` to rebuild.
"""
from pathlib import Path

import numpy as np

from embedcheck.lattices import heavy_hex, square_grid

CHIPS = {"fleet-hex-a": ("heavy-hex", 2, 3), "fleet-hex-b": ("heavy-hex", 2, 3),
         "fleet-grid-c": ("square-grid", 7, 7)}
DAYS = ["2026-11-23", "2026-11-24", "2026-11-25", "2026-11-26", "2026-11-27"]


def main() -> None:
    root = Path(__file__).with_name("fleet")
    for number, (name, (kind, rows, columns)) in enumerate(CHIPS.items()):
        lattice = heavy_hex(rows, columns) if kind == "heavy-hex" else square_grid(rows, columns)
        rng = np.random.default_rng(20261123 + number)
        base_q = {q: (rng.lognormal(np.log(0.015), 0.4), rng.uniform(90, 180)) for q in lattice.qubits}
        base_c = {c: rng.lognormal(np.log(0.009), 0.5) for c in lattice.couplers}
        xmax = max(x for x, _ in lattice.positions.values()) or 1.0
        folder = root / name
        folder.mkdir(parents=True, exist_ok=True)
        for day_index, day in enumerate(DAYS):
            drift = 1 + 0.35 * np.sin(day_index + number)        # a region worsens and recovers
            lines = [
                f"# INVENTED chip '{name}' for the sweep demo, snapshot of {day}: no real device,",
                "# no real calibration. Written by devices/make_fleet.py (seeded).",
                "embedcheck_chip: 1", f"name: {name}",
                f"description: Invented {kind} chip for the embedcheck sweep demo.",
                f"family: {{kind: {kind}, rows: {rows}, columns: {columns}}}",
                "native_two_qubit_gate: cx", "calibration:", f"  timestamp: '{day}T06:00:00Z'",
                "  note: invented figures for the sweep demo",
                "  defaults: {single_qubit_error: 0.0003, single_qubit_duration_ns: 36, "
                "measurement_duration_ns: 900, two_qubit_duration_ns: 350}",
                "  qubits:"]
            for q in lattice.qubits:
                left = lattice.positions[q][0] < 0.5 * xmax
                readout, t1 = base_q[q]
                readout *= (drift if left else 1.0) * rng.uniform(0.9, 1.1)
                t1 = t1 / (drift if left else 1.0) * rng.uniform(0.95, 1.05)
                lines.append(f"    - {{qubit: {q}, readout_error: {min(readout, 0.3):.4f}, "
                             f"t1_us: {t1:.1f}, t2_us: {t1 * 0.8:.1f}}}")
            lines.append("  couplers:")
            for c in lattice.couplers:
                left = lattice.positions[c[0]][0] < 0.5 * xmax
                err = base_c[c] * (drift if left else 1.0) * rng.uniform(0.9, 1.1)
                lines.append(f"    - {{coupler: [{c[0]}, {c[1]}], two_qubit_error: {min(err, 0.2):.4f}}}")
            (folder / f"{day}.yaml").write_text("\n".join(lines) + "\n")


if __name__ == "__main__":
    main()
