"""How much of a measured ring's damping the simulation with the copper explains, and the
equivalent series resistance still missing.

Both rings are turned into a series RLC loop with the same capacitance C
(:func:`parasite.ring.fit.series_rlc_from_ring`: R = 2 zeta omega_0 L); the loop
resistance of the measured ring minus that of the simulated one is the series
resistance at the ring frequency that the models lack (the switches' and
capacitors' losses, or copper the routes file does not describe). The fraction
explained is the ratio of the simulated resistance to the measured one. With
``--broadband`` the copper's resistance at the ring frequency includes the skin and
proximity effects (:mod:`parasite.network.ladders`); with DC copper it does not. SI.
"""

from __future__ import annotations

from typing import Any


def damping_budget(fits: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """One entry per edge direction that has both a measured fit and an augmented
    simulation's fit (the last measured edge of that direction is used)."""
    out = []
    for direction in ("rising", "falling"):
        meas = [f for f in fits if f["direction"] == direction and f["source"].startswith("measured")]
        sim = [f for f in fits if f["direction"] == direction and f["source"] == "augmented simulation"]
        if not meas or not sim:
            continue
        m, s = meas[-1], sim[-1]
        rm, rs = float(m["resistance"]), float(s["resistance"])
        out.append({
            "direction": direction,
            "measured_source": m["source"],
            "measured_damping_ratio": m["damping_ratio"],
            "simulated_damping_ratio": s["damping_ratio"],
            "measured_resistance": rm,
            "simulated_resistance": rs,
            "explained_fraction": rs / rm if rm > 0 else None,
            "missing_resistance": rm - rs,
            "ring_frequency": m["frequency"],
        })
    return out


def budget_lines(budget: list[dict[str, Any]], copper_model: str) -> list[str]:
    """Text lines for ``parasite ring``'s report."""
    if not budget:
        return []
    out = ["", f"Damping explained by the simulation (copper: {copper_model}; devices as modelled):"]
    for b in budget:
        frac = b["explained_fraction"]
        share = "-" if frac is None else f"{100 * frac:.0f} %"
        out.append(f"  {b['direction']}: measured zeta {b['measured_damping_ratio']:.4f}, simulated "
                   f"{b['simulated_damping_ratio']:.4f}; series R {1e3 * b['measured_resistance']:.1f} "
                   f"mOhm measured, {1e3 * b['simulated_resistance']:.1f} mOhm simulated ({share} "
                   f"explained); missing {1e3 * b['missing_resistance']:.1f} mOhm at "
                   f"{1e-6 * b['ring_frequency']:.1f} MHz (switch and capacitor losses, "
                   "unrouted copper)")
    return out
