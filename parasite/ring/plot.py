"""Measured, ideal and augmented waveforms overlaid around each edge, with the
ring metrics written beside them (``parasite ring --plot``)."""

from __future__ import annotations

import io
from typing import Any

import numpy as np

from parasite.ring.analyse import RingResult, Waveform
from parasite.ring.metrics import RingMetrics

COLORS = {"ideal": "#7f7f7f", "augmented": "#1f77b4", "measured": "#d62728"}


def _window(edges: list[RingMetrics], ref: RingMetrics,
            others: list[RingMetrics]) -> tuple[float, float]:
    """From shortly before the edge to after the longest ring of ``ref`` and
    ``others`` (the same edge in the other waveforms), within the next edge."""
    later = [m.edge_time for m in edges if m.edge_time > ref.edge_time]
    gap = (later[0] - ref.edge_time) if later else None
    spans = [20e-9]
    for m in [ref, *others]:
        if m.frequency:
            spans.append(10.0 / m.frequency)
        if m.settling_time:
            spans.append(1.5 * m.settling_time)
    span = max(spans)
    if gap is not None:
        span = min(span, 0.9 * gap)
    return ref.edge_time - 0.1 * span, ref.edge_time + span


def _text(label: str, m: RingMetrics | None, number: int | None) -> str:
    if m is None:
        return f"{label}: no edge"
    which = f"edge {number}" if number is not None else "edge"
    if m.frequency is None or m.damping_ratio is None:
        ring = f"ring not measured ({m.ring_reason or 'no reason given'})"
    else:
        ring = (f"ring {m.frequency / 1e6:.1f} MHz, damping {m.damping_ratio:.3f}, "
                f"amplitude {m.ring_amplitude or 0.0:.2f} V")
    if m.settling_time is not None:
        settle = f"settled to +-{m.band:.2g} V after {m.settling_time * 1e9:.1f} ns"
    else:
        settle = f"not settled to +-{m.band:.2g} V"
    return f"{label}, {which}: {ring}; overshoot {m.overshoot:.1f} V; {settle}"


def _wrap(text: str, width: int = 120) -> str:
    import textwrap

    return "\n".join(textwrap.wrap(text, width, subsequent_indent="    "))


def _panel_edges(result: RingResult, d: int) -> dict[str, int | None]:
    """Which edge of each waveform a panel of direction ``d`` shows: the first
    compared measured edge of that direction and its simulated pair, or else
    the last simulated edge of that direction."""
    metrics = result.metrics
    for mi, ii, ai in result.pairs:
        if metrics["measured"][mi].direction == d and (ii is not None or ai is not None):
            return {"measured": mi, "ideal": ii, "augmented": ai}
    out: dict[str, int | None] = {}
    for key in ("ideal", "augmented", "measured"):
        same = [j for j, m in enumerate(metrics.get(key, [])) if m.direction == d]
        out[key] = (same[0] if key == "measured" else same[-1]) if same else None
    return out


def ring_figure(result: RingResult, *, fmt: str = "png") -> bytes:
    """The picture (PNG or SVG bytes): one panel per edge direction, a
    simulated edge with the measured edge paired with it lined up on it."""
    from parasite.plot import DPI

    fig = build_ring_figure(result)
    buf = io.BytesIO()
    if fmt == "svg":
        fig.savefig(buf, format="svg", metadata={"Date": None})
    else:
        fig.savefig(buf, format="png", dpi=DPI, metadata={"Software": None})
    return buf.getvalue()


def build_ring_figure(result: RingResult) -> Any:
    """The matplotlib Figure of :func:`ring_figure`, laid out."""
    from parasite.plot import DPI, require_matplotlib

    require_matplotlib()
    from matplotlib.figure import Figure

    metrics = result.metrics
    base_key = "augmented" if metrics.get("augmented") else "ideal"
    base = metrics[base_key]
    directions = [d for d in (1, -1) if any(m.direction == d for m in base)]
    fig = Figure(figsize=(9.0, 4.4 * max(len(directions), 1)), dpi=DPI)
    axes: list[Any] = [fig.add_subplot(len(directions) or 1, 1, i + 1)
                       for i in range(max(len(directions), 1))]
    for ax, d in zip(axes, directions, strict=False):
        chosen = _panel_edges(result, d)
        bi = chosen.get(base_key)
        if bi is None:
            bi = [j for j, m in enumerate(base) if m.direction == d][-1]
        ref = base[bi]
        others = [metrics[k][j] for k, j in chosen.items() if j is not None and k in metrics]
        t0, t1 = _window(base, ref, others)
        notes = []
        for key, wave in (("ideal", result.ideal), ("augmented", result.augmented),
                          ("measured", result.measured)):
            if wave is None:
                continue
            j = chosen.get(key)
            m = None if j is None else metrics[key][j]
            shift = wave.shift
            if key == "measured" and m is not None:
                shift = ref.edge_time - m.edge_time
            _draw(ax, wave, shift, t0, t1, ref.edge_time, COLORS[key], 0.8 if key == "measured"
                  else 1.3)
            notes.append(_wrap(_text(wave.label, m, None if j is None else j + 1)))
        ax.set_title(f"{'rising' if d > 0 else 'falling'} edge", fontsize=10, loc="left")
        ax.set_xlabel("time from the edge (ns)")
        ax.set_ylabel("voltage (V)")
        ax.grid(True, alpha=0.3)
        ax.legend(loc="upper right", fontsize=8)
        ax.text(0.0, -0.2, "\n".join(notes), transform=ax.transAxes, fontsize=6.5,
                va="top", ha="left", family="monospace")
    where = result.report.get("read_at") or f"node {result.report.get('node')}"
    import textwrap

    title = f"Ringing at {where}: estimates, to be confirmed by measurement"
    fig.suptitle("\n".join(textwrap.wrap(title, 110)), fontsize=9)
    fig.tight_layout()
    return fig


def _draw(ax: Any, wave: Waveform, shift: float, t0: float, t1: float, t_ref: float,
          color: str, lw: float) -> None:
    t = wave.time + shift
    keep = (t >= t0) & (t <= t1)
    if not np.any(keep):
        return
    ax.plot((t[keep] - t_ref) * 1e9, wave.value[keep], color=color, lw=lw, label=wave.label)
